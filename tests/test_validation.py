"""The validation report: its checks, validation.json, validation.pdf, and a broken tool failing.

The published values the checks compare against are those of NIST SP 1065 sections
12.3 and 12.4 (NBS14, the 1000-point set) and Riley's tables I and II, shipped in
stability/validation/data/published.toml; tests/test_deviations.py checks the same
values. Here the tests check that the report runs them all, says what it compared,
and cannot pass a broken estimator.
"""

from __future__ import annotations

import dataclasses
import json
import math
import re
import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import pypdf
import pytest

import stability
from stability import Measurement, analyze
from stability.deviations import STATISTICS
from stability.errors import InputError
from stability.validation import (
    CAUTION,
    GROUPS,
    data_folder,
    digit_comparison,
    published_sets,
    run_checks,
    validate,
)
from stability.validation import report as report_module
from stability.validation.coverage import CoveragePlan, acceptance_range, check_coverage_stats
from stability.validation.environment import source_hash
from stability.validation.report import _stats_to_run

REPO = Path(__file__).resolve().parents[1]
#: A short coverage run for tests whose subject is not the coverage.
SMALL_PLAN = CoveragePlan(points=128, trials=60, factors=(1, 4))


@pytest.fixture(scope="module")
def report_files(tmp_path_factory):
    folder = tmp_path_factory.mktemp("validation")
    result = validate(folder)
    return result, json.loads((folder / "validation.json").read_text(encoding="utf-8"))


# ------------------------------------------------------------------ comparison rules
def test_digit_comparison_counts_units_of_the_last_published_digit():
    # NBS14 OADEV(1 s) = 91.22945 (SP 1065 section 12.3): the unit is 1e-5.
    close = digit_comparison("91.22945", 91.2294474)
    assert close.unit == pytest.approx(1e-5)
    assert close.units == pytest.approx(-0.26, abs=1e-9) and close.passed
    assert close.rounded == "91.22945" and close.shown == "91.22944740"
    # 1000-point set TDEV(100 s) = 1.253382e+00 (SP 1065 section 12.4): unit 1e-6.
    far = digit_comparison("1.253382e+00", 1.2533826)
    assert far.unit == pytest.approx(1e-6) and far.units == pytest.approx(0.6)
    assert not far.passed and "+0.600 in the last digit" == far.difference
    # a printed trailing zero is a digit: 116.7980 has its last digit at 1e-4
    assert digit_comparison("116.7980", 116.79804).unit == pytest.approx(1e-4)
    assert not digit_comparison("85.95287", math.nan).passed


def test_binomial_acceptance_range_is_the_test_s_own():
    from scipy.stats import binomtest

    def p(k, side):
        return binomtest(k, 300, 0.683, alternative=side).pvalue

    low, high = acceptance_range(300, 0.683, 1e-4)
    assert p(low, "less") >= 1e-4 > p(low - 1, "less")
    assert p(high, "greater") >= 1e-4 > p(high + 1, "greater")
    assert low < 0.683 * 300 < high


def test_coverage_statistics_are_checked():
    assert check_coverage_stats("OADEV, mdev") == ("oadev", "mdev")
    for bad, message in (("mtie", "no chi-squared interval"), ("theo1", "tau = 0.75"),
                         ("xdev", "unknown statistic"), ("", "no statistic")):  # fmt: skip
        with pytest.raises(InputError, match=message):
            check_coverage_stats(bad)


def test_statistics_come_from_the_option_the_spec_or_the_default(tmp_path):
    spec = tmp_path / "spec.toml"
    spec.write_text('statistic = "mdev"\n[[limit]]\ntau_s = 1\nmax = 1e-11\n', encoding="utf-8")
    assert _stats_to_run("hdev", spec)[:2] == (("hdev",), "as given")
    assert _stats_to_run(None, spec)[:2] == (
        ("mdev",),
        "the statistic of the specification spec.toml",
    )
    assert _stats_to_run(None, None)[:2] == (("oadev", "mdev"), "default")
    mtie = tmp_path / "mtie.toml"
    mtie.write_text('statistic = "mtie"\n[[limit]]\ntau_s = 1\nmax = 1e-9\n', encoding="utf-8")
    names, origin, notes = _stats_to_run(None, mtie)
    assert names == ("oadev", "mdev") and "mtie" in notes[0]


def test_source_hash_changes_with_any_installed_file(tmp_path):
    package = tmp_path / "stability"
    shutil.copytree(REPO / "stability" / "validation" / "data", package / "data")
    (package / "__pycache__").mkdir()
    (package / "__pycache__" / "x.pyc").write_bytes(b"cache")
    before, count = source_hash({"stability": package})
    assert count == len([p for p in (package / "data").rglob("*") if p.is_file()])
    (package / "__pycache__" / "x.pyc").write_bytes(b"other cache")
    assert source_hash({"stability": package})[0] == before  # caches are left out
    (package / "data" / "nbs14.txt").write_text("# edited\n892\n", encoding="utf-8")
    assert source_hash({"stability": package})[0] != before


def test_shipped_logs_are_what_their_generator_writes(tmp_path):
    folder = data_folder() / "logs"
    done = subprocess.run(
        [sys.executable, str(data_folder() / "make_logs.py"), "--out", str(tmp_path)],
        capture_output=True, text=True, check=False, timeout=120,
    )  # fmt: skip
    assert done.returncode == 0, done.stderr
    shipped = sorted(p.name for p in folder.iterdir())
    assert shipped == sorted(p.name for p in tmp_path.iterdir())
    for name in shipped:
        assert (tmp_path / name).read_bytes() == (folder / name).read_bytes(), name


