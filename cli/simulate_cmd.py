"""``stability simulate OUT.csv``: write a log of simulated power-law noise.

Noise levels are given as the Allan deviation each noise type alone would have
at the averaging time ``--at`` (NIST SP 1065 [1]_), turned into h_alpha
with :func:`stability.simulate.h_from_deviation` (high-frequency cut-off
f_h = 1/(2 tau0) for the phase noises), and generated with
:func:`stability.simulate.simulate` (Kasdin and Walter's filter [2]_).

The file is CSV with a ``#`` comment preamble that says what was simulated, an
ISO 8601 UTC time stamp column [3]_ and one value column whose header the reader
recognises: ``fractional_frequency``, ``phase_s`` or (with ``--absolute``)
``frequency_hz``. Values are written with 17 significant digits, which recover
every binary64 value exactly [4]_.

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), section 5.2 (Allan variance of the power-law noises).
.. [2] N. J. Kasdin, T. Walter, "Discrete simulation of power law noise",
   Proc. 1992 IEEE Frequency Control Symposium, pp. 274-283.
.. [3] ISO 8601-1:2019, *Date and time - Representations for information interchange*.
.. [4] IEEE Std 754-2019, *Floating-Point Arithmetic*, section 5.12.2.
"""

from __future__ import annotations

import gzip
import math
from datetime import UTC, datetime
from pathlib import Path
from typing import Annotated, Any

import numpy as np
import typer

from stability._version import __version__
from stability.errors import InputError
from stability.files import atomic_write_bytes, atomic_write_text, refuse_overwrite
from stability.simulate import h_from_deviation, simulate
from stability.table import NOISE_LABELS
from stability.units import parse_duration, parse_frequency

from .common import command_line_checks, echo
from .option_checks import checked, duration_check, frequency_check
from .options import RunOptions, command

__all__ = ["simulate_cmd", "simulate_log", "simulated_csv", "parse_start", "VALUE_HEADERS"]

#: Header of the value column for each kind of output.
VALUE_HEADERS = {
    "frequency": "fractional_frequency",
    "phase": "phase_s",
    "absolute": "frequency_hz",
}

_LEVEL_OPTIONS = (("wpm", 2), ("fpm", 1), ("wfm", 0), ("ffm", -1), ("rwfm", -2))
_OUTPUTS = ("frequency", "phase")


def _level_option(label: str, what: str) -> Any:
    return Annotated[
        float | None,
        typer.Option(
            f"--{label}",
            help=f"{what}: Allan deviation this noise alone has at --at (e.g. 1e-11).",
            metavar="ADEV",
        ),
    ]


OutArg = Annotated[
    Path,
    typer.Argument(
        help="The CSV file to write (gzip-compressed when the name ends in .gz).",
        show_default=False,
        metavar="OUT",
    ),
]
NOpt = Annotated[int, typer.Option("--n", help="Number of samples.", metavar="N")]
SimTau0Opt = Annotated[
    str,
    typer.Option(
        "--tau0",
        help="Sample interval of the simulated log, e.g. 1s or 100ms.",
        metavar="DURATION",
        callback=checked(duration_check("--tau0")),
    ),
]
SimNominalOpt = Annotated[
    str | None,
    typer.Option(
        "--nominal",
        help="Nominal frequency the absolute frequencies lie around, e.g. 10MHz "
        "(with --absolute only).",
        metavar="FREQ",
        callback=checked(frequency_check("--nominal")),
    ),
]
WpmOpt = _level_option("wpm", "White phase noise")
FpmOpt = _level_option("fpm", "Flicker phase noise")
WfmOpt = _level_option("wfm", "White frequency noise")
FfmOpt = _level_option("ffm", "Flicker frequency noise")
RwfmOpt = _level_option("rwfm", "Random-walk frequency noise")
AtOpt = Annotated[
    str,
    typer.Option(
        "--at",
        help="Averaging time the levels refer to, e.g. 1s.",
        metavar="DURATION",
        callback=checked(duration_check("--at")),
    ),
]
DriftPerDayOpt = Annotated[
    float,
    typer.Option(
        "--drift-per-day", help="Linear fractional-frequency drift per day.", metavar="RATE"
    ),
]
OffsetOpt = Annotated[
    float, typer.Option("--offset", help="Fractional-frequency offset.", metavar="Y")
]
OutputOpt = Annotated[
    str,
    typer.Option(
        "--output",
        help="What to write: frequency (fractional) or phase (time error, seconds).",
        metavar="frequency|phase",
    ),
]
StartOpt = Annotated[
    str,
    typer.Option(
        "--start",
        help="Time of the first sample, ISO 8601 (UTC if no zone).",
        metavar="TIME",
    ),
]
SeedOpt = Annotated[int, typer.Option("--seed", help="Seed of the random numbers.", metavar="N")]
AbsoluteOpt = Annotated[
    bool,
    typer.Option(
        "--absolute", help="Write absolute frequency in Hz around --nominal (frequency output)."
    ),
]
ForceOpt = Annotated[bool, typer.Option("--force", help="Overwrite an existing file.")]


