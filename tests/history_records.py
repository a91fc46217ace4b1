"""Invented calibration records for the history tests.

One real record is made with :func:`stability.workflow.record_into` from a short
invented log (white FM, 1e-11 per sample, 1 s samples); the other records are
copies of it with another device, date, frequency offset and input SHA-256, the
way a laboratory's yearly records of one device differ. Everything here is
invented test data.
"""

from __future__ import annotations

import copy
import hashlib
import json
from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np

from stability.workflow import record_into

__all__ = ["SPEC", "INFO", "write_inputs", "make_record", "derive", "yearly_records"]

SPEC = """statistic = "oadev"
confidence = 0.95
[[limit]]
tau_s = 1
max = 3e-11
[[limit]]
tau_s = 16
max = 1e-11
"""

INFO = """procedure = "TP-1"
[device]
id = "OSC-TEST-1"
description = "invented test oscillator"
[reference]
id = "REF-TEST"
"""

START = datetime(2020, 1, 6, 8, 0, tzinfo=UTC)


def write_inputs(folder: Path, *, seed: int = 5, n: int = 1200, offset: float = 3e-10) -> Path:
    """An invented log (time stamps, fractional frequency) plus spec.toml and info.toml."""
    folder.mkdir(parents=True, exist_ok=True)
    y = offset + 1e-11 * np.random.default_rng(seed).standard_normal(n)
    stamps = [(START + timedelta(seconds=i)).strftime("%Y-%m-%dT%H:%M:%SZ") for i in range(n)]
    log = folder / f"log-{seed}.csv"
    log.write_text(
        "time,fractional_frequency\n"
        + "\n".join(f"{t},{v:.6e}" for t, v in zip(stamps, y, strict=True))
        + "\n",
        encoding="utf-8",
    )
    (folder / "spec.toml").write_text(SPEC, encoding="utf-8")
    (folder / "info.toml").write_text(INFO, encoding="utf-8")
    return log


def make_record(folder: Path, **kwargs) -> dict:
    """A real record.json (as a dict) made from an invented log in ``folder``."""
    log = write_inputs(folder)
    outcome = record_into(
        log, folder / "rec", folder / "spec.toml", folder / "info.toml", outliers="off", **kwargs
    )
    return json.loads(outcome.files["record.json"].read_text(encoding="utf-8"))


def derive(
    template: dict,
    *,
    device: str,
    when: datetime,
    offset: float,
    u_offset: float,
    tag: str = "",
    verdict: str | None = None,
) -> dict:
    """A copy of ``template`` for another device, date and offset, with its own input SHA-256."""
    record = copy.deepcopy(template)
    record["identification"]["device"]["id"] = device
    record["measurement"]["start"] = when.isoformat()
    record["analysis_time"] = (when + timedelta(days=1)).isoformat()
    record["measurement"]["offset"] = float(offset)
    record["measurement"]["u_offset"] = float(u_offset)
    key = f"{device}|{when.isoformat()}|{offset!r}|{tag}"
    record["input"]["sha256"] = hashlib.sha256(key.encode("utf-8")).hexdigest()
    if verdict is not None:
        record["overall_verdict"] = verdict
    return record


def yearly_records(
    template: dict,
    *,
    device: str = "OSC-TEST-1",
    years: int = 10,
    intercept: float = 5e-10,
    rate_per_day: float = 2e-13,
    seed: int = 0,
    start: datetime = datetime(2014, 3, 3, 9, 0, tzinfo=UTC),
) -> tuple[list[dict], np.ndarray, np.ndarray]:
    """``years`` invented yearly records of one device aging linearly (offset = a + b t).

    Each record states its own standard uncertainty u (1e-11 to 3e-11), and
    its offset scatters about the line by u (normal). Returns the records, the
    days after the first and the stated uncertainties.
    """
    rng = np.random.default_rng(seed)
    whens = [start.replace(year=start.year + k) for k in range(years)]
    t = np.array([(w - whens[0]).total_seconds() / 86400.0 for w in whens])
    u = rng.uniform(1e-11, 3e-11, years)
    y = intercept + rate_per_day * t + u * rng.standard_normal(years)
    records = [
        derive(template, device=device, when=w, offset=yi, u_offset=ui, tag=str(seed))
        for w, yi, ui in zip(whens, y, u, strict=True)
    ]
    return records, t, u
