"""``stability phase-noise TABLE --nominal 10MHz``: the sigma(tau) a phase-noise table implies.

Reads a two-column table (offset in Hz, L(f) in dBc/Hz) with
:func:`stability.phase_noise.read_phase_noise_table`, converts it with
:func:`stability.phase_noise.phase_noise_to_stability` (the integral of S_y(f)
against each statistic's transfer function up to f_h; NIST SP 1065 section
9, IEEE Std 1139), and writes ``phase_noise_sigma.csv``, ``phase_noise_sigma.md``
and ``phase_noise.png``. With ``--compare LOG`` the log is analysed as
``analyze`` does and its measured curves, and the L(f) of its fitted power-law
model (:func:`stability.phase_noise.model_to_phase_noise`), are drawn beside.

Default taus. The Allan variance at tau draws most of its value from offsets
near 1/(2 tau) (the peak of its transfer function sin^4(pi f tau)/(pi f tau)^2
lies at f of about 0.37/tau; NIST SP 1065 section 9), so the taus the table
itself supports run from 1/(2 f_h), the sample interval of a measurement of
bandwidth f_h, up to 1/(2 f_min), f_min the table's lowest offset. ``octave``
takes 1/(2 f_h) times 1, 2, 4, ... up to that limit; ``decade`` the 1-2-5
sequence in the same range; a list gives taus in seconds.
"""

from __future__ import annotations

import json
import math
from datetime import UTC, datetime
from pathlib import Path
from typing import Annotated, Any

import numpy as np
import typer

import stability
from stability.errors import InputError
from stability.figures import phase_noise_figure, save_figure
from stability.files import atomic_write_text, ensure_folder, jsonable, sha256_file
from stability.phase_noise import (
    PhaseNoiseStability,
    model_to_phase_noise,
    phase_noise_to_stability,
    read_phase_noise_table,
)
from stability.reports.tables import format_tau, format_value, terminal_table
from stability.run import run_analysis
from stability.units import parse_frequency

from .common import (
    ColumnOpt,
    ConfidenceOpt,
    DebugOpt,
    DriftOpt,
    JsonOpt,
    KindOpt,
    OutliersOpt,
    OutOpt,
    StrictOpt,
    Tau0Opt,
    TimeColumnOpt,
    handle_errors,
    outliers_value,
)
from .main import app

__all__ = ["phase_noise_command", "default_taus"]

TableArg = Annotated[
    Path,
    typer.Argument(
        help="Phase-noise table: offset (Hz) and L(f) (dBc/Hz), two columns.", show_default=False
    ),
]
CarrierOpt = Annotated[
    str, typer.Option("--nominal", help="Carrier (nominal) frequency, e.g. 10MHz.")
]
BandwidthOpt = Annotated[
    str | None,
    typer.Option(
        "--fh",
        help="Measurement bandwidth f_h, e.g. 100Hz (default: the table's highest offset).",
    ),
]
PnTausOpt = Annotated[
    str,
    typer.Option(
        "--taus",
        help="octave or decade from 1/(2 f_h) to 1/(2 f_min), or a list in seconds.",
    ),
]
PnStatsOpt = Annotated[
    str, typer.Option("--stats", help="Comma list among adev, oadev, mdev, tdev, hdev, ohdev.")
]
BeyondOpt = Annotated[
    str,
    typer.Option(
        "--beyond",
        help="S_y above the last offset up to f_h: flat (hold the last value) or slope.",
    ),
]
CompareOpt = Annotated[
    Path | None,
    typer.Option("--compare", help="A measured log to analyse and draw beside the conversion."),
]

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
    from stability.taus import parse_taus

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
        f"- tool: stability {stability.__version__}",
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
    widths = [max([len(header[j])] + [len(r[j]) for r in rows]) for j in range(len(header))]
    out = ["  ".join(h.rjust(w) for h, w in zip(header, widths, strict=True))]
    out.append("  ".join("-" * w for w in widths))
    out += ["  ".join(c.rjust(w) for c, w in zip(r, widths, strict=True)) for r in rows]
    return "\n".join(out)


def _csv(conversion: PhaseNoiseStability) -> str:
    lines = ["statistic,tau_s,deviation"]
    for name in conversion.statistics:
        for tau, dev in zip(conversion.tau, conversion[name], strict=True):
            value = repr(float(dev)) if math.isfinite(dev) else ""
            lines.append(f"{name},{float(tau)!r},{value}")
    return "\n".join(lines) + "\n"


