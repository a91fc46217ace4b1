"""Time-error masks: limits on MTIE and TDEV over tau, read from TOML files.

A mask file (our own format) names a clock class and holds one or more
curves, each a limit on one statistic (``mtie`` or ``tdev``) made of tau
segments; within a segment the limit is a constant or ``a + b * tau**k``
(tau in seconds, the limit in the curve's unit). A segment covers
``from < tau <= to`` (the first also its ``from``), as the tables of the ITU-T
clock Recommendations are written; ``to = inf`` leaves it open. An optional
``[max_abs_te]`` table limits max|TE|::

    name = "my-clock"
    title = "House limit for the lab's grandmaster"
    standard = "house rule HR-12"

    [[curve]]
    statistic = "mtie"
    unit = "ns"
    source = "house rule HR-12, table 2"
    segment = [
        { from = 0.1, to = 100, limit = 40 },
        { from = 100, to = 10000, a = 20, b = 0.2, k = 1 },
    ]

The bundled masks (``mask_files/*.toml``) carry figures recalled from the
ITU-T Recommendations, not read from them: each says so in its ``source``
and ``recalled`` fields. Check them against your copy of the Recommendation.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import SpecError
from ..units import TIME_UNITS

__all__ = [
    "MaskSegment",
    "MaskCurve",
    "Mask",
    "MASK_STATISTICS",
    "bundled_mask_names",
    "load_mask",
    "read_mask_text",
]

#: The statistics a mask curve may limit.
MASK_STATISTICS = ("mtie", "tdev")

_FILE_KEYS = {"name", "title", "standard", "recalled", "note", "curve", "max_abs_te"}
_CURVE_KEYS = {"statistic", "unit", "source", "segment"}
_SEGMENT_KEYS = {"from", "to", "limit", "a", "b", "k"}
_TE_KEYS = {"limit", "unit", "source"}


@dataclass(frozen=True)
class MaskSegment:
    """``from < tau <= to``: limit = a + b * tau**k seconds (a constant when b = 0)."""

    tau_from: float
    tau_to: float
    a: float
    b: float = 0.0
    k: float = 0.0

    def limit(self, tau: np.ndarray | float) -> np.ndarray:
        tau = np.asarray(tau, dtype=np.float64)
        return self.a + self.b * tau**self.k


@dataclass(frozen=True)
class MaskCurve:
    """A limit on one statistic over tau, in seconds."""

    statistic: str
    segments: tuple[MaskSegment, ...]
    unit: str
    source: str

    @property
    def tau_range(self) -> tuple[float, float]:
        return self.segments[0].tau_from, self.segments[-1].tau_to

    def limit_at(self, tau: Any) -> np.ndarray:
        """The limit in seconds at each tau (NaN outside the curve's taus)."""
        tau = np.atleast_1d(np.asarray(tau, dtype=np.float64))
        out = np.full(tau.shape, np.nan)
        # later segments first, so a boundary tau takes the segment it closes
        for i, seg in reversed(list(enumerate(self.segments))):
            lower = tau >= seg.tau_from if i == 0 else tau > seg.tau_from
            inside = lower & (tau <= seg.tau_to)
            out[inside] = seg.limit(tau[inside])
        return out

    def to_dict(self) -> dict[str, Any]:
        scale = TIME_UNITS[self.unit]
        return {
            "statistic": self.statistic,
            "unit": self.unit,
            "source": self.source,
            "segments": [
                {
                    "from_s": s.tau_from,
                    "to_s": s.tau_to if math.isfinite(s.tau_to) else None,
                    "a": s.a / scale,
                    "b": s.b / scale,
                    "k": s.k,
                }
                for s in self.segments
            ],
        }


@dataclass(frozen=True)
class Mask:
    """A clock class's time-error limits."""

    name: str
    title: str
    standard: str
    curves: tuple[MaskCurve, ...]
    recalled: str = ""  # how the figures were obtained, when not read from the source
    note: str = ""
    max_abs_te: float | None = None  # seconds
    max_abs_te_source: str = ""
    path: str | None = None

    def curve(self, statistic: str) -> MaskCurve | None:
        for c in self.curves:
            if c.statistic == statistic:
                return c
        return None

    @property
    def statistics(self) -> tuple[str, ...]:
        return tuple(c.statistic for c in self.curves)

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "title": self.title,
            "standard": self.standard,
            "recalled": self.recalled,
            "note": self.note,
            "max_abs_te_s": self.max_abs_te,
            "max_abs_te_source": self.max_abs_te_source,
            "curves": [c.to_dict() for c in self.curves],
            "path": self.path,
        }


# ------------------------------------------------------------------------ reading
def _number(value: Any, what: str, where: str, *, inf_ok: bool = False) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise SpecError(f"{what} must be a number, got {value!r}", path=where)
    out = float(value)
    if math.isnan(out) or (math.isinf(out) and not inf_ok):
        raise SpecError(f"{what} must be a finite number, got {value!r}", path=where)
    return out


def _text(table: dict[str, Any], key: str, where: str, default: str | None = None) -> str:
    value = table.get(key, default)
    if not isinstance(value, str) or (default is None and not value.strip()):
        raise SpecError(f"{key} must be a text, got {value!r}", path=where)
    return value.strip()


def _unknown(table: dict[str, Any], known: set[str], what: str, where: str) -> None:
    extra = sorted(set(table) - known)
    if extra:
        raise SpecError(
            f"unknown key(s) {', '.join(extra)} in {what}",
            path=where,
            hint=f"a {what} takes {', '.join(sorted(known))}",
        )


