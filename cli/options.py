"""The options every command shares, declared once, and the one place they become settings.

Each shared option (``--kind``, ``--tau0``, ``--stats``, ``--out``, ...) is one
:class:`OptionSpec` here: flag, type, default, help and the check of its value.
A command takes them with the :func:`command` decorator::

    @command(READING, PREPARING, ANALYSING, WRITING)
    def analyze(log: LogArg, *, opts: RunOptions) -> None:
        run, files = analyze_into(log, opts.folder(...), opts.settings, ...)

The decorator adds the options to the signature typer reads (``__signature__``),
so ``--help`` lists each once, in the order reading, preparation, analysis,
output; it checks every value while the command line is parsed (a value of the
wrong form is a usage error, exit 2, naming the option), builds the typed
:class:`stability.settings.RunSettings` once for all commands, and runs the
command inside :func:`~.common.guarded`, so its errors become one line.

A command whose option differs in meaning or default (``record --confidence``
defaults to the specification's level; ``timeline --stats`` takes one
statistic) passes a variant made from the same declaration with
:meth:`OptionSpec.but`.
"""

from __future__ import annotations

import dataclasses
import functools
import inspect
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Annotated, Any, TypeVar

import typer

from stability.deviations.registry import statistic_names
from stability.ingest import KINDS
from stability.prepare.drift import DRIFT_MODELS, check_drift_model
from stability.settings import RunSettings
from stability.workflow import PLOT_FORMATS, check_plot_format

from .common import guarded
from .option_checks import (
    checked,
    confidence_check,
    duration_check,
    frequency_check,
    kind_check,
    on_off_check,
    outliers_value,
    reading_check,
    stats_check,
    taus_check,
)

__all__ = [
    "flag",
    "OptionSpec",
    "RunOptions",
    "build_options",
    "command",
    "checked",
    "duration_check",
    "frequency_check",
    "stats_option",
    "outliers_value",
    "LogArg",
    "READING",
    "PREPARING",
    "ANALYSING",
    "WRITING",
    "SETTING_NAMES",
    "KIND",
    "COLUMN",
    "TIME_COLUMN",
    "BIAS_CORRECTION",
    "STAMP_TOLERANCE",
    "TIMEZONE",
    "SHEET",
    "ENGINE",
    "TAU0",
    "NOMINAL",
    "WRAP",
    "STRICT",
    "UNUSUAL_TIMING",
    "MAX_EXPANSION",
    "OUTLIERS",
    "DRIFT",
    "AVERAGE",
    "STATS",
    "TAUS",
    "CONFIDENCE",
    "OUT",
    "PLOT_FORMAT",
    "TITLE",
    "NOISE_LABELS",
    "STABILITY_PLOT",
    "JSON",
    "DEBUG",
]

F = TypeVar("F", bound=Callable[..., Any])

LogArg = Annotated[
    Path, typer.Argument(help="The log file to read.", metavar="LOG", show_default=False)
]


# --------------------------------------------------------------------- declarations
@dataclass(frozen=True)
class OptionSpec:
    """One shared option: parameter name, flag, type, default, help and value check.

    ``check(value)`` is the library's check of a given value: it returns what the
    command receives and raises :class:`InputError` for a value of the wrong form.
    """

    name: str
    flag: str
    type: Any
    default: Any
    help: str
    metavar: str | None = None
    check: Callable[[Any], Any] | None = None
    extra: dict[str, Any] = field(default_factory=dict)

    def but(self, **changes: Any) -> OptionSpec:
        """A variant of this option for one command (another default or help)."""
        return dataclasses.replace(self, **changes)

    def parameter(self) -> inspect.Parameter:
        """The keyword-only parameter typer reads, with its ``typer.Option``."""
        info = typer.Option(
            self.flag,
            help=self.help,
            metavar=self.metavar,
            callback=checked(self.check) if self.check is not None else None,
            **self.extra,
        )
        return inspect.Parameter(
            self.name,
            inspect.Parameter.KEYWORD_ONLY,
            default=self.default,
            annotation=Annotated[self.type, info],
        )


