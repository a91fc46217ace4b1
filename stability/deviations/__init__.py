"""Estimators of frequency and time stability, one module per family, and their registry."""

from .allan import adev, mdev, oadev, tdev
from .hadamard import hdev, ohdev
from .parabolic import pdev
from .registry import (
    STATISTICS,
    Statistic,
    bias_factor,
    edf_for,
    edf_many,
    get_statistic,
    register,
    statistic_names,
)
from .theo import theo1, theobr, theoh
from .time_error import mtie, mtie_many, tie_rms
from .total import htot, mtot, totdev, ttot

__all__ = [
    "adev",
    "oadev",
    "mdev",
    "tdev",
    "hdev",
    "ohdev",
    "totdev",
    "mtot",
    "ttot",
    "htot",
    "theo1",
    "theobr",
    "theoh",
    "pdev",
    "mtie",
    "mtie_many",
    "tie_rms",
    "STATISTICS",
    "Statistic",
    "get_statistic",
    "register",
    "statistic_names",
    "edf_for",
    "edf_many",
    "bias_factor",
]
