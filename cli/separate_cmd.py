"""``stability separate AB.csv BC.csv CA.csv``: each oscillator's stability (three-cornered hat).

Each log holds the difference of two oscillators, first named minus second
(A-B, B-C, C-A for three logs by default). The command reads and prepares
every log as ``analyze`` does (the same reading and preparation options), then
calls :func:`stability.hat.separate` (Gray & Allan 1974; NIST SP 1065 section
9.2), which aligns the logs by their time stamps, and writes ``separated.csv``,
``separated.md``, ``separated_pairs.csv`` and the figure ``separated.png`` (or
the ``--plot-format``) into ``separated-stability/`` or ``--out``.
"""

from __future__ import annotations

import csv
import io
import itertools
import json
import math
from datetime import UTC, datetime
from pathlib import Path
from typing import Annotated, Any

import typer

from stability._version import __version__
from stability.errors import InputError
from stability.figures import hat_figure, save_figure
from stability.files import jsonable
from stability.hat import STATUS_OK, HatResult, separate
from stability.measurement import Measurement
from stability.outputs import OutputSet
from stability.reports.tables import format_tau, format_value
from stability.run import read_and_prepare
from stability.taus import parse_taus

from .common import command_line_checks, echo
from .options import (
    ANALYSING,
    OUT,
    PREPARING,
    READING,
    TITLE,
    WRITING,
    RunOptions,
    command,
    stats_option,
)
from .progress import ProgressDisplay
from .reporting import footer, text_table

__all__ = ["separate_command", "pair_assignment", "SEPARATED_COLUMNS"]

#: Columns of separated.csv, in order.
SEPARATED_COLUMNS = (
    "oscillator",
    "statistic",
    "tau_s",
    "deviation",
    "ci_low",
    "ci_high",
    "edf",
    "status",
    "upper_bound",
)

LogsArg = Annotated[
    list[Path],
    typer.Argument(
        help="Pair logs, each the first oscillator minus the second (A-B, B-C, C-A).",
        show_default=False,
        metavar="LOG",
    ),
]
NamesOpt = Annotated[
    str | None,
    typer.Option(
        "--names", help="Oscillator names, comma list (default A,B,C,...).", metavar="LIST"
    ),
]
PairsOpt = Annotated[
    str | None,
    typer.Option(
        "--pairs",
        help="Which pair each log is, in log order, e.g. A-B,B-C,C-A (log = first - second).",
        metavar="LIST",
    ),
]


def _split_list(text: str, what: str) -> list[str]:
    items = [part.strip() for part in str(text).split(",")]
    if not all(items):
        raise InputError(f"{what} has an empty entry: {text!r}", hint=f"pass {what} like A,B,C")
    return items


def pair_assignment(
    count: int, names: str | None, pairs: str | None
) -> tuple[list[tuple[str, str]], list[str]]:
    """Which pair each of ``count`` logs holds, and the oscillator order for the output.

    Without ``pairs``: three logs are names[0]-names[1], names[1]-names[2],
    names[2]-names[0] (a closed triangle); for more logs, ``names`` must
    list n oscillators with count = n(n-1)/2 and the logs are taken as every
    pair in order (A-B, A-C, ..., B-C, ...).
    """
    osc = _split_list(names, "--names") if names is not None else None
    if osc is not None and len(set(osc)) != len(osc):
        raise InputError(f"--names repeats a name: {names!r}")
    if pairs is not None:
        keys: list[tuple[str, str]] = []
        for item in _split_list(pairs, "--pairs"):
            parts = [p.strip() for p in item.split("-")]
            if len(parts) != 2 or not all(parts):
                raise InputError(
                    f"--pairs entry {item!r} is not of the form A-B",
                    hint="name each pair as first-second, e.g. --pairs A-B,B-C,C-A",
                )
            keys.append((parts[0], parts[1]))
        if len(keys) != count:
            raise InputError(
                f"--pairs names {len(keys)} pair(s) for {count} log(s)",
                hint="give one pair per log, in the order of the logs",
            )
        found = list(dict.fromkeys(n for k in keys for n in k))
        if osc is None:
            return keys, found
        missing = [n for n in found if n not in osc]
        if missing:
            raise InputError(
                f"--pairs names {', '.join(missing)}, which --names does not list",
                hint="list every oscillator of --pairs in --names",
            )
        return keys, [n for n in osc if n in found]
    if count < 3:
        raise InputError(
            f"the three-cornered hat needs at least 3 pair logs, got {count}",
            hint="measure three oscillators against each other: A-B, B-C and C-A",
        )
    if count == 3:
        osc = osc if osc is not None else ["A", "B", "C"]
        if len(osc) != 3:
            raise InputError(
                f"--names lists {len(osc)} oscillators for 3 logs; 3 are needed",
                hint="pass --pairs to say which pair each log is",
            )
        return [(osc[0], osc[1]), (osc[1], osc[2]), (osc[2], osc[0])], osc
    n = (1 + math.isqrt(1 + 8 * count)) // 2
    if osc is None or len(osc) != n or n * (n - 1) // 2 != count:
        raise InputError(
            f"{count} logs: say which pair each log is with --pairs",
            hint="for example --pairs A-B,A-C,A-D,B-C,B-D,C-D",
        )
    return list(itertools.combinations(osc, 2)), osc