def flag(name: str, flag: str, help: str) -> OptionSpec:
    # a bool option declared without "/--no-..." is a flag: no value, no placeholder
    return OptionSpec(name, flag, bool, False, help)


KIND = OptionSpec(
    "kind",
    "--kind",
    str,
    "auto",
    "What the value column holds: phase (time error, s), frequency (absolute, Hz), "
    "fractional (fractional frequency), or auto to tell from the header and values.",
    metavar="|".join(KINDS),
    check=kind_check,
)
COLUMN = OptionSpec(
    "column",
    "--column",
    str | None,
    None,
    "Value column: 1-based number or header name (default: found from the header and data).",
    metavar="NAME|N",
)
TIME_COLUMN = OptionSpec(
    "time_column",
    "--time-column",
    str | None,
    None,
    "Time column: 1-based number or header name, or none to read the rows in sequence "
    "(the stamps only labels; needs --tau0). Default: found from the data, a date-time "
    "column before a counter.",
    metavar="NAME|N|none",
)
STAMP_TOLERANCE = OptionSpec(
    "stamp_tolerance",
    "--stamp-tolerance",
    str | None,
    None,
    "How far a time stamp may sit from its slot on the grid and be snapped to it, as a "
    "fraction of tau0 (default 0.33; 0.7 also puts back stamps written more than half "
    "tau0 late).",
    metavar="FRACTION",
    check=reading_check("stamp_tolerance"),
)
TIMEZONE = OptionSpec(
    "timezone",
    "--timezone",
    str | None,
    None,
    "IANA time zone of stamps written without a zone, e.g. Europe/Berlin; they are "
    "converted to UTC (daylight-saving changes handled).",
    metavar="ZONE",
    check=reading_check("timezone"),
)
SHEET = OptionSpec(
    "sheet",
    "--sheet",
    str | None,
    None,
    "Sheet of an .xlsx workbook: 1-based number or name (default: the first).",
    metavar="NAME|N",
)
ENGINE = OptionSpec(
    "engine",
    "--engine",
    str,
    "auto",
    "Reading engine: auto takes pyarrow's multi-threaded reader for clean logs when it is "
    "installed, else pandas; all give the same result.",
    metavar="auto|pandas|pyarrow",
    check=reading_check("engine"),
)
TAU0 = OptionSpec(
    "tau0",
    "--tau0",
    str | None,
    None,
    "Sample interval, e.g. 1s or 100ms; needed when the log has no time stamps, "
    "overrides their spacing otherwise.",
    metavar="DURATION",
    check=duration_check("--tau0"),
)
NOMINAL = OptionSpec(
    "nominal",
    "--nominal",
    str | None,
    None,
    "Nominal frequency, e.g. 10MHz, for absolute-frequency and carrier-phase logs "
    "(default: the standard value the readings lie near, when they do).",
    metavar="FREQ",
    check=frequency_check("--nominal"),
)
WRAP = OptionSpec(
    "wrap",
    "--wrap",
    str | None,
    None,
    "Period at which time-interval readings wrap around, e.g. 1s "
    "(default: 1 s for 1 PPS readings, 1/nominal for carrier phase).",
    metavar="DURATION",
    check=duration_check("--wrap"),
)
STRICT = flag("strict", "--strict", "Make every unreadable row an error instead of a gap.")
UNUSUAL_TIMING = flag(
    "allow_unusual",
    "--unusual-timing",
    "Read a sample interval below 1 ns or above one day, a record spanning more than a "
    "century, or a log whose time grid is mostly gaps, instead of refusing it.",
)
MAX_EXPANSION = OptionSpec(
    "max_expansion",
    "--max-expansion",
    str | None,
    None,
    "How many times its size a compressed log may expand to (default 100; never beyond "
    "a third of the available memory).",
    metavar="RATIO",
    check=reading_check("max_expansion"),
)
OUTLIERS = OptionSpec(
    "outliers",
    "--outliers",
    str,
    "5",
    "Outlier screening threshold in robust sigmas, or off.",
    metavar="K|off",
    check=outliers_value,
)
DRIFT = OptionSpec(
    "drift",
    "--drift",
    str,
    "none",
    "Drift model removed before the statistics (linear drift is always estimated and reported).",
    metavar="|".join(DRIFT_MODELS),
    check=check_drift_model,
)
AVERAGE = OptionSpec(
    "average",
    "--average",
    int,
    1,
    "Average N adjacent samples first (the sample interval becomes N tau0).",
    metavar="N",
    extra={"min": 1},
)


