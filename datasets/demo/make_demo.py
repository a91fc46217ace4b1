"""Make the demo data set: an invented oscillator qualification, reproducible from fixed seeds.

The scenario is invented from start to finish (see README.md beside this file):
the fictional *Harbour Metrology Lab* qualifies a 10 MHz oven-controlled crystal
oscillator, serial HM-OCXO-0417, against its house rubidium reference, and logs
the 1 PPS of a satellite-disciplined receiver against the same reference.

Two files are written:

``ocxo-vs-rb-counter.csv.gz``
    A 1 s gate frequency-counter log (absolute frequency in Hz, ISO 8601 UTC time
    stamps), gzip compressed. The oscillator settles after switch-on (an
    exponential thermal settling plus the logarithmic ageing of a fresh crystal
    [1]_), and carries white FM, a flicker FM floor and a little random-walk FM.
    A few readings are instrument error values (the SCPI not-a-number value
    9.91E+37 [3]_ and an error string) and a few minutes of rows are missing.
``gnss-rx-vs-rb-pps.csv``
    A 1 PPS time-interval log (seconds): a constant offset, white phase noise of
    the receiver, the rubidium's frequency offset as a phase ramp, and a slow
    sinusoidal wander.

The noise is power-law noise made by :func:`stability.simulate.simulate` (Kasdin
and Walter's filter [2]_), with levels set as the Allan deviation each noise
type alone would have at 1 s (NIST SP 1065 [1]_). Every random draw comes
from a fixed seed, so the files are the same byte for byte on every run (gzip is
written with a zero time stamp).

Usage::

    python datasets/demo/make_demo.py [--hours H] [--out DIR]

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST Special
   Publication 1065 (2008), sections 5.2 (power-law noise) and 5.16
   (frequency drift; log model of a quartz oscillator after turn-on).
.. [2] N. J. Kasdin, T. Walter, "Discrete simulation of power law noise",
   Proc. 1992 IEEE Frequency Control Symposium, pp. 274-283.
.. [3] SCPI Consortium, *Standard Commands for Programmable Instruments* (1999),
   vol. 1, section 7.2.1.5 (9.91E+37 as "not a number").
.. [4] RFC 1952, *GZIP file format specification version 4.3* (MTIME = 0 means
   no time stamp is stored).
"""

from __future__ import annotations

import argparse
import gzip
import math
import sys
from collections.abc import Sequence
from pathlib import Path

import numpy as np

from stability.errors import InputError
from stability.files import atomic_write_bytes, atomic_write_text, ensure_folder
from stability.simulate import h_from_deviation, simulate

__all__ = [
    "COUNTER_NAME",
    "PPS_NAME",
    "NOMINAL_HZ",
    "START",
    "counter_log",
    "pps_log",
    "make_demo",
    "main",
]

COUNTER_NAME = "ocxo-vs-rb-counter.csv.gz"
PPS_NAME = "gnss-rx-vs-rb-pps.csv"
NOMINAL_HZ = 10e6
#: Start of both logs (UTC): an evening start for an overnight run.
START = np.datetime64("2026-03-02T18:04:00", "s")

# Fixed seeds: one per file, so that changing one file leaves the other alone.
_COUNTER_SEED = 4170302
_PPS_SEED = 4170303
_DEFAULT_HOURS = 16.0


# ---------------------------------------------------------------------- validation
def _validate_hours(hours: object) -> float:
    try:
        value = float(hours)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise InputError(f"hours must be a number between 0.25 and 48, got {hours!r}") from None
    if not math.isfinite(value) or not 0.25 <= value <= 48.0:
        raise InputError(f"hours must be a number between 0.25 and 48, got {hours!r}")
    return value


def _stamps(n: int, skip: np.ndarray | None = None) -> np.ndarray:
    """ISO 8601 UTC time stamps, one per second from :data:`START`."""
    times = START + np.arange(n).astype("timedelta64[s]")
    if skip is not None:
        times = times[~skip]
    return np.char.add(np.datetime_as_string(times, unit="s"), "Z")


def _csv(header: str, stamps: np.ndarray, values: np.ndarray) -> str:
    rows = np.char.add(np.char.add(stamps, ","), values)
    return header + "\n" + "\n".join(rows.tolist()) + "\n"


