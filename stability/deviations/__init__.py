"""Estimators of frequency and time stability, one module per family, and their registry."""

from .allan import adev, mdev, oadev, tdev
from .hadamard import hdev, ohdev
from .registry import STATISTICS, Statistic, get_statistic, register, statistic_names
from .time_error import mtie, mtie_many, tie_rms
from .total import totdev

__all__ = [
    "adev",
    "oadev",
    "mdev",
    "tdev",
    "hdev",
    "ohdev",
    "totdev",
    "mtie",
    "mtie_many",
    "tie_rms",
    "STATISTICS",
    "Statistic",
    "get_statistic",
    "register",
    "statistic_names",
]