def _unit(value: Any, what: str, where: str) -> tuple[str, float]:
    unit = str(value).strip()
    if unit not in TIME_UNITS or TIME_UNITS[unit] > 1.0:
        raise SpecError(f"{what} unit must be s, ms, us, ns or ps, got {value!r}", path=where)
    return unit, TIME_UNITS[unit]


def _segment(raw: Any, scale: float, what: str, where: str) -> MaskSegment:
    if not isinstance(raw, dict):
        raise SpecError(f"{what} must be a table of from, to and a limit", path=where)
    _unknown(raw, _SEGMENT_KEYS, "mask segment", where)
    lo = _number(raw.get("from"), f"{what} from", where)
    hi = _number(raw.get("to"), f"{what} to", where, inf_ok=True)
    if not (0 < lo < hi):
        raise SpecError(f"{what} needs 0 < from < to, got from {lo:g}, to {hi:g}", path=where)
    if "limit" in raw:
        if {"a", "b", "k"} & set(raw):
            raise SpecError(f"{what} gives both limit and a, b, k: give one", path=where)
        return MaskSegment(lo, hi, _number(raw["limit"], f"{what} limit", where) * scale)
    a = _number(raw.get("a", 0.0), f"{what} a", where)
    b = _number(raw.get("b", 0.0), f"{what} b", where)
    k = _number(raw.get("k", 0.0), f"{what} k", where)
    seg = MaskSegment(lo, hi, a * scale, b * scale, k)
    low_end = float(seg.limit(lo))
    high_end = float(seg.limit(hi)) if math.isfinite(hi) else (b * math.inf if k > 0 else low_end)
    if not (low_end > 0 and high_end > 0):
        raise SpecError(f"{what}: the limit must be positive over the whole segment", path=where)
    return seg


def _curve(raw: Any, i: int, where: str) -> MaskCurve:
    what = f"curve {i + 1}"
    if not isinstance(raw, dict):
        raise SpecError(f"{what} must be a table", path=where)
    _unknown(raw, _CURVE_KEYS, "mask curve", where)
    statistic = _text(raw, "statistic", where).lower()
    if statistic not in MASK_STATISTICS:
        raise SpecError(
            f"{what}: statistic must be mtie or tdev, got {raw.get('statistic')!r}", path=where
        )
    unit, scale = _unit(raw.get("unit", "s"), what, where)
    segments = raw.get("segment")
    if not isinstance(segments, list) or not segments:
        raise SpecError(f"{what} needs a list of segments", path=where)
    segs = tuple(
        _segment(s, scale, f"{what} segment {j + 1}", where) for j, s in enumerate(segments)
    )
    for j in range(1, len(segs)):
        if segs[j].tau_from != segs[j - 1].tau_to:
            raise SpecError(
                f"{what}: segment {j + 1} starts at {segs[j].tau_from:g} s but segment {j} "
                f"ends at {segs[j - 1].tau_to:g} s",
                path=where,
                hint="segments follow each other without gaps or overlaps",
            )
    return MaskCurve(statistic, segs, unit, _text(raw, "source", where, default=""))


def read_mask_text(text: str, where: str) -> Mask:
    """A :class:`Mask` from the text of a mask file; ``where`` names it in errors."""
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise SpecError(f"not a valid TOML mask file: {exc}", path=where) from None
    _unknown(raw, _FILE_KEYS, "mask file", where)
    curves_raw = raw.get("curve")
    if not isinstance(curves_raw, list) or not curves_raw:
        raise SpecError("a mask file needs at least one [[curve]]", path=where)
    curves = tuple(_curve(c, i, where) for i, c in enumerate(curves_raw))
    stats = [c.statistic for c in curves]
    if len(set(stats)) != len(stats):
        raise SpecError("a mask file holds at most one curve per statistic", path=where)
    te_limit, te_source = None, ""
    if "max_abs_te" in raw:
        te = raw["max_abs_te"]
        if not isinstance(te, dict):
            raise SpecError("max_abs_te must be a table of limit and unit", path=where)
        _unknown(te, _TE_KEYS, "max_abs_te table", where)
        _, scale = _unit(te.get("unit", "s"), "max_abs_te", where)
        te_limit = _number(te.get("limit"), "max_abs_te limit", where) * scale
        if te_limit <= 0:
            raise SpecError("max_abs_te limit must be positive", path=where)
        te_source = _text(te, "source", where, default="")
    return Mask(
        name=_text(raw, "name", where),
        title=_text(raw, "title", where, default=""),
        standard=_text(raw, "standard", where, default=""),
        curves=curves,
        recalled=_text(raw, "recalled", where, default=""),
        note=_text(raw, "note", where, default=""),
        max_abs_te=te_limit,
        max_abs_te_source=te_source,
        path=where,
    )


def _bundled() -> Any:
    return resources.files("stability.timing").joinpath("mask_files")


def bundled_mask_names() -> list[str]:
    """Names of the bundled masks, sorted."""
    return sorted(p.name[:-5] for p in _bundled().iterdir() if p.name.endswith(".toml"))


def load_mask(name_or_path: str | Path) -> Mask:
    """A bundled mask by name, or a mask file by path.

    Raises
    ------
    SpecError
        An unknown name (the bundled names are listed) or a malformed file.
    """
    text = str(name_or_path).strip()
    key = text.lower()
    if key in bundled_mask_names() and not Path(text).is_file():
        ref = _bundled().joinpath(f"{key}.toml")
        return read_mask_text(ref.read_text(encoding="utf-8"), f"bundled mask {key}")
    path = Path(text)
    if not path.is_file():
        raise SpecError(
            f"no bundled mask and no file named {text!r}",
            hint=f"give a mask file or one of {', '.join(bundled_mask_names())}",
        )
    try:
        content = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise SpecError(f"cannot read the mask file: {exc}", path=str(path)) from None
    return read_mask_text(content, str(path))
