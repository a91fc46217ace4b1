"""Make the invented logs of the reading checks, and the values they must read to.

``stability validate`` reads each log below with the options written beside it in
``logs.toml`` and compares what it read with the values this script states there.
The logs are invented for this purpose (no instrument wrote them); each one is in
a dialect counters and time-interval analysers commonly write. Their readings come
from one integer sequence, d_k = (7919 k mod 101) - 50, so every value is an exact
decimal, and the known values (phase points, gaps, mean fractional frequency, the
Allan deviation at tau0) are computed here in exact rational arithmetic from the
readings as written, never by the reader under test:

* mean fractional frequency: the mean of the fractional-frequency readings that
  are present (for phase logs, of (x[k+1] - x[k]) / tau0 over adjacent present
  phase readings);
* Allan deviation at tau0: sqrt(sum (y[k+1] - y[k])^2 / (2 K)) over the K adjacent
  pairs of present frequency readings (for phase logs, of
  (x[k+2] - 2 x[k+1] + x[k]) / tau0 over the K runs of three present phase
  readings); NIST SP 1065 (2008), section 5.2.2 (definition of the Allan variance,
  and terms that touch a gap left out, section 5.14).

Usage (from the repository root)::

    python stability/validation/data/make_logs.py [--out DIR]

writes the logs and ``logs.toml`` into ``DIR`` (default: beside this script). The
files are the same byte for byte on every run (gzip written with a zero time stamp,
RFC 1952).
"""

from __future__ import annotations

import argparse
import gzip
import io
import math
from collections.abc import Callable
from datetime import UTC, datetime, timedelta
from fractions import Fraction
from pathlib import Path

__all__ = ["LOGS", "make_logs", "main"]

HERE = Path(__file__).resolve().parent


def digits(k: int) -> int:
    """The integer sequence behind every reading: d_k = (7919 k mod 101) - 50."""
    return (7919 * k) % 101 - 50


def _decimal(value: Fraction, places: int, comma: bool = False) -> str:
    """An exact decimal with ``places`` digits after the mark (the value must be exact)."""
    scaled = value * 10**places
    if scaled.denominator != 1:
        raise ValueError(f"{value} is not exact at {places} places")
    sign = "-" if scaled < 0 else ""
    whole, frac = divmod(abs(scaled.numerator), 10**places)
    return f"{sign}{whole}{',' if comma else '.'}{frac:0{places}d}"


def _mean_and_adev(y: list[Fraction | None]) -> tuple[Fraction, float]:
    present = [v for v in y if v is not None]
    pairs = [(a, b) for a, b in zip(y, y[1:], strict=False) if a is not None and b is not None]
    avar = sum(((b - a) ** 2 for a, b in pairs), Fraction(0)) / (2 * len(pairs))
    return sum(present, Fraction(0)) / len(present), math.sqrt(avar)


def _from_phase(x: list[Fraction | None], tau0: Fraction) -> list[Fraction | None]:
    return [
        (b - a) / tau0 if a is not None and b is not None else None
        for a, b in zip(x, x[1:], strict=False)
    ]


# ------------------------------------------------------------------ the logs
def _counter_iso() -> tuple[str, dict, list[Fraction | None], int]:
    """Comma-separated, ISO 8601 UTC stamps, absolute frequency in Hz; 5 rows missing."""
    nominal, n, start = 10_000_000, 600, datetime(2026, 1, 5, 8, 0, 0, tzinfo=UTC)
    missing = set(range(200, 205))
    lines = ["timestamp,frequency_hz"]
    y: list[Fraction | None] = []
    for k in range(n):
        value = Fraction(digits(k), 10**12)  # fractional frequency
        if k in missing:
            y.append(None)
            continue
        y.append(value)
        stamp = (start + timedelta(seconds=k)).strftime("%Y-%m-%dT%H:%M:%SZ")
        lines.append(f"{stamp},{_decimal(nominal * (1 + value), 5)}")
    about = {
        "dialect": "comma-separated, ISO 8601 UTC time stamps, absolute frequency (Hz) "
        "of a 10 MHz oscillator, 1 s gate; readings 201 to 205 missing from the log",
        "options": {},
        "kind": "frequency",
        "nominal_hz": float(nominal),
        "tau0_s": 1.0,
        "gaps": len(missing),
        "stamp_resolution_s": 0.0,
    }
    return "\n".join(lines) + "\n", about, y, n + 1