# ---------------------------------------------------------------------- the two logs
def counter_log(hours: float = _DEFAULT_HOURS, *, seed: int = _COUNTER_SEED) -> str:
    """Text of the counter log: OCXO against the rubidium, 1 s gate, absolute frequency in Hz.

    Parameters
    ----------
    hours
        Length of the record (0.25 to 48 h). The error values and the missing
        rows are placed at fixed fractions of the record.
    seed
        Seed of the noise and of the placement of the error values.

    Returns
    -------
    str
        CSV text with the header ``timestamp,frequency_hz``.
    """
    hours = _validate_hours(hours)
    n = int(round(hours * 3600))
    tau0 = 1.0
    # Levels as the Allan deviation of each noise type alone at 1 s (SP 1065).
    levels = {
        0: h_from_deviation(0, 1.0e-12, 1.0),  # white FM, 1e-12 at 1 s
        -1: h_from_deviation(-1, 3.0e-13, 1.0),  # flicker FM floor, 3e-13
        -2: h_from_deviation(-2, 2.0e-15, 1.0),  # random-walk FM, 2e-15 at 1 s
    }
    rng = np.random.default_rng(seed)
    noise = simulate(n, tau0, levels=levels, seed=rng)
    t = np.arange(n, dtype=np.float64) * tau0
    # Settling after switch-on: a fast thermal (exponential) part and the
    # logarithmic ageing of a freshly powered crystal, y = a ln(b t + 1) (SP 1065).
    thermal = -6.0e-11 * np.exp(-t / 1200.0)
    ageing = 3.0e-11 * np.log(t / 1800.0 + 1.0)
    y = 2.41e-9 + thermal + ageing + noise
    values = np.char.mod("%.7f", NOMINAL_HZ * (1.0 + y))
    # Instrument error values: overflow / not-a-number and one error string.
    where = np.sort(rng.choice(np.arange(n // 10, n - n // 10), size=4, replace=False))
    values[where[:3]] = "9.91E+37"
    values[where[3]] = "ERROR"
    # One logging gap of four minutes (the rows are missing), at 60 % of the record.
    skip = np.zeros(n, dtype=bool)
    first = int(0.6 * n)
    skip[first : first + min(240, n // 20)] = True
    return _csv("timestamp,frequency_hz", _stamps(n, skip), values[~skip])


def pps_log(hours: float = _DEFAULT_HOURS, *, seed: int = _PPS_SEED) -> str:
    """Text of the 1 PPS log: satellite-disciplined receiver against the rubidium, seconds.

    Returns
    -------
    str
        CSV text with the header ``timestamp,time_interval_s``.
    """
    hours = _validate_hours(hours)
    n = int(round(hours * 3600))
    tau0 = 1.0
    rng = np.random.default_rng(seed)
    f_h = 1.0 / (2.0 * tau0)
    levels = {
        2: h_from_deviation(2, 1.7e-9, 1.0, f_h),  # receiver WPM, about 1 ns rms
        0: h_from_deviation(0, 2.0e-11, 1.0),  # white FM of the rubidium
    }
    x_noise = simulate(n, tau0, levels=levels, output="phase", seed=rng)
    t = np.arange(n, dtype=np.float64) * tau0
    ramp = 3.0e-12 * t  # the rubidium is 3e-12 off in frequency
    wander = 4.0e-9 * np.sin(2.0 * np.pi * t / (6 * 3600.0) + 0.7)
    x = 0.000123456789 + ramp + wander + x_noise
    values = np.char.mod("%.13f", x)
    return _csv("timestamp,time_interval_s", _stamps(n), values)


def make_demo(out: str | Path, *, hours: float = _DEFAULT_HOURS) -> dict[str, Path]:
    """Write both demo logs into ``out`` (created when missing); return name -> path."""
    hours = _validate_hours(hours)
    folder = ensure_folder(out)
    counter = gzip.compress(counter_log(hours).encode("ascii"), compresslevel=9, mtime=0)
    return {
        COUNTER_NAME: atomic_write_bytes(folder / COUNTER_NAME, counter),
        PPS_NAME: atomic_write_text(folder / PPS_NAME, pps_log(hours)),
    }


def main(argv: Sequence[str] | None = None) -> int:
    """Command-line entry: ``python datasets/demo/make_demo.py [--hours H] [--out DIR]``."""
    parser = argparse.ArgumentParser(description="Make the stability demo data set.")
    parser.add_argument("--hours", type=float, default=_DEFAULT_HOURS, help="record length")
    parser.add_argument(
        "--out", type=Path, default=Path(__file__).resolve().parent, help="output folder"
    )
    args = parser.parse_args(argv)
    try:
        written = make_demo(args.out, hours=args.hours)
    except InputError as exc:
        print(f"error: {exc.one_line()}", file=sys.stderr)
        return 1
    for path in written.values():
        print(f"wrote {path} ({path.stat().st_size / 1e6:.2f} MB)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
