"""``stability record`` through typer's CliRunner: outputs, verdict lines, --force, bad files.

The log is invented (white FM at 1e-11, 600 samples); verdict rules are those of
stability.spec (guarded acceptance, JCGM 106:2012 section 8).
"""

from __future__ import annotations

import json

import numpy as np
from typer.testing import CliRunner

from stability_cli.main import app

runner = CliRunner()

SPEC = """statistic = "oadev"
confidence = 0.95
[[limit]]
tau_s = 1
max = 1e-9
[[limit]]
tau_s = 64
max = 1e-9
"""

INFO = """[device]
id = "OCXO-CLI-1"
"""


def _files(tmp_path):
    y = 1e-11 * np.random.default_rng(5).standard_normal(600)
    lines = "".join(f"{i},{v:.6e}\n" for i, v in enumerate(y))
    (tmp_path / "log.csv").write_text("time_s,y\n" + lines)
    (tmp_path / "spec.toml").write_text(SPEC)
    (tmp_path / "info.toml").write_text(INFO)
    return [
        "record",
        str(tmp_path / "log.csv"),
        "--spec",
        str(tmp_path / "spec.toml"),
        "--info",
        str(tmp_path / "info.toml"),
        "--out",
        str(tmp_path / "out"),
        "--kind",
        "fractional",
        "--stats",
        "mdev",
        "--taus",
        "1,4,16,64",
    ]


def test_record_command_force_and_errors(tmp_path):
    args = _files(tmp_path)
    result = runner.invoke(app, args)
    assert result.exit_code == 0, result.output
    out = tmp_path / "out"
    for name in ("record.pdf", "record.json", "table.csv", "summary.json", "sigma_tau.png"):
        assert (out / name).is_file(), name
    # limits 1e-9 are far above white FM at 1e-11: every listed tau passes
    assert "overall verdict: pass" in result.output
    assert "OCXO-CLI-1" in result.output
    assert result.output.count(" pass") >= 2
    data = json.loads((out / "record.json").read_text())
    assert data["overall_verdict"] == "pass"
    assert [c["tau_s"] for c in data["limits"]] == [1.0, 64.0]
    # the spec's statistic is added to --stats when missing
    assert {r["statistic"] for r in data["results"]} == {"mdev", "oadev"}

    before = (out / "record.pdf").read_bytes()
    again = runner.invoke(app, args)
    assert again.exit_code == 1, again.output
    assert "--force" in again.output and "record.pdf" in again.output
    assert (out / "record.pdf").read_bytes() == before

    (tmp_path / "spec.toml").write_text('statistic = "oadev"\n[[limit]]\ntau_s = 1\nmax = -1\n')
    bad = runner.invoke(app, [*args, "--force"])
    assert bad.exit_code == 1, bad.output
    assert "spec.toml:4" in bad.output and "key 'max'" in bad.output
    assert "Traceback" not in bad.output

    (tmp_path / "spec.toml").write_text(SPEC)
    (tmp_path / "info.toml").write_text('[device]\nid = "x"\n[labs]\nname = "y"\n')
    bad = runner.invoke(app, [*args, "--force"])
    assert bad.exit_code == 1 and "unknown key 'labs'" in bad.output, bad.output