def stats_option(
    default: str,
    choices: tuple[str, ...] | None = None,
    *,
    one: bool = False,
    where: str = "--stats",
) -> OptionSpec:
    """``--stats``: a comma list of statistics (or ``one`` of them) from the registry.

    ``choices`` narrows the list the help shows to what the command can compute.
    """
    names = ", ".join(choices or statistic_names())
    what = "One statistic" if one else "Comma list of statistics"
    return OptionSpec(
        "stats",
        "--stats",
        str,
        default,
        f"{what}: {names}.",
        metavar="NAME" if one else "LIST",
        check=stats_check(choices, one, where),
    )


STATS = stats_option("oadev,mdev")
TAUS = OptionSpec(
    "taus",
    "--taus",
    str,
    "octave",
    "Tau grid: octave (1, 2, 4, ... tau0), decade (1-2-5), dense (20 log-spaced per "
    "decade), all (every multiple of tau0) or a comma list of taus in seconds, e.g. 1,10,100.",
    metavar="octave|decade|dense|all|LIST",
    check=taus_check,
)
CONFIDENCE = OptionSpec(
    "confidence",
    "--confidence",
    str,
    0.683,
    "Two-sided confidence level of the intervals, between 0 and 1.",
    metavar="P",
    check=confidence_check,
)


BIAS_CORRECTION = OptionSpec(
    "bias_correction",
    "--bias-correction",
    str,
    "on",
    "Correct the bias of the total and Theo families for the identified noise type "
    "(on), or report the raw estimates (off); corrected rows are marked either way.",
    metavar="on|off",
    check=on_off_check,
)
OUT = OptionSpec(
    "out",
    "--out",
    Path | None,
    None,
    "Output folder (default: <log name>-stability/ in the current folder).",
    metavar="DIR",
)
PLOT_FORMAT = OptionSpec(
    "plot_format",
    "--plot-format",
    str,
    "png",
    "File format of the figures.",
    metavar="|".join(PLOT_FORMATS),
    check=check_plot_format,
)


def _noise_labels(value: str) -> str:
    """``--noise-labels``: all, none, or a comma list of statistics from the registry."""
    word = str(value).strip().lower()
    return word if word in ("all", "none") else stats_check(None, False, "--noise-labels")(word)


NOISE_LABELS = OptionSpec(
    "noise_labels",
    "--noise-labels",
    str | None,
    None,
    "Whose noise types the stability plot writes: a comma list of statistics, all or none "
    "(default: every statistic of a panel of up to three, else the panel's first).",
    metavar="LIST|all|none",
    check=_noise_labels,
)
TITLE = OptionSpec(
    "title",
    "--title",
    str | None,
    None,
    "Title of the stability figure (default: the log's file name).",
    metavar="TEXT",
)
JSON = flag(
    "json_out",
    "--json",
    "Print the machine-readable summary (JSON) to standard output instead of the tables.",
)
DEBUG = flag("debug", "--debug", "Show the full traceback of an error.")


#: The option groups, in the order the help lists them.
READING = (
    KIND,
    COLUMN,
    TIME_COLUMN,
    TAU0,
    NOMINAL,
    WRAP,
    STAMP_TOLERANCE,
    TIMEZONE,
    SHEET,
    ENGINE,
    STRICT,
    UNUSUAL_TIMING,
    MAX_EXPANSION,
)
PREPARING = (OUTLIERS, DRIFT, AVERAGE)
ANALYSING = (STATS, TAUS, CONFIDENCE, BIAS_CORRECTION)
WRITING = (OUT, PLOT_FORMAT, TITLE, JSON)
#: Options of the commands that draw the stability plot of one log (analyze, record).
STABILITY_PLOT = (NOISE_LABELS,)