# ---------------------------------------------------------------------- validation
def parse_start(text: str) -> datetime:
    """The ``--start`` time as an aware UTC datetime (a time without a zone is taken as UTC)."""
    try:
        moment = datetime.fromisoformat(str(text).strip())
    except ValueError:
        raise InputError(
            f"--start must be an ISO 8601 date-time, got {text!r}",
            hint="e.g. 2026-01-01T00:00:00Z",
        ) from None
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=UTC)
    return moment.astimezone(UTC)


def _validate_simulate_args(
    n: int,
    tau0: str | None,
    levels: dict[str, float | None],
    at: str,
    output: str,
    nominal: str | None,
    absolute: bool,
    start: str,
    seed: int,
) -> tuple[float, float, dict[int, float], str, float | None, datetime]:
    if n < 2:
        raise InputError(f"--n must be at least 2 samples, got {n}")
    if seed < 0:
        raise InputError(f"--seed must be a non-negative integer, got {seed}")
    t0 = parse_duration(tau0 if tau0 is not None else "1s", "--tau0")
    at_s = parse_duration(at, "--at")
    kind = str(output).strip().lower()
    if kind not in _OUTPUTS:
        raise InputError(f"--output must be frequency or phase, got {output!r}")
    f_nominal = None
    if absolute:
        if nominal is None:
            raise InputError("--absolute needs --nominal", hint="e.g. --nominal 10MHz")
        if kind != "frequency":
            raise InputError("--absolute writes frequency: use it with --output frequency")
        f_nominal = parse_frequency(nominal, "--nominal")
    elif nominal is not None:
        raise InputError(
            "--nominal is only used with --absolute",
            hint="add --absolute to write absolute frequency in Hz",
        )
    given = {label: value for label, value in levels.items() if value is not None}
    if not given:
        raise InputError(
            "no noise level given",
            hint="pass at least one of --wpm, --fpm, --wfm, --ffm, --rwfm, e.g. --wfm 1e-11",
        )
    f_h = 1.0 / (2.0 * t0)
    h: dict[int, float] = {}
    for label, alpha in _LEVEL_OPTIONS:
        if label not in given:
            continue
        value = given[label]
        if not math.isfinite(value) or value < 0:
            raise InputError(f"--{label} must be a non-negative deviation, got {value!r}")
        try:
            h[alpha] = h_from_deviation(alpha, value, at_s, f_h)
        except InputError as exc:
            raise InputError(
                f"--{label} at --at {at}: {exc.message}", hint="pick a longer --at"
            ) from None
    return t0, at_s, h, kind, f_nominal, parse_start(start)


# ---------------------------------------------------------------------- the file
def _stamps(start: datetime, n: int, tau0: float) -> np.ndarray:
    """ISO 8601 UTC stamps start + k tau0 (as many decimals as tau0 needs)."""
    step_ns = round(tau0 * 1e9)
    unit = "s"
    for candidate, size in (("s", 10**9), ("ms", 10**6), ("us", 10**3), ("ns", 1)):
        if step_ns % size == 0:
            unit = candidate
            break
    origin = np.datetime64(start.replace(tzinfo=None), "ns")
    times = origin + (np.arange(n, dtype=np.int64) * step_ns).astype("timedelta64[ns]")
    return np.char.add(np.datetime_as_string(times, unit=unit), "Z")