def _cell(value: Any) -> str:
    if isinstance(value, float):
        return repr(value) if math.isfinite(value) else ""
    return str(value)


def _rows(results: list[HatResult], order: list[str]) -> list[list[Any]]:
    rows = []
    for result in results:
        for name in order:
            osc = result[name]
            for i in range(len(osc.tau)):
                rows.append(
                    [
                        name,
                        osc.statistic,
                        float(osc.tau[i]),
                        float(osc.deviation[i]),
                        float(osc.ci_low[i]),
                        float(osc.ci_high[i]),
                        float(osc.edf[i]),
                        osc.status[i],
                        float(osc.upper_bound[i]),
                    ]
                )
    return rows


def _csv(header: Any, rows: list[list[Any]]) -> str:
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(header)
    for row in rows:
        writer.writerow([_cell(v) for v in row])
    return buffer.getvalue()


def _people(result: HatResult, name: str) -> tuple[list[str], list[list[str]]]:
    level = 100.0 * result.confidence
    header = ["tau", "deviation", f"{level:.3g} % interval", "edf"]
    osc = result[name]
    lines = []
    for i in range(len(osc.tau)):
        if osc.status[i] == STATUS_OK:
            low, high = float(osc.ci_low[i]), float(osc.ci_high[i])
            interval = (
                f"[{format_value(low)}, {format_value(high)}]"
                if math.isfinite(low) and math.isfinite(high)
                else ""
            )
            edf = float(osc.edf[i])
            lines.append(
                [
                    format_tau(float(osc.tau[i])),
                    format_value(float(osc.deviation[i])),
                    interval,
                    f"{edf:.3g}" if math.isfinite(edf) else "",
                ]
            )
        else:
            bound = float(osc.upper_bound[i])
            lines.append(
                [
                    format_tau(float(osc.tau[i])),
                    "below resolution",
                    f"< {format_value(bound)}" if math.isfinite(bound) else "",
                    "",
                ]
            )
    return header, lines


def _markdown(
    results: list[HatResult],
    order: list[str],
    inputs: list[tuple[str, Measurement]],
    settings: dict[str, Any],
    moment: datetime,
) -> str:
    lines = [
        "# Three-cornered hat: separated stability",
        "",
        "Each pair log holds the first oscillator minus the second. Separation after "
        "Gray & Allan (1974), NIST SP 1065 section 9.2; intervals by Satterthwaite's "
        "approximation of the combined degrees of freedom.",
        "",
        "## Inputs",
        "",
        "| pair | file | SHA-256 | samples | tau0 |",
        "|:---|:---|:---|---:|---:|",
    ]
    for label, meas in inputs:
        prov = meas.provenance
        lines.append(
            f"| {label} | {Path(prov.path).name if prov.path else ''} | "
            f"{prov.sha256 or ''} | {meas.n} | {format_tau(meas.tau0)} |"
        )
    lines += ["", "## Settings", ""]
    lines += [f"- {key}: {value}" for key, value in settings.items()]
    lines += [
        f"- tool: stability {__version__}",
        f"- analysed: {moment.strftime('%Y-%m-%d %H:%M:%S UTC')}",
    ]
    for result in results:
        for name in order:
            header, rows = _people(result, name)
            lines += ["", f"## {name} ({result.statistic.upper()})", ""]
            lines.append("| " + " | ".join(header) + " |")
            lines.append("|" + "|".join("---:" for _ in header) + "|")
            lines += ["| " + " | ".join(c.replace("|", "\\|") for c in r) + " |" for r in rows]
    notes = [n for r in results for n in r.notes]
    if notes:
        lines += ["", "## Notes", ""] + [f"- {n}" for n in dict.fromkeys(notes)]
    return "\n".join(lines) + "\n"


