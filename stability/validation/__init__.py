"""Validation of the installed tool: the evidence a laboratory files for its software.

``stability.validate(out)`` (and ``stability validate --out DIR``) runs, from the
installed package alone, a fixed set of checks against sources outside the
project and writes ``validation.pdf`` and ``validation.json``:

``published``     the published data sets (NBS14, the 1000-point set of NIST SP 1065),
                  every statistic with published values, to the last published digit
``closed_forms``  the power-law noise model and the phase-noise conversion against
                  their closed forms (SP 1065, TN 1337, IEEE Std 1139)
``coverage``      a seeded Monte-Carlo run of the confidence intervals, judged by an
                  exact binomial test
``reading``       invented logs in several dialects read to values known from their making
``environment``   version, source hash of the installed files, libraries, platform
``report``        the run, the result, validation.json; ``pages`` the PDF pages
``shipped``       the package data the checks compare against (``data/``)

References
----------
1. ISO/IEC 17025:2017, *General requirements for the competence of testing and
   calibration laboratories*, 7.11.2 (software validated for its use before it is
   introduced; common practice in assessments).
2. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   section 12 (test data sets for validating frequency-stability software).
"""

from .checks import BASES, GROUPS, Check, digit_comparison
from .coverage import (
    DEFAULT_PLAN,
    THOROUGH_PLAN,
    CoveragePlan,
    check_coverage_stats,
    coverage_statistics,
)
from .report import (
    CAUTION,
    DEFAULT_STATS,
    VALIDATION_NAMES,
    ValidationResult,
    run_checks,
    step_count,
    validate,
    validation_json,
)
from .shipped import data_folder, known_logs, published_set, published_sets

__all__ = [
    "validate",
    "run_checks",
    "step_count",
    "ValidationResult",
    "validation_json",
    "Check",
    "GROUPS",
    "BASES",
    "CAUTION",
    "DEFAULT_STATS",
    "VALIDATION_NAMES",
    "CoveragePlan",
    "DEFAULT_PLAN",
    "THOROUGH_PLAN",
    "coverage_statistics",
    "check_coverage_stats",
    "digit_comparison",
    "data_folder",
    "published_sets",
    "published_set",
    "known_logs",
]
