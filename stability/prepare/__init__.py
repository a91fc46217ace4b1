"""Preparation of a measurement before the statistics.

Averaging, drift estimation and removal, outlier screening and phase-step
detection, following the data-preprocessing practice of NIST SP 1065 [1]_;
:func:`prepare` runs them in order and returns a :class:`PreparationReport`.

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST Special
   Publication 1065 (2008), data preprocessing.
"""

from .average import average, largest_average_factor
from .drift import (
    DRIFT_MODELS,
    DriftFit,
    bisection_drift,
    fit_drift,
    mean_second_difference_drift,
    remove_drift,
    three_point_drift,
)
from .outliers import Outlier, OutlierReport, screen_outliers
from .pipeline import PreparationReport, prepare, require_variation
from .steps import PhaseStep, detect_phase_steps

__all__ = [
    "average",
    "largest_average_factor",
    "DRIFT_MODELS",
    "DriftFit",
    "fit_drift",
    "remove_drift",
    "three_point_drift",
    "mean_second_difference_drift",
    "bisection_drift",
    "Outlier",
    "OutlierReport",
    "screen_outliers",
    "PhaseStep",
    "detect_phase_steps",
    "PreparationReport",
    "prepare",
    "require_variation",
]
