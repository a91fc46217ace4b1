"""Make the timing demo log: an invented GNSS timing receiver's 1 PPS, with its sawtooth reports.

The scenario is invented from start to finish (see README.md beside this file):
the fictional *Northmoor Exchange* timing room checks the 1 PPS of a
GNSS-disciplined timing receiver, serial NX-GTR-2231, that is to serve as the
site's primary reference time clock. A time-interval counter measures the
receiver's pulse against the exchange's reference pulse (a caesium clock
steered to UTC) every second for 12 hours, from 06:00 UTC on 14 April 2026;
the receiver reports with each pulse the quantisation error of its *next*
pulse, logged beside the reading.

``gnss-timing-receiver-pps.csv.gz`` (gzip compressed), columns:

``timestamp``
    ISO 8601 UTC, one row a second; two rows are missing (the counter missed
    two pulses at 09:14:07 and 09:14:08).
``pps_te_ns``
    receiver pulse minus reference pulse, nanoseconds, three decimals.
``qerr_ns``
    the receiver's reported quantisation error of its next pulse (pulse minus
    the ideal time of its solution; a late pulse is positive), nanoseconds.

What is in it (the "truth" the analysis should find):

- a constant offset of +21.6 ns (an antenna-cable delay not fully entered in
  the receiver);
- the sawtooth: the receiver places its pulse on the edge of an 80 MHz clock
  (12.5 ns period), so each pulse is late by 0 to 12.5 ns less the half period
  it centres on (uniform within +-6.25 ns); the receiver's clock offset
  drifts slowly, so the error repeats slowly for a while around 2 h 30 min and
  7 h 30 min into the record (a "hanging bridge");
- white phase noise of the receiver's time solution, 1.2 ns rms;
- slow wander from the sky (ionosphere, multipath), about 2.5 ns over hours
  plus 1.5 ns of low-passed noise with a 10 minute time constant;
- one degraded stretch from 7 h 05 min to 7 h 25 min into the record (13:05 to
  13:25 UTC; a crane parked beside the antenna): the time error bulges by up to
  18 ns and the white noise doubles.

Every random draw comes from a fixed seed, so the file is the same byte for
byte on every run (gzip is written with a zero time stamp).

Usage::

    python datasets/demo/make_timing_demo.py [--hours H] [--out DIR]
"""

from __future__ import annotations

import argparse
import gzip
import sys
from collections.abc import Sequence
from datetime import UTC, datetime
from pathlib import Path

import numpy as np

__all__ = ["TIMING_NAME", "timing_log", "make_timing_demo", "main"]

TIMING_NAME = "gnss-timing-receiver-pps.csv.gz"
_SEED = 20260414
_START = datetime(2026, 4, 14, 6, 0, 0, tzinfo=UTC)
_DEFAULT_HOURS = 12.0
_PERIOD_NS = 12.5  # 80 MHz receiver clock


def _validate_hours(hours: object) -> float:
    if isinstance(hours, bool) or not isinstance(hours, int | float) or not 0.5 <= hours <= 48:
        raise ValueError(f"hours must be a number from 0.5 to 48, got {hours!r}")
    return float(hours)


def _lowpassed(rng: np.random.Generator, n: int, seconds: float) -> np.ndarray:
    """White noise through a first-order low-pass of time constant ``seconds``, unit rms."""
    a = np.exp(-1.0 / seconds)
    w = rng.standard_normal(n) * np.sqrt(1 - a * a)
    out = np.empty(n)
    level = rng.standard_normal()
    for i in range(n):  # the demo script, not the library: a plain recursion is clear
        level = a * level + w[i]
        out[i] = level
    return out


def timing_log(hours: float = _DEFAULT_HOURS, *, seed: int = _SEED) -> str:
    """The CSV text of the timing demo log (see the module docstring)."""
    n = int(round(_validate_hours(hours) * 3600))
    rng = np.random.default_rng(seed)
    t = np.arange(n, dtype=np.float64)
    true_te = 21.6 + 2.5 * np.sin(2 * np.pi * t / (5.3 * 3600) + 0.4)
    true_te += 1.5 * _lowpassed(rng, n, 600.0)
    white = np.full(n, 1.2)
    lo, hi = 7 * 3600 + 5 * 60, 7 * 3600 + 25 * 60
    inside = (t >= lo) & (t < hi)
    true_te[inside] += 18.0 * np.sin(np.pi * (t[inside] - lo) / (hi - lo)) ** 2
    white[inside] = 2.4
    true_te += white * rng.standard_normal(n)
    # the receiver's clock phase advances by a slowly changing fraction of a period
    # each second; its fractional part is where the next pulse lands on the clock
    step = _PERIOD_NS * (0.37 + 0.3 * np.cos(2 * np.pi * t / (5.0 * 3600)))
    step -= _PERIOD_NS * np.round(step / _PERIOD_NS)
    phase = np.cumsum(step) + rng.uniform(0, _PERIOD_NS)
    q = np.mod(phase, _PERIOD_NS) - _PERIOD_NS / 2  # pulse minus ideal, ns
    te = true_te.copy()
    te[1:] += q[:-1]  # the report of row i is the error of the pulse of row i + 1
    keep = np.ones(n, dtype=bool)
    missing = int(3 * 3600 + 14 * 60 + 7)
    keep[missing : missing + 2] = n <= missing + 2
    stamps = np.datetime64(_START.replace(tzinfo=None), "s") + np.arange(n).astype("timedelta64[s]")
    lines = ["timestamp,pps_te_ns,qerr_ns"]
    for s, v, e in zip(stamps[keep], te[keep], q[keep], strict=True):
        lines.append(f"{s}Z,{v:.3f},{e:.3f}")
    return "\n".join(lines) + "\n"


def make_timing_demo(out: str | Path, *, hours: float = _DEFAULT_HOURS) -> Path:
    """Write the gzip-compressed log into ``out``; returns its path."""
    folder = Path(out)
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / TIMING_NAME
    data = gzip.compress(timing_log(hours).encode("ascii"), compresslevel=9, mtime=0)
    path.write_bytes(data)
    return path


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--hours", type=float, default=_DEFAULT_HOURS)
    parser.add_argument("--out", default=str(Path(__file__).resolve().parent))
    args = parser.parse_args(argv)
    path = make_timing_demo(args.out, hours=args.hours)
    print(f"wrote {path}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
