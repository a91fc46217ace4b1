"""The fleet table: one row per log, the population at each tau, and the ranking.

:func:`fleet_frame` turns the results of a fleet run into a pandas DataFrame
(the content of ``fleet.csv``): device, file, SHA-256, status and error, the
reading and preparation counts, offset and drift with their uncertainties,
the statistic with its interval and noise type at the key taus, the verdicts
and the ranking measures. :func:`population` gives the median and 10-90 %
band of the devices' curves at each tau; :func:`rank_devices` orders the
devices by how far they are from the limit (when judged) or from the
population.

Ranking measures
----------------
``limit_ratio``
    The largest ratio of the measured deviation to the specification's limit
    over the listed taus (above 1: over the limit).
``population_z``
    The largest robust z-score of the device's log10 deviation at any tau
    where at least five devices were measured: (log10 d - median) / (1.4826
    MAD), the median absolute deviation scaled to a standard deviation for
    normal data (common practice, e.g. NIST/SEMATECH e-Handbook of
    Statistical Methods, section 1.3.5.17). A positive value means less
    stable than the population.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
import pandas as pd

from .work import key_columns

__all__ = [
    "BASE_COLUMNS",
    "fleet_frame",
    "population",
    "rank_devices",
    "curves_of",
    "MIN_POPULATION",
]

#: The columns before the key-tau columns, in order.
BASE_COLUMNS = (
    "device",
    "file",
    "sha256",
    "status",
    "error",
    "readings",
    "tau0_s",
    "span_s",
    "gaps",
    "outliers_removed",
    "offset",
    "u_offset",
    "drift_per_day",
    "u_drift_per_day",
    "statistic",
)
_TAIL = ("noise", "verdict", "limit_ratio", "population_z", "seconds")
#: Devices that must be measured at a tau for the band and the z-scores there.
MIN_POPULATION = 5
_MAD_TO_SIGMA = 1.4826
_INT_COLUMNS = ("readings", "gaps", "outliers_removed")


def curves_of(results: Sequence[Mapping[str, Any]]) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """Device -> (tau, deviation) of the logs that finished."""
    out = {}
    for result in results:
        if result["status"] in ("ok", "skipped") and result["curve"]:
            pairs = np.asarray(result["curve"], dtype=float)
            out[str(result["device"])] = (pairs[:, 0], pairs[:, 1])
    return out


def _tau_key(tau: float) -> float:
    return float(f"{tau:.9g}")


def population(
    curves: Mapping[str, tuple[np.ndarray, np.ndarray]], minimum: int = 1
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """(tau, median, 10th percentile, 90th percentile) over the devices measured at each tau.

    Taus with fewer than ``minimum`` devices are left out; the percentiles use
    numpy's default (linear) interpolation.
    """
    at: dict[float, list[float]] = {}
    for tau, dev in curves.values():
        for t, d in zip(tau, dev, strict=True):
            if math.isfinite(d) and d > 0:
                at.setdefault(_tau_key(float(t)), []).append(float(d))
    taus = sorted(t for t, v in at.items() if len(v) >= max(1, minimum))
    med = np.array([np.median(at[t]) for t in taus])
    low = np.array([np.percentile(at[t], 10) for t in taus])
    high = np.array([np.percentile(at[t], 90) for t in taus])
    return np.array(taus, dtype=float), med, low, high


def _population_z(curves: Mapping[str, tuple[np.ndarray, np.ndarray]]) -> dict[str, float]:
    at: dict[float, dict[str, float]] = {}
    for name, (tau, dev) in curves.items():
        for t, d in zip(tau, dev, strict=True):
            if math.isfinite(d) and d > 0:
                at.setdefault(_tau_key(float(t)), {})[name] = math.log10(d)
    best: dict[str, float] = {}
    for values in at.values():
        if len(values) < MIN_POPULATION:
            continue
        logs = np.fromiter(values.values(), dtype=float)
        centre = float(np.median(logs))
        spread = _MAD_TO_SIGMA * float(np.median(np.abs(logs - centre)))
        if not spread > 0:
            continue
        for name, value in values.items():
            z = (value - centre) / spread
            best[name] = max(best.get(name, -math.inf), z)
    return best


def fleet_frame(
    results: Sequence[Mapping[str, Any]],
    statistic: str,
    key_taus: Sequence[float],
    judged: bool,
) -> pd.DataFrame:
    """The fleet table (one row per log, in the order given); see the module doc."""
    keys = key_columns(statistic, key_taus, judged)
    columns = [*BASE_COLUMNS, *keys, *_TAIL]
    z = _population_z(curves_of(results))
    rows = []
    for result in results:
        values = dict(result.get("row") or {})
        row: dict[str, Any] = {name: values.get(name) for name in columns}
        for name in ("device", "file", "sha256", "error", "seconds"):
            row[name] = result.get(name)
        row["status"] = "ok" if result["status"] == "skipped" else result["status"]
        row["statistic"] = statistic
        row["limit_ratio"] = values.get("worst_ratio", math.nan) if judged else math.nan
        row["population_z"] = z.get(str(result["device"]), math.nan)
        rows.append(row)
    frame = pd.DataFrame(rows, columns=columns)
    for name in columns:
        if name in _INT_COLUMNS:
            frame[name] = frame[name].astype("Int64")
        elif name.startswith(("noise", "verdict")) or name in (
            "device",
            "file",
            "sha256",
            "status",
            "error",
            "statistic",
        ):
            frame[name] = frame[name].fillna("").astype(str)
        else:
            frame[name] = pd.to_numeric(frame[name], errors="coerce").astype(float)
    if not judged:
        frame = frame.drop(columns=["verdict", "limit_ratio"])
    return frame


def rank_devices(frame: pd.DataFrame, count: int = 10) -> pd.DataFrame:
    """The devices furthest from the limit (when judged) or the population, worst first.

    Only logs that finished are ranked; a device with no ranking measure is
    left out.
    """
    done = frame[frame["status"] == "ok"]
    by = "limit_ratio" if "limit_ratio" in frame and done["limit_ratio"].notna().any() else None
    by = by or "population_z"
    shown = [c for c in ("device", "limit_ratio", "population_z", "verdict", "noise") if c in frame]
    ranked = done[done[by].notna()].sort_values(by, ascending=False, kind="stable")
    return ranked[shown].head(count).reset_index(drop=True)