def _counter_de() -> tuple[str, dict, list[Fraction | None], int]:
    """Semicolon-separated, decimal comma, dd.mm.yyyy stamps, one SCPI not-a-number reading."""
    nominal, n, start = 5_000_000, 360, datetime(2026, 2, 9, 14, 30, 0)
    bad = 100
    lines = ["Zeit;Frequenz [Hz]"]
    y: list[Fraction | None] = []
    for k in range(n):
        value = Fraction(3 * digits(k + 11), 10**13)
        stamp = (start + timedelta(seconds=10 * k)).strftime("%d.%m.%Y %H:%M:%S")
        if k == bad:
            y.append(None)
            lines.append(f"{stamp};9,91E+37")
            continue
        y.append(value)
        lines.append(f"{stamp};{_decimal(nominal * (1 + value), 7, comma=True)}")
    about = {
        "dialect": "semicolon-separated with decimal commas, dd.mm.yyyy hh:mm:ss stamps "
        "(UTC), absolute frequency (Hz) of a 5 MHz oscillator, 10 s gate; reading 101 "
        "is the SCPI not-a-number value 9.91E+37",
        "options": {"timezone": "UTC"},
        "kind": "frequency",
        "nominal_hz": float(nominal),
        "tau0_s": 10.0,
        "gaps": 1,
        "stamp_resolution_s": 0.0,
    }
    return "\r\n".join(lines) + "\r\n", about, y, n + 1


def _pps_mjd() -> tuple[str, dict, list[Fraction | None], int]:
    """Whitespace-separated with a commented preamble, MJD stamps, time interval in s."""
    n, mjd0 = 900, Fraction(61050)
    bad = 450
    x: list[Fraction | None] = []
    lines = [
        "# 1 PPS time interval, device under test against the house reference",
        "# invented log for the reading checks of stability validate",
        "mjd            time_interval_s",
    ]
    phase = Fraction(1234, 10**7)  # 123.4 us offset
    for k in range(n):
        phase += Fraction(digits(k + 3), 10**11)
        stamp = _decimal(Fraction(round((mjd0 + Fraction(k, 86400)) * 10**10), 10**10), 10)
        if k == bad:
            x.append(None)
            lines.append(f"{stamp}  ERROR")
            continue
        x.append(phase)
        lines.append(f"{stamp}  {_decimal(phase, 13)}")
    about = {
        "dialect": "whitespace-separated after a commented preamble, Modified Julian Date "
        "stamps rounded to 1e-10 day, 1 PPS time interval (s); reading 451 is an error string",
        "options": {},
        "kind": "phase",
        "nominal_hz": None,
        "tau0_s": 1.0,
        "gaps": 1,
        "stamp_resolution_s": 8.64e-6,  # 1e-10 day
    }
    return "\n".join(lines) + "\n", about, _from_phase(x, Fraction(1)), n


def _fractional_gz() -> tuple[str, dict, list[Fraction | None], int]:
    """Gzip-compressed single column of fractional frequency, no time stamps (tau0 given)."""
    n = 500
    lines = ["y"]
    y: list[Fraction | None] = []
    for k in range(n):
        hundredths = digits(k + 29) + 250  # y = hundredths * 1e-13
        y.append(Fraction(hundredths, 10**13))
        lines.append(f"{_decimal(Fraction(hundredths, 100), 2)}e-11")
    about = {
        "dialect": "gzip-compressed, one column of fractional frequency headed y, no "
        "time stamps (the sample interval, 100 ms, is given as a reading option)",
        "options": {"tau0": "100ms", "kind": "fractional"},
        "kind": "frequency",
        "nominal_hz": None,
        "tau0_s": 0.1,
        "gaps": 0,
        "stamp_resolution_s": 0.0,
    }
    return "\n".join(lines) + "\n", about, y, n + 1


