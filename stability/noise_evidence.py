"""Weighing the evidence of the noise identification across tau.

:func:`stability.noise.identify` decides the noise type at each averaging
factor on its own: the lag-1 autocorrelation where at least 30 points exist,
B1 and R(n) on a few averages below that [1]_. A single call is a statistical
estimate, and at long tau it rests on a few points. This module combines
the calls with the rest of the evidence in three steps:

1. **Weak calls are decided by the power-law model.** Where the call is
   uncertain (B1 or R(n) on a few averages, a lag-1 estimate within two
   standard errors of the boundary between two types, or a type carried from
   a neighbour), the type is the dominant term at that tau of the power-law
   model fitted to the whole Allan deviation curve (:mod:`stability.powerlaw`),
   which pools the evidence of every tau. Method ``"model"``.
2. **The types are made monotone in tau by a weighted fit.** In a sum of power
   laws S_y(f) = sum h_alpha f^alpha the term with the smaller exponent
   dominates ever more as f falls, so the dominant type never gets whiter at
   longer tau [2]_. The exponents are fitted by the monotone (non-increasing in
   tau) function nearest in weighted least squares, each tau weighted by its
   number of averages N/m (the pool-adjacent-violators algorithm [3]_,
   ``scipy.optimize.isotonic_regression``), and rounded to the nearest type
   (halves to the redder one). A call that says whiter than a better-supported
   call at a shorter tau is outvoted; one that says redder than the calls at
   longer taus is outvoted where those hold more averages together (on an
   octave grid one tau holds about as many as all longer taus together, so
   there a confident call stands). Method ``"monotone"`` where this changed a
   type. Weak calls, the usual misses, were decided by the model in step 1,
   which does not follow a single point. (The rule this replaces kept every
   shorter tau's type, so one miss toward red at any tau, however weak, locked
   every longer tau.)
3. **Boundaries are said.** Where the fitted model shows two terms of
   comparable size at a tau, or the label or the raw call there lies between
   the two largest terms (a mixture of white PM and white FM reads as flicker
   PM to the lag-1 method), or, without a model, a lag-1 estimate near a
   boundary, a note says "noise type at tau X s lies between A and B".

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST Special
   Publication 1065 (2008), section 5.6 (power-law noise identification).
.. [2] IEEE Std 1139-2008, *Definitions of physical quantities for fundamental
   frequency and time metrology: random instabilities* (the power-law model).
.. [3] R. E. Barlow, D. J. Bartholomew, J. M. Bremner, H. D. Brunk,
   *Statistical Inference under Order Restrictions*, Wiley (1972), chapter 1
   (the pool-adjacent-violators algorithm).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from .noise import NoiseResult
from .powerlaw import PowerLawModel, avar_kernel
from .table import NOISE_LABELS

__all__ = ["weigh_evidence", "model_shares", "MIXED_RATIO", "STRADDLE_SHARE"]

#: Two model terms count as comparable when the smaller is at least this
#: fraction of the larger at that tau.
MIXED_RATIO = 1.0 / 3.0

#: A label lying between the two largest model terms is noted when the smaller
#: of them holds at least this share of the model there.
STRADDLE_SHARE = 0.05

#: The model decides a weak call up to this multiple of its longest fitted tau.
_EXTRAPOLATE = 2.0


def model_shares(model: PowerLawModel, tau: float) -> dict[int, float]:
    """Share of each noise term in the model's Allan variance at tau (terms > 0 only)."""
    parts = {a: float(h * avar_kernel(a, tau, model.f_h)) for a, h in model.h.items() if h > 0.0}
    total = sum(parts.values())
    if not (total > 0.0 and math.isfinite(total)):
        return {}
    return {a: v / total for a, v in parts.items()}


def _usable(model: PowerLawModel | None) -> bool:
    return model is not None and any(h > 0.0 for h in model.h.values())


def _format_taus(taus: list[float]) -> str:
    return ", ".join(f"{t:g} s" for t in taus)


def _decide_weak(
    alpha: np.ndarray, method: list[str], noise: NoiseResult, taus: np.ndarray, model
) -> list[float]:
    """Step 1 (in place): the model's dominant term where the call is weak."""
    decided = []
    if not _usable(model):
        return decided
    limit = _EXTRAPOLATE * model.tau_range[1]
    for i in np.flatnonzero(noise.uncertain & np.isfinite(alpha)):
        if taus[i] > limit:
            continue
        shares = model_shares(model, float(taus[i]))
        if not shares:
            continue
        alpha[i] = float(max(shares, key=shares.get))
        method[i] = "model"
        decided.append(float(taus[i]))
    return decided


