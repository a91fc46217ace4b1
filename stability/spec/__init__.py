"""Specification masks, device information and confidence-aware verdicts.

A *specification* is an upper limit on one statistic at listed averaging
times, read from a TOML file (:func:`load_spec`); an *information file*
(:func:`load_info`) identifies the device, the reference it was measured
against (which may state its own stability), the instrument, the lab and the
procedure. :func:`judge` compares a results table with a specification and
gives a verdict at each tau from the estimate's confidence interval (guarded
acceptance, JCGM 106:2012 section 8), flagging taus where the reference limits
the measurement (NIST SP 1065 section 5.13).

The package has three parts:

:mod:`stability.spec.model`
    the data types (:class:`Spec`, :class:`Reference`, :class:`Info`,
    :class:`Check`, :class:`Judgement`) and the verdicts (:class:`Verdict`);
:mod:`stability.spec.reading`
    reading and checking the specification and information files;
:mod:`stability.spec.judging`
    the verdict rules, the interpolation and the reference contribution.
"""

from __future__ import annotations

from .judging import judge, overall_verdict, reference_contribution, verdict_for
from .model import REFERENCE_RATIO, VERDICTS, Check, Info, Judgement, Reference, Spec, Verdict
from .reading import load_info, load_spec, parse_info, parse_spec

__all__ = [
    "Verdict",
    "VERDICTS",
    "REFERENCE_RATIO",
    "Spec",
    "Reference",
    "Info",
    "Check",
    "Judgement",
    "load_spec",
    "load_info",
    "parse_spec",
    "parse_info",
    "judge",
    "reference_contribution",
    "verdict_for",
    "overall_verdict",
]