def _phase_elapsed() -> tuple[str, dict, list[Fraction | None], int]:
    """Tab-separated, elapsed milliseconds, phase in nanoseconds."""
    n, tau0 = 400, Fraction(1, 4)
    x: list[Fraction | None] = []
    lines = ["elapsed_ms\tphase_ns"]
    phase = Fraction(-75, 10)  # ns
    for k in range(n):
        phase += Fraction(digits(k + 57), 1000)  # ns
        x.append(phase / 10**9)
        lines.append(f"{250 * k}\t{_decimal(phase, 3)}")
    about = {
        "dialect": "tab-separated, elapsed time in milliseconds, phase in nanoseconds, "
        "250 ms spacing",
        "options": {},
        "kind": "phase",
        "nominal_hz": None,
        "tau0_s": 0.25,
        "gaps": 0,
        "stamp_resolution_s": 0.0,
    }
    return "\n".join(lines) + "\n", about, _from_phase(x, tau0), n


#: file name -> maker returning (text, description, fractional frequency, phase points)
LOGS: dict[str, Callable[[], tuple[str, dict, list[Fraction | None], int]]] = {
    "counter-iso.csv": _counter_iso,
    "counter-de.csv": _counter_de,
    "pps-mjd.txt": _pps_mjd,
    "fractional.csv.gz": _fractional_gz,
    "phase-elapsed.tsv": _phase_elapsed,
}


def _toml_value(value: object) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int | float):
        return repr(value)
    if isinstance(value, dict):
        return "{" + ", ".join(f" {k} = {_toml_value(v)}" for k, v in value.items()) + " }"
    return '"' + str(value).replace("\\", "\\\\").replace('"', '\\"') + '"'


def make_logs(folder: Path) -> list[Path]:
    """Write every log and ``logs.toml`` into ``folder``; return the paths written."""
    folder.mkdir(parents=True, exist_ok=True)
    written = []
    toml = [
        "# The invented logs of the reading checks and the values each must read to.",
        "# Written by make_logs.py beside this file, which states how every value was",
        "# computed from the readings as written (exact rational arithmetic).",
        "",
    ]
    for name, maker in LOGS.items():
        text, about, y, points = maker()
        path = folder / name
        if name.endswith(".gz"):
            buffer = io.BytesIO()
            with gzip.GzipFile(filename="", mode="wb", fileobj=buffer, mtime=0) as handle:
                handle.write(text.encode("utf-8"))
            path.write_bytes(buffer.getvalue())
        else:
            path.write_bytes(text.encode("utf-8"))
        written.append(path)
        mean, adev = _mean_and_adev(y)
        toml += [
            "[[log]]",
            f"file = {_toml_value(name)}",
            f"dialect = {_toml_value(about['dialect'])}",
            f"options = {_toml_value(about['options'])}",
            f"kind = {_toml_value(about['kind'])}",
            *([f"nominal_hz = {_toml_value(about['nominal_hz'])}"] if about["nominal_hz"] else []),
            f"tau0_s = {_toml_value(about['tau0_s'])}",
            f"phase_points = {points}",
            f"gaps = {about['gaps']}",
            f"stamp_resolution_s = {_toml_value(about['stamp_resolution_s'])}",
            f"mean_fractional_frequency = {_toml_value(float(mean))}",
            f"adev_tau0 = {_toml_value(adev)}",
            "",
        ]
    (folder / "logs.toml").write_text("\n".join(toml), encoding="utf-8")
    return [*written, folder / "logs.toml"]


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", type=Path, default=HERE / "logs")
    args = parser.parse_args(argv)
    for path in make_logs(args.out):
        print(path)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