def _monotone(alpha: np.ndarray, method: list[str], weights: np.ndarray, taus) -> list[float]:
    """Step 2 (in place): the weighted non-increasing fit, rounded to types."""
    from scipy.optimize import isotonic_regression

    finite = np.flatnonzero(np.isfinite(alpha))
    if finite.size < 2 or np.all(np.diff(alpha[finite]) <= 0):
        return []
    fitted = isotonic_regression(alpha[finite], weights=weights[finite], increasing=False).x
    rounded = np.ceil(fitted - 0.5)  # halves go to the redder type
    changed = []
    for k, i in enumerate(finite):
        if rounded[k] != alpha[i]:
            alpha[i] = rounded[k]
            method[i] = "monotone"
            changed.append(float(taus[i]))
    return changed


def _boundary(label: int, shares: dict[int, float]) -> tuple[int, int] | None:
    """(whiter, redder) types the label lies between by the model, or None."""
    if len(shares) < 2:
        return None
    first, second = sorted(shares, key=shares.get, reverse=True)[:2]
    whiter, redder = max(first, second), min(first, second)
    if shares[second] >= STRADDLE_SHARE and redder < label < whiter:
        return whiter, redder
    if shares[second] >= MIXED_RATIO * shares[first] and label in (first, second):
        return whiter, redder
    return None


def _boundary_notes(
    alpha: np.ndarray, noise: NoiseResult, taus: np.ndarray, model: PowerLawModel | None
) -> list[str]:
    """Step 3: 'noise type at tau X s lies between A and B', grouped by (A, B)."""
    groups: dict[tuple[int, int], list[float]] = {}
    for i in np.flatnonzero(np.isfinite(alpha)):
        label = int(alpha[i])
        pair = None
        if _usable(model) and taus[i] <= _EXTRAPOLATE * model.tau_range[1]:
            shares = model_shares(model, float(taus[i]))
            pair = _boundary(label, shares)
            if pair is None and np.isfinite(noise.alpha[i]):
                # the raw call, replaced or not, may be what a mixture looks like
                pair = _boundary(int(noise.alpha[i]), shares)
        elif noise.uncertain[i] and np.isfinite(noise.neighbour[i]):
            other = int(noise.neighbour[i])
            pair = (max(label, other), min(label, other))
        if pair is not None:
            groups.setdefault(pair, []).append(float(taus[i]))
    return [
        f"noise type at tau {_format_taus(found)} lies between "
        f"{NOISE_LABELS[whiter]} and {NOISE_LABELS[redder]}"
        for (whiter, redder), found in groups.items()
    ]


def weigh_evidence(
    noise: NoiseResult, tau0: float, points: int, model: PowerLawModel | None
) -> NoiseResult:
    """A new identification with the evidence across tau weighed (module docstring).

    Parameters
    ----------
    noise
        The identification of :func:`stability.noise.identify`.
    tau0
        Sample interval in seconds (tau = m tau0 for the model).
    points
        Phase samples carrying information: the weight of averaging factor m
        in the monotone fit is points / m, its number of averages.
    model
        The power-law model fitted to the data's Allan deviation, or None
        (then weak calls keep their type and only the monotone fit applies).

    Returns
    -------
    NoiseResult
        The same averaging factors and estimates with new types, methods and
        notes appended (what was decided how, and the boundaries).
    """
    alpha = np.array(noise.alpha, dtype=float)
    method = list(noise.method)
    taus = np.asarray(noise.m, dtype=float) * tau0
    weights = np.maximum(points / np.asarray(noise.m, dtype=float), 1.0)
    notes = list(noise.notes)
    decided = _decide_weak(alpha, method, noise, taus, model)
    if decided:
        notes.append(
            f"at tau {_format_taus(decided)} the identification rested on a few averages "
            "or lay near a boundary; the dominant term of the fitted power-law model "
            "decided the type (method model)"
        )
    changed = _monotone(alpha, method, weights, taus)
    if changed:
        notes.append(
            f"at tau {_format_taus(changed)} the type was set by a fit of the types that "
            "never gets whiter at longer tau, each tau weighted by its number of averages "
            "(method monotone)"
        )
    notes.extend(_boundary_notes(alpha, noise, taus, model))
    labels = [NOISE_LABELS[int(a)] if np.isfinite(a) else "" for a in alpha]
    return dataclasses.replace(noise, alpha=alpha, noise=labels, method=method, notes=notes)