def simulated_csv(
    values: np.ndarray,
    *,
    header: str,
    start: datetime,
    tau0: float,
    preamble: list[str],
) -> str:
    """The CSV text: ``#`` preamble, ``time,<header>``, one row per sample (17 digits)."""
    cells = np.char.mod("%.17g", values)
    rows = np.char.add(np.char.add(_stamps(start, values.size, tau0), ","), cells)
    head = "".join(f"# {line}\n" for line in preamble)
    return head + f"time,{header}\n" + "\n".join(rows.tolist()) + "\n"


def simulate_log(
    out: Path,
    *,
    n: int,
    tau0: float,
    levels: dict[int, float],
    deviations: dict[str, float],
    at: float,
    drift_per_day: float,
    offset: float,
    output: str,
    start: datetime,
    seed: int,
    nominal: float | None,
) -> Path:
    """Simulate and write the log atomically; return its path."""
    data = simulate(
        n,
        tau0,
        levels=levels,
        drift_per_day=drift_per_day,
        offset=offset,
        output=output,  # type: ignore[arg-type]
        seed=seed,
    )
    header = VALUE_HEADERS[output]
    if nominal is not None:
        data = nominal * (1.0 + data)
        header = VALUE_HEADERS["absolute"]
    noise = ", ".join(
        f"{NOISE_LABELS[alpha]} {deviations[label]:g} (h{alpha} = {levels[alpha]:.6g})"
        for label, alpha in _LEVEL_OPTIONS
        if alpha in levels
    )
    what = {"frequency": "fractional frequency", "phase": "phase (time error) in seconds"}[output]
    if nominal is not None:
        what = f"absolute frequency in Hz around {nominal:.12g} Hz"
    preamble = [
        f"simulated power-law noise, written by stability {__version__}",
        f"values: {what}; {n} samples, tau0 = {tau0:g} s, first at {start.isoformat()}",
        f"levels (Allan deviation of each noise alone at {at:g} s): {noise}",
        f"frequency offset {offset:g}, linear drift {drift_per_day:g} per day, seed {seed}",
        "method: Kasdin & Walter 1992 filtered white noise (stability.simulate)",
    ]
    text = simulated_csv(data, header=header, start=start, tau0=tau0, preamble=preamble)
    if out.suffix.lower() == ".gz":  # what the name promises; mtime 0 keeps runs identical
        return atomic_write_bytes(out, gzip.compress(text.encode("utf-8"), mtime=0))
    return atomic_write_text(out, text)


@command(subject="out")
def simulate_cmd(
    out: OutArg,
    n: NOpt = 86400,
    tau0: SimTau0Opt = "1s",
    wpm: WpmOpt = None,
    fpm: FpmOpt = None,
    wfm: WfmOpt = None,
    ffm: FfmOpt = None,
    rwfm: RwfmOpt = None,
    at: AtOpt = "1s",
    drift_per_day: DriftPerDayOpt = 0.0,
    offset: OffsetOpt = 0.0,
    output: OutputOpt = "frequency",
    start: StartOpt = "2026-01-01T00:00:00Z",
    seed: SeedOpt = 1,
    nominal: SimNominalOpt = None,
    absolute: AbsoluteOpt = False,
    force: ForceOpt = False,
    *,
    opts: RunOptions,
) -> None:
    """Write a CSV log of simulated power-law noise (levels as Allan deviations at --at).

    Each level is the Allan deviation that noise type alone has at --at; the file
    has a # preamble saying what was simulated, then time,<value> rows.

    Example: stability simulate wfm.csv --n 86400 --tau0 1s --wfm 1e-11 --at 1s --seed 1
    """
    deviations = {"wpm": wpm, "fpm": fpm, "wfm": wfm, "ffm": ffm, "rwfm": rwfm}
    with command_line_checks():
        t0, at_s, levels, kind, f_nominal, moment = _validate_simulate_args(
            n, tau0, deviations, at, output, nominal, absolute, start, seed
        )
    refuse_overwrite(out, force)
    path = simulate_log(
        out,
        n=n,
        tau0=t0,
        levels=levels,
        deviations={k: v for k, v in deviations.items() if v is not None},
        at=at_s,
        drift_per_day=drift_per_day,
        offset=offset,
        output=kind,
        start=moment,
        seed=seed,
        nominal=f_nominal,
    )
    header = VALUE_HEADERS["absolute" if f_nominal is not None else kind]
    echo(f"wrote {path}: {n} samples of {header}, tau0 {t0:g} s, seed {seed}")
