"""``stability phase-noise TABLE --nominal 10MHz``: the sigma(tau) a phase-noise table implies.

Reads a two-column table (offset in Hz, L(f) in dBc/Hz) with
:func:`stability.phase_noise.read_phase_noise_table`, converts it with
:func:`stability.phase_noise.phase_noise_to_stability` (the integral of S_y(f)
against each statistic's transfer function up to f_h; NIST SP 1065 section
9, IEEE Std 1139), and writes ``phase_noise_sigma.csv``, ``phase_noise_sigma.md``
and ``phase_noise.png`` (or the ``--plot-format``). With ``--compare LOG`` the
log is analysed as ``analyze`` does (the shared reading and preparation options
apply to it, ``--nominal`` being the carrier) and its measured curves, and the
L(f) of its fitted power-law model
(:func:`stability.phase_noise.model_to_phase_noise`), are drawn beside.

Default taus. The Allan variance at tau draws most of its value from offsets
near 1/(2 tau) (the peak of its transfer function sin^4(pi f tau)/(pi f tau)^2
lies at f of about 0.37/tau; NIST SP 1065 section 9), so the taus the table
itself supports run from 1/(2 f_h), the sample interval of a measurement of
bandwidth f_h, up to 1/(2 f_min), f_min the table's lowest offset. ``octave``
takes 1/(2 f_h) times 1, 2, 4, ... up to that limit; ``decade`` the 1-2-5
sequence in the same range; a list gives taus in seconds.
"""

from __future__ import annotations

import inspect
import json
import math
from datetime import UTC, datetime
from pathlib import Path
from typing import Annotated, Any

import numpy as np
import typer

from stability._version import __version__
from stability.errors import InputError
from stability.figures import phase_noise_figure, save_figure
from stability.files import jsonable, sha256_file
from stability.outputs import OutputSet
from stability.phase_noise import (
    PHASE_NOISE_STATS,
    PhaseNoiseStability,
    model_to_phase_noise,
    phase_noise_to_stability,
    read_phase_noise_table,
)
from stability.reports.tables import format_tau, format_value, terminal_table
from stability.run import AnalysisRun, run_analysis
from stability.taus import parse_taus
from stability.units import parse_frequency

from .common import echo
from .option_checks import checked
from .options import (
    CONFIDENCE,
    NOMINAL,
    OUT,
    PREPARING,
    READING,
    TITLE,
    WRITING,
    RunOptions,
    command,
    stats_option,
)
from .progress import ProgressDisplay, step_count
from .reporting import footer, text_table

__all__ = ["phase_noise_command", "default_taus"]

TableArg = Annotated[
    Path,
    typer.Argument(
        help="Phase-noise table: offset (Hz) and L(f) (dBc/Hz), two columns.",
        show_default=False,
        metavar="TABLE",
    ),
]


def _bandwidth(value: str) -> str:
    parse_frequency(value, "--fh")
    return value


def _beyond(value: str) -> str:
    word = str(value).strip().lower()
    if word not in ("flat", "slope"):
        raise InputError(f"--beyond must be flat or slope, got {value!r}")
    return word


def _tau_grid(value: str) -> str:
    parse_taus(value)  # the form; "all" is refused later, a table has no sample interval
    return value


BandwidthOpt = Annotated[
    str | None,
    typer.Option(
        "--fh",
        help="Measurement bandwidth f_h, e.g. 100Hz (default: the table's highest offset).",
        metavar="FREQ",
        callback=checked(_bandwidth),
    ),
]
PnTausOpt = Annotated[
    str,
    typer.Option(
        "--taus",
        help="octave or decade from 1/(2 f_h) to 1/(2 f_min), or a comma list in seconds.",
        metavar="octave|decade|LIST",
        callback=checked(_tau_grid),
    ),
]
BeyondOpt = Annotated[
    str,
    typer.Option(
        "--beyond",
        help="S_y above the last offset up to f_h: flat (hold the last value) or slope "
        "(continue the last segment's slope).",
        metavar="flat|slope",
        callback=checked(_beyond),
    ),
]
CompareOpt = Annotated[
    Path | None,
    typer.Option(
        "--compare",
        help="A measured log to analyse and draw beside the conversion.",
        metavar="LOG",
    ),
]

#: ``--nominal`` of phase-noise: the carrier of the table, required.
CARRIER = NOMINAL.but(
    type=str,
    default=inspect.Parameter.empty,
    help="Carrier (nominal) frequency of the table, e.g. 10MHz; also the nominal "
    "frequency of the --compare log.",
)

_GRID_NAMES = ("octave", "decade")


