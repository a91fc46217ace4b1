"""Option groups of single commands: ``stability time-error`` (and ``record --mask``),
``stability validate``, ``stability watch`` and ``stability capture``.

Declared with the one builder of :mod:`.options` (:class:`~.options.OptionSpec`),
kept apart from the shared groups so that each module stays readable.
"""

from __future__ import annotations

from pathlib import Path

from stability.validation import check_coverage_stats, coverage_statistics

from .option_checks import duration_check, frequency_check, mask_check, word_check
from .options import OUT, STATS, OptionSpec, flag

__all__ = [
    "MASK",
    "REMOVE_OFFSET",
    "SAWTOOTH",
    "SAWTOOTH_SIGN",
    "SAWTOOTH_ROW",
    "CTE_WINDOW",
    "DTE_BANDWIDTH",
    "TIMING",
    "VALIDATING",
    "STOP_AFTER",
    "WATCHING",
]

# Time-error analysis (stability time-error, and record --mask)
MASK = OptionSpec(
    "mask", "--mask", str | None, None,
    "Time-error mask to judge MTIE, TDEV and max|TE| against: a bundled name (see "
    "stability masks) or a mask file (TOML).",
    metavar="NAME|FILE", check=mask_check,
)  # fmt: skip
REMOVE_OFFSET = flag(
    "remove_offset",
    "--remove-offset",
    "Remove the frequency offset (least-squares line of the time error) before MTIE; "
    "every output says whether it was removed.",
)
SAWTOOTH = OptionSpec(
    "sawtooth", "--sawtooth", str | None, None,
    "Column of the GNSS receiver's reported quantisation error (sawtooth), applied "
    "before every statistic: corrected TE = TE - the value reported on the row before "
    "(the receiver's report for its next pulse, pulse minus ideal; see --sawtooth-sign "
    "and --sawtooth-row).",
    metavar="NAME|N",
)  # fmt: skip
SAWTOOTH_SIGN = OptionSpec(
    "sawtooth_sign", "--sawtooth-sign", str, "subtract",
    "subtract the sawtooth value (a receiver reporting pulse minus ideal), or add it "
    "(one reporting ideal minus pulse).",
    metavar="subtract|add", check=word_check("--sawtooth-sign", {"subtract": -1, "add": 1}),
)  # fmt: skip
SAWTOOTH_ROW = OptionSpec(
    "sawtooth_row", "--sawtooth-row", str, "next",
    "The sawtooth value on a row applies to the next row's pulse (next, as receivers "
    "report it ahead of the pulse) or to its own row (same).",
    metavar="next|same", check=word_check("--sawtooth-row", {"next": "next", "same": "same"}),
)  # fmt: skip
CTE_WINDOW = OptionSpec(
    "cte_window", "--cte-window", str, "1000s",
    "Averaging window of the constant time error cTE (G.8273.2, from memory: 1000 s).",
    metavar="DURATION", check=duration_check("--cte-window"),
)  # fmt: skip
DTE_BANDWIDTH = OptionSpec(
    "dte_bandwidth", "--dte-bandwidth", str, "0.1Hz",
    "Bandwidth of the first-order filter pair splitting dTE into dTE_L and dTE_H "
    "(G.8273.2, from memory: 0.1 Hz).",
    metavar="FREQ", check=frequency_check("--dte-bandwidth"),
)  # fmt: skip
#: The options of a time-error analysis, in help order.
TIMING = (MASK, REMOVE_OFFSET, SAWTOOTH, SAWTOOTH_SIGN, SAWTOOTH_ROW, CTE_WINDOW, DTE_BANDWIDTH)

#: Options of ``stability validate``: the coverage run's statistics (as given, else
#: those of the specification, else oadev,mdev), its length, the output folder.
VALIDATING = (
    STATS.but(
        type=str | None,
        default=None,
        help="Statistics whose confidence intervals the coverage run checks, a comma list of "
        f"{', '.join(coverage_statistics())} (default: the statistic of --spec, else "
        "oadev,mdev).",
        check=lambda value: ",".join(check_coverage_stats(value)),
    ),
    OptionSpec(
        "spec",
        "--spec",
        Path | None,
        None,
        "Specification file (TOML) of the lab: the coverage run checks its statistic.",
        metavar="FILE",
    ),
    flag(
        "thorough",
        "--thorough",
        "The long coverage run: 2000 records of 1024 points per case and m = 1 to 128, "
        "instead of 300 records of 512 points and m = 1, 4, 16, 64.",
    ),
    OUT.but(
        help="Output folder of validation.pdf and validation.json "
        "(default: stability-validation/ in the current folder)."
    ),  # fmt: skip
)


#: Options of the commands that run until stopped (watch, capture).
STOP_AFTER = OptionSpec(
    "stop_after",
    "--duration",
    str | None,
    None,
    "Stop after this long (e.g. 8h); default: run until Ctrl-C.",
    metavar="DURATION",
    check=duration_check("--duration"),
)
EVERY = OptionSpec(
    "every",
    "--every",
    str,
    "5min",
    "Re-analyse this often while new lines arrive.",
    metavar="DURATION",
    check=duration_check("--every"),
)
ROWS = OptionSpec(
    "rows",
    "--rows",
    int | None,
    None,
    "Also re-analyse as soon as this many new lines arrived "
    "(default: when the log has doubled since the last analysis).",
    metavar="N",
    extra={"min": 1},
)
STALL = OptionSpec(
    "stall",
    "--stall",
    str,
    "2min",
    "Show the logger as stalled after this long without a new line.",
    metavar="DURATION",
    check=duration_check("--stall"),
)
POLL = OptionSpec(
    "poll",
    "--poll",
    str,
    "1s",
    "Look at the log this often.",
    metavar="DURATION",
    check=duration_check("--poll"),
)
WATCHING = (EVERY, ROWS, STALL, POLL, STOP_AFTER)