#: Option names that are settings of :class:`RunSettings` (the rest are outputs).
SETTING_NAMES = tuple(o.name for o in READING + PREPARING + ANALYSING)


# --------------------------------------------------------------------- the builder
@dataclass(frozen=True)
class RunOptions:
    """What a command's shared options said: the run's settings and the output choices.

    ``given`` holds every shared option's value as checked (None where an
    option without a default was not given).
    """

    settings: RunSettings = field(default_factory=RunSettings)
    out: Path | None = None
    plot_format: str = "png"
    title: str | None = None
    noise_labels: str | None = None
    json: bool = False
    debug: bool = False
    given: dict[str, Any] = field(default_factory=dict)

    def folder(self, default: Path) -> Path:
        """``--out``, or ``default`` when it was not given."""
        return self.out if self.out is not None else default


def build_options(values: dict[str, Any]) -> RunOptions:
    """The :class:`RunOptions` from the values of the shared options (checked already)."""
    settings = RunSettings.from_options(
        **{name: values[name] for name in SETTING_NAMES if name in values}
    )
    return RunOptions(
        settings=settings,
        out=values.get("out"),
        plot_format=values.get("plot_format", "png"),
        title=values.get("title"),
        noise_labels=values.get("noise_labels"),
        json=bool(values.get("json_out", False)),
        debug=bool(values.get("debug", False)),
        given=dict(values),
    )


def _flatten(groups: tuple[Any, ...]) -> list[OptionSpec]:
    specs: list[OptionSpec] = []
    for group in groups:
        specs.extend(group if isinstance(group, tuple) else (group,))
    return specs


def _subject_label(value: Any) -> str | None:
    """The input's file name(s) for an error message."""
    if value is None:
        return None
    if isinstance(value, list | tuple):
        return ", ".join(Path(str(v)).name for v in value) or None
    return Path(str(value)).name


def command(
    *groups: tuple[OptionSpec, ...] | OptionSpec,
    variants: tuple[OptionSpec, ...] = (),
    subject: str | None = None,
) -> Callable[[F], F]:
    """Give a command the shared options of ``groups`` and run it guarded.

    Parameters
    ----------
    groups
        Option groups (:data:`READING`, ...) or single options, in help order;
        ``--debug`` is always added last.
    variants
        Command-specific variants (:meth:`OptionSpec.but`) replacing the option
        of the same name in ``groups``.
    subject
        The parameter naming the command's input, for the last-resort error
        message (default: the command's first parameter).

    The command declares its own parameters and a keyword-only ``opts``; it is
    called with ``opts`` a :class:`RunOptions`.
    """
    replaced = {v.name: v for v in variants}
    specs = [replaced.get(s.name, s) for s in _flatten(groups)]
    specs.append(DEBUG)
    names = [s.name for s in specs]
    if len(set(names)) != len(names):
        raise ValueError(f"an option is given twice: {names}")
    if set(replaced) - set(names):
        raise ValueError(f"variants of options not taken: {sorted(set(replaced) - set(names))}")

    def decorate(func: F) -> F:
        own = [
            p
            for p in inspect.signature(func, eval_str=True).parameters.values()
            if p.name != "opts"
        ]
        clash = {p.name for p in own} & set(names)
        if clash:
            raise ValueError(f"{func.__name__} declares shared options itself: {sorted(clash)}")
        first = subject or (own[0].name if own else None)

        @functools.wraps(func)
        def wrapper(**kwargs: Any) -> Any:
            shared = {name: kwargs.pop(name) for name in names if name in kwargs}
            label = _subject_label(kwargs.get(first) if first else None)
            with guarded(label, bool(shared.get("debug", False))):
                return func(**kwargs, opts=build_options(shared))

        parameters = own + [s.parameter() for s in specs]
        wrapper.__signature__ = inspect.Signature(parameters)  # type: ignore[attr-defined]
        wrapper.__annotations__ = {p.name: p.annotation for p in parameters}
        del wrapper.__wrapped__  # typer must read the new signature, not the function's
        return wrapper  # type: ignore[return-value]

    return decorate