def default_taus(grid: str, f_h: float, f_min: float) -> np.ndarray:
    """Taus from 1/(2 f_h) to 1/(2 f_min): ``octave`` (x2 steps) or ``decade`` (1-2-5).

    At least one tau (1/(2 f_h)) is always returned.
    """
    low = 0.5 / f_h
    high = max(0.5 / f_min, low)
    if grid == "octave":
        count = int(math.floor(math.log2(high / low) + 1e-9)) + 1
        return low * 2.0 ** np.arange(count)
    first = math.floor(math.log10(low)) - 1
    last = math.ceil(math.log10(high)) + 1
    values = np.array(
        [k * 10.0**e for e in range(first, last + 1) for k in (1.0, 2.0, 5.0)], dtype=float
    )
    keep = (values >= low * (1 - 1e-9)) & (values <= high * (1 + 1e-9))
    chosen = values[keep]
    return chosen if chosen.size else np.array([low])


def _taus(text: str, f_h: float, f_min: float) -> tuple[np.ndarray, str]:
    word = str(text).strip().lower()
    if word in _GRID_NAMES:
        grid = default_taus(word, f_h, f_min)
        return grid, f"{word} from 1/(2 f_h) = {format_tau(0.5 / f_h)} to 1/(2 f_min)"
    if word == "all":
        raise InputError(
            "--taus all needs a sample interval; a phase-noise table has none",
            hint="use octave, decade or a list of taus in seconds",
        )
    return np.asarray(parse_taus(text), dtype=float), "as given"


def _markdown(
    conversion: PhaseNoiseStability,
    table_path: Path,
    sha: str,
    settings: dict[str, Any],
    moment: datetime,
) -> str:
    names = conversion.statistics
    lines = [
        "# Stability from a phase-noise table",
        "",
        "S_y(f) = (f/nu0)^2 * 2 * 10^(L(f)/10), integrated against the transfer function "
        "of each statistic up to f_h (NIST SP 1065 section 9; IEEE Std 1139).",
        "",
        f"- table: {table_path.name} (SHA-256 {sha})",
    ]
    lines += [f"- {key}: {value}" for key, value in settings.items()]
    lines += [
        f"- tool: stability {__version__}",
        f"- analysed: {moment.strftime('%Y-%m-%d %H:%M:%S UTC')}",
        "",
        "| tau | " + " | ".join(n.upper() for n in names) + " |",
        "|" + "|".join("---:" for _ in range(len(names) + 1)) + "|",
    ]
    for i, tau in enumerate(conversion.tau):
        cells = [format_value(float(conversion[n][i]), _unit(n)) for n in names]
        lines.append(f"| {format_tau(float(tau))} | " + " | ".join(cells) + " |")
    lines += ["", "## Notes", ""] + [f"- {n}" for n in conversion.notes]
    return "\n".join(lines) + "\n"


def _unit(name: str) -> str:
    return "s" if name == "tdev" else ""


def _text(conversion: PhaseNoiseStability) -> str:
    names = conversion.statistics
    header = ["tau"] + [n.upper() for n in names]
    rows = [
        [format_tau(float(tau))] + [format_value(float(conversion[n][i]), _unit(n)) for n in names]
        for i, tau in enumerate(conversion.tau)
    ]
    return text_table(header, rows)


def _csv(conversion: PhaseNoiseStability) -> str:
    lines = ["statistic,tau_s,deviation"]
    for name in conversion.statistics:
        for tau, dev in zip(conversion.tau, conversion[name], strict=True):
            value = repr(float(dev)) if math.isfinite(dev) else ""
            lines.append(f"{name},{float(tau)!r},{value}")
    return "\n".join(lines) + "\n"


#: ``--stats`` of phase-noise: the statistics with a frequency-domain conversion.
PN_STATS = stats_option("adev,mdev", PHASE_NOISE_STATS)