@command(
    READING,
    PREPARING,
    ANALYSING,
    WRITING,
    variants=(
        stats_option("oadev"),
        OUT.but(help="Output folder (default: separated-stability/ in the current folder)."),
        TITLE.but(help="Title of the figure (default: three-cornered hat: <names>)."),
    ),
)
def separate_command(
    logs: LogsArg,
    names: NamesOpt = None,
    pairs: PairsOpt = None,
    *,
    opts: RunOptions,
) -> None:
    """Separate each oscillator's stability from pair logs A-B, B-C, C-A (three-cornered hat).

    Sign convention: each log holds the first oscillator minus the second (A-B).

    Example: stability separate AB.csv BC.csv CA.csv --names maser,ocxo,rb --stats oadev
    """
    with command_line_checks():
        keys, order = pair_assignment(len(logs), names, pairs)
    spec = opts.settings.analysis
    statistics = [n for n in str(spec.stats).split(",") if n]
    grid = parse_taus(spec.taus)
    inputs: list[tuple[str, Measurement]] = []
    measurements = {}
    with ProgressDisplay(enabled=not opts.json) as bar:
        for path, key in zip(logs, keys, strict=True):
            source, prepared, _ = read_and_prepare(
                path, opts.settings, on_progress=bar.reading(path.name)
            )
            measurements[key] = prepared
            inputs.append((f"{key[0]}-{key[1]}", source))
    results = [
        separate(measurements, stat=name, taus=grid, confidence=spec.confidence)
        for name in statistics
    ]
    moment = datetime.now(UTC)
    threshold = opts.settings.prepare.outliers
    settings = {
        "pairs": ", ".join(f"{a}-{b} = {p.name}" for (a, b), p in zip(keys, logs, strict=True)),
        "sign convention": "each log holds the first oscillator minus the second",
        "stats": ",".join(r.statistic for r in results),
        "taus": str(spec.taus),
        "confidence": spec.confidence,
        "outliers": "off" if threshold is None else threshold,
        "drift": opts.settings.prepare.drift,
        "average": opts.settings.prepare.average,
    }
    folder = opts.folder(Path.cwd() / "separated-stability")
    rows = _rows(results, order)
    pair_frames = [r.pairs_frame() for r in results]
    pair_rows = [list(row) for frame in pair_frames for row in frame.itertuples(index=False)]
    pair_rows = [[float(v) if isinstance(v, float) else v for v in row] for row in pair_rows]
    hashes = [m.provenance.sha256 for _, m in inputs]
    fig = hat_figure(results, title=opts.title, footer=footer(hashes, moment, several=True))
    fmt = opts.plot_format
    names = ["separated.csv", "separated.md", "separated_pairs.csv", f"separated.{fmt}"]
    paths = [m.provenance.path for _, m in inputs if m.provenance.path]
    with OutputSet(folder, names, inputs=paths) as out:
        out.write_text("separated.csv", _csv(SEPARATED_COLUMNS, rows))
        out.write_text("separated.md", _markdown(results, order, inputs, settings, moment))
        out.write_text("separated_pairs.csv", _csv(list(pair_frames[0].columns), pair_rows))
        save_figure(fig, out.path(f"separated.{fmt}"), fmt)
        written = list(out.commit().values())
    if opts.json:
        document = {
            "settings": settings,
            "inputs": [
                {"pair": label, "path": m.provenance.path, "sha256": m.provenance.sha256}
                for label, m in inputs
            ],
            "tool": f"stability {__version__}",
            "analysis_time": moment,
            "rows": [dict(zip(SEPARATED_COLUMNS, row, strict=True)) for row in rows],
            "notes": [n for r in results for n in r.notes],
        }
        echo(json.dumps(jsonable(document), indent=2))
        return
    echo("Pair logs: " + ", ".join(label for label, _ in inputs) + " (each log = first - second)")
    for result in results:
        for name in order:
            header, lines = _people(result, name)
            echo("")
            echo(f"{name}  ({result.statistic.upper()})")
            echo(text_table(header, lines))
    notes = list(dict.fromkeys(n for r in results for n in r.notes))
    if notes:
        echo("")
        for note in notes:
            echo(f"note: {note}")
    echo("")
    echo(f"wrote {len(written)} files into {folder}")