@app.command("phase-noise")
@handle_errors
def phase_noise_command(
    table: TableArg,
    nominal: CarrierOpt,
    fh: BandwidthOpt = None,
    taus: PnTausOpt = "octave",
    stats: PnStatsOpt = "adev,mdev",
    beyond: BeyondOpt = "flat",
    compare: CompareOpt = None,
    kind: KindOpt = "auto",
    column: ColumnOpt = None,
    time_column: TimeColumnOpt = None,
    tau0: Tau0Opt = None,
    confidence: ConfidenceOpt = 0.683,
    outliers: OutliersOpt = "5",
    drift: DriftOpt = "none",
    out: OutOpt = None,
    strict: StrictOpt = False,
    json_out: JsonOpt = False,
    debug: DebugOpt = False,
) -> None:
    """Convert a phase-noise table L(f) into sigma(tau), optionally beside a measured log.

    Example: stability phase-noise ocxo_pn.csv --nominal 10MHz --fh 100Hz --compare counter.csv
    """
    offsets, level = read_phase_noise_table(table)
    carrier = parse_frequency(nominal, what="--nominal")
    f_h = float(offsets[-1]) if fh is None else parse_frequency(fh, what="--fh")
    if f_h <= offsets[0]:
        raise InputError(
            f"--fh {f_h:g} Hz is not above the table's first offset {offsets[0]:g} Hz",
            path=str(table),
            hint="pass the bandwidth of the measurement, above the table's offsets",
        )
    tau, tau_rule = _taus(taus, f_h, float(offsets[0]))
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
    measured = None
    model_curve = None
    run = None
    if compare is not None:
        run = run_analysis(
            compare,
            kind=kind,
            column=column,
            time_column=time_column,
            tau0=tau0,
            nominal=nominal,
            strict=strict,
            stats=",".join(conversion.statistics),
            taus="octave",
            confidence=confidence,
            outliers=outliers_value(outliers),
            drift=drift,
        )
        measured = run.table
        settings["compared with"] = f"{compare.name} (SHA-256 {run.sha256 or 'n/a'})"
        model = run.table.extras.get("power_law_model")
        if model is not None and any(v > 0 for v in model.h.values()):
            low = 0.5 / float(model.tau_range[1])
            grid = np.geomspace(low, max(float(model.f_h), low * 10.0), 200)
            model_curve = (grid, model_to_phase_noise(model.h, carrier, grid))
            settings["model"] = ", ".join(
                f"h{a} = {v:.3g}" for a, v in sorted(model.h.items()) if v > 0
            )
        else:
            conversion.notes.append(
                "the compared log has no fitted power-law model; no L(f) sketch is drawn"
            )
    folder = ensure_folder(out if out is not None else Path.cwd() / f"{table.name}-stability")
    written = [
        atomic_write_text(folder / "phase_noise_sigma.csv", _csv(conversion)),
        atomic_write_text(
            folder / "phase_noise_sigma.md",
            _markdown(conversion, table, sha, settings, moment),
        ),
    ]
    hashes = [sha[:12]] + ([run.sha256[:12]] if run is not None and run.sha256 else [])
    footer = (
        f"inputs SHA-256 {', '.join(hashes)} · stability {stability.__version__} · "
        f"analysed {moment.strftime('%Y-%m-%d %H:%M UTC')}"
    )
    drawn = phase_noise_figure(
        conversion,
        table=(offsets, level),
        measured=measured,
        model=model_curve,
        title=f"stability from phase noise: {table.name}",
        footer=footer,
    )
    written.append(save_figure(drawn, folder / "phase_noise.png", "png"))
    if json_out:
        document = {
            "table": {"path": str(table), "sha256": sha},
            "settings": settings,
            "tool": f"stability {stability.__version__}",
            "analysis_time": moment,
            "rows": conversion.to_frame().to_dict(orient="records"),
            "notes": conversion.notes,
        }
        typer.echo(json.dumps(jsonable(document), indent=2))
        return
    typer.echo(f"sigma(tau) from {table.name}: carrier {carrier:.10g} Hz, f_h {f_h:.6g} Hz")
    typer.echo(_text(conversion))
    if measured is not None:
        typer.echo("")
        typer.echo(f"measured: {compare.name}")
        typer.echo(terminal_table(measured))
    typer.echo("")
    for note in conversion.notes:
        typer.echo(f"note: {note}")
    typer.echo("")
    typer.echo(f"wrote {len(written)} files into {folder}")