@command(
    READING,
    PREPARING,
    PN_STATS,
    CONFIDENCE,
    WRITING,
    variants=(
        CARRIER,
        OUT.but(help="Output folder (default: <table name>-stability/ in the current folder)."),
        TITLE.but(help="Title of the figure (default: stability from phase noise: <table>)."),
    ),
)
def phase_noise_command(
    table: TableArg,
    fh: BandwidthOpt = None,
    taus: PnTausOpt = "octave",
    beyond: BeyondOpt = "flat",
    compare: CompareOpt = None,
    *,
    opts: RunOptions,
) -> None:
    """Convert a phase-noise table L(f) into sigma(tau), optionally beside a measured log.

    Example: stability phase-noise ocxo_pn.csv --nominal 10MHz --fh 100Hz --compare counter.csv
    """
    offsets, level = read_phase_noise_table(table)
    carrier = parse_frequency(opts.settings.read.nominal, what="--nominal")
    f_h = float(offsets[-1]) if fh is None else parse_frequency(fh, what="--fh")
    if f_h <= offsets[0]:
        raise InputError(
            f"--fh {f_h:g} Hz is not above the table's first offset {offsets[0]:g} Hz",
            path=str(table),
            hint="pass the bandwidth of the measurement, above the table's offsets",
        )
    tau, tau_rule = _taus(taus, f_h, float(offsets[0]))
    stats = opts.settings.analysis.stats
    conversion = phase_noise_to_stability(
        offsets, level, nominal=carrier, f_h=f_h, taus=tau, stats=stats, beyond=beyond
    )
    moment = datetime.now(UTC)
    sha = sha256_file(table)
    settings: dict[str, Any] = {
        "nominal": f"{carrier:.10g} Hz",
        "f_h": f"{f_h:.6g} Hz" + (" (the table's highest offset)" if fh is None else ""),
        "taus": tau_rule,
        "stats": ",".join(conversion.statistics),
        "beyond the table": beyond,
    }
    run = None
    model_curve = None
    if compare is not None:
        run, model_curve = _compared(compare, conversion, carrier, opts, settings)
    folder = opts.folder(Path.cwd() / f"{table.name}-stability")
    hashes = [sha] + ([run.sha256] if run is not None else [])
    fig = phase_noise_figure(
        conversion,
        table=(offsets, level),
        measured=run.table if run is not None else None,
        model=model_curve,
        title=opts.title or f"stability from phase noise: {table.name}",
        footer=footer(hashes, moment, several=True),
    )
    fmt = opts.plot_format
    names = ["phase_noise_sigma.csv", "phase_noise_sigma.md", f"phase_noise.{fmt}"]
    inputs = [table] + ([compare] if compare is not None else [])
    with OutputSet(folder, names, inputs=inputs) as out:
        out.write_text("phase_noise_sigma.csv", _csv(conversion))
        out.write_text("phase_noise_sigma.md", _markdown(conversion, table, sha, settings, moment))
        save_figure(fig, out.path(f"phase_noise.{fmt}"), fmt)
        written = list(out.commit().values())
    if opts.json:
        document = {
            "table": {"path": str(table), "sha256": sha},
            "settings": settings,
            "tool": f"stability {__version__}",
            "analysis_time": moment,
            "rows": conversion.to_frame().to_dict(orient="records"),
            "notes": conversion.notes,
        }
        echo(json.dumps(jsonable(document), indent=2))
        return
    echo(f"sigma(tau) from {table.name}: carrier {carrier:.10g} Hz, f_h {f_h:.6g} Hz")
    echo(_text(conversion))
    if run is not None:
        echo("")
        echo(f"measured: {compare.name}")
        echo(terminal_table(run.table))
    echo("")
    for note in conversion.notes:
        echo(f"note: {note}")
    echo("")
    echo(f"wrote {len(written)} files into {folder}")


def _compared(
    log: Path,
    conversion: PhaseNoiseStability,
    carrier: float,
    opts: RunOptions,
    settings: dict[str, Any],
) -> tuple[AnalysisRun, tuple[np.ndarray, np.ndarray] | None]:
    """Analyse the --compare log (octave taus, the conversion's statistics) and sketch
    the L(f) of its fitted power-law model; notes what it did in ``settings``."""
    stats = ",".join(conversion.statistics)
    chosen = opts.settings.replace(stats=stats, taus="octave")
    with ProgressDisplay(enabled=not opts.json) as bar:
        run = run_analysis(
            log,
            chosen,
            on_progress=bar.reading(log.name),
            on_step=bar.steps(log.name, step_count(stats)),
        )
    settings["compared with"] = f"{log.name} (SHA-256 {run.sha256 or 'n/a'})"
    model = run.table.extras.get("power_law_model")
    if model is None or not any(v > 0 for v in model.h.values()):
        conversion.notes.append(
            "the compared log has no fitted power-law model; no L(f) sketch is drawn"
        )
        return run, None
    low = 0.5 / float(model.tau_range[1])
    grid = np.geomspace(low, max(float(model.f_h), low * 10.0), 200)
    settings["model"] = ", ".join(f"h{a} = {v:.3g}" for a, v in sorted(model.h.items()) if v > 0)
    return run, (grid, model_to_phase_noise(model.h, carrier, grid))