# ------------------------------------------------------------------ the report
def test_json_holds_every_check_with_its_source_tolerance_and_result(report_files):
    result, report = report_files
    assert result.passed and report["result"] == "pass"
    assert set(result.files) == {"validation.pdf", "validation.json"}
    summary = report["summary"]
    assert summary["failed"] == 0 and summary["checks"] == len(report["checks"])
    assert [g["group"] for g in summary["groups"]] == list(GROUPS)
    assert all(g["checks"] > 0 for g in summary["groups"])
    for check in report["checks"]:
        for key in ("name", "compared", "source", "tolerance", "expected", "computed",
                    "difference", "basis"):  # fmt: skip
            assert check[key], (key, check["name"])
        assert check["result"] == "pass"
    # every published value, from frequency and from phase input
    published = [
        c for c in report["checks"] if c["group"] == "published" and "tau_s" in c["values"]
    ]
    expected = sum(2 * len(s.values) * len(s.taus_s) for s in published_sets())
    assert len(published) == expected
    assert all(abs(c["values"]["difference_last_digits"]) <= 0.5 for c in published)
    # the coverage rule is stated with its numbers
    assert "binomial" in report["acceptance"]["coverage"]
    coverage = [c for c in report["checks"] if c["group"] == "coverage"]
    assert {c["values"]["statistic"] for c in coverage} == {"oadev", "mdev"}
    assert {c["values"]["noise"] for c in coverage} == {"WPM", "FPM", "WFM", "FFM", "RWFM"}
    assert report["settings"]["stats"] == ["oadev", "mdev"]
    assert report["settings"]["coverage"]["trials"] == 300
    # reading checks name every shipped log
    reading = {c["values"]["log"] for c in report["checks"] if c["group"] == "reading"}
    assert reading == {p.name for p in (data_folder() / "logs").iterdir() if p.suffix != ".toml"}
    assert report["caution"] == CAUTION and "does not cover" in CAUTION and "7.11" in CAUTION


def test_environment_names_the_tool_its_files_and_libraries(report_files):
    _, report = report_files
    env = report["environment"]
    assert env["version"] == stability.__version__
    assert re.fullmatch(r"[0-9a-f]{64}", env["source_sha256"]) and env["source_files"] > 100
    for name in ("numpy", "scipy", "pandas", "matplotlib"):
        assert env["libraries"][name] not in ("", "not installed")
    assert env["python"] and env["platform"]
    assert re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ", report["started"])


def test_values_are_computed_in_the_run(report_files):
    _, report = report_files
    # NBS14 OADEV(2 s) from frequency input: the value the estimator gives now.
    row = next(c for c in report["checks"]
               if c["name"] == "NBS14: oadev at tau = 2 s, frequency input")  # fmt: skip
    y = np.array([892, 809, 823, 798, 671, 644, 883, 903, 677], dtype=float)  # SP 1065 12.3
    now = analyze(Measurement.from_frequency(y, 1.0), stats="oadev", taus=[2], qualify=False)
    assert row["values"]["computed"] == float(now["oadev"].deviation[0])
    assert row["expected"] == "85.95287"


def test_pdf_has_the_summary_review_page_and_every_group(report_files):
    result, _ = report_files
    reader = pypdf.PdfReader(result.files["validation.pdf"])
    text = " ".join(" ".join(page.extract_text() for page in reader.pages).split())
    assert "PASS" in reader.pages[0].extract_text()
    for words in ("Review and approval", "Reviewed by", "Approved for use by", "signature",
                  "does not cover", *GROUPS.values(), "Environment", "source SHA-256",
                  "85.95287"):  # fmt: skip
        assert words in text, words
    assert f"page {len(reader.pages)} of {len(reader.pages)}" in text


def test_a_patched_estimator_fails_the_report(tmp_path, monkeypatch):
    stat = STATISTICS["oadev"]

    def off(x, tau0, m, seg):  # a broken estimator: 1e-6 too high
        value, n = stat.func(x, tau0, m, seg)
        return value * (1 + 1e-6), n

    monkeypatch.setattr(report_module, "DEFAULT_PLAN", SMALL_PLAN)  # coverage is not the subject
    monkeypatch.setitem(STATISTICS, "oadev", dataclasses.replace(stat, func=off, multi=None))
    result = validate(tmp_path / "v", stats="mdev")
    report = json.loads(result.files["validation.json"].read_text(encoding="utf-8"))
    assert not result.passed and report["result"] == "fail"
    published = [c for c in report["checks"] if c["values"].get("statistic") == "oadev"]
    # every published OADEV value fails: 91.22945 * 1e-6 is 9 units of the last digit
    assert published and all(c["result"] == "fail" for c in published)
    assert all(abs(c["values"]["difference_last_digits"]) > 0.5 for c in published)
    # and nothing else but what rests on OADEV (the reading checks' Allan deviation)
    others = [c for c in report["checks"] if c["result"] == "fail" and c not in published]
    assert all(c["name"].endswith("Allan deviation at tau0") for c in others)
    page = pypdf.PdfReader(result.files["validation.pdf"]).pages[0].extract_text()
    assert "FAIL" in page and "Failed checks" in page


def test_run_checks_writes_nothing(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    monkeypatch.setattr(report_module, "DEFAULT_PLAN", SMALL_PLAN)
    result = run_checks(stats="hdev")
    assert result.passed and result.files == {} and not list(tmp_path.iterdir())
    assert {c.values.get("statistic") for c in result.checks if c.group == "coverage"} == {"hdev"}
