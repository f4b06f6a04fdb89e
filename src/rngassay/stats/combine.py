"""Combining p-values of several checks into one, valid under dependence.

* :func:`cauchy_combination` — Liu & Xie (2020), "Cauchy combination test: a powerful test with
  analytic p-value calculation under arbitrary dependency structures", JASA 115:393–402.
  ``T = sum w_i tan((1/2 - p_i) pi)``, p = ``P(C >= T)`` for a standard Cauchy C.  Exact when
  the p-values are independent and uniform (a weighted sum of independent standard Cauchy
  variables with weights summing to 1 is standard Cauchy); approximately valid under arbitrary
  dependence, increasingly so in the tail.
* :func:`harmonic_mean_p` — Wilson (2019), "The harmonic mean p-value for combining dependent
  tests", PNAS 116:1195–1200, the asymptotically exact version via the Landau distribution.

Both are meant for continuous p-values (uniform under H0).  Input p-values must lie in [0, 1];
a p-value of 0 is treated as ``P_FLOOR``.  NaN raises :class:`ValueError`.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import stats

from .tails import P_FLOOR, clip_p

__all__ = ["cauchy_combination", "harmonic_mean_p", "harmonic_mean", "CAUCHY_P_MAX"]

#: p-values equal to 1 enter the Cauchy combination as this value (the largest double below 1).
CAUCHY_P_MAX = 1.0 - 2.0**-53

#: Location of 1/HMP for equal weights is log(L) + _LANDAU_SHIFT, scale pi/2 (Wilson 2019):
#: 1 - Euler's gamma + log(pi/2) = 0.8744 (derived from the stable-law limit of sum 1/U_i).
_LANDAU_SHIFT = 1.0 - float(np.euler_gamma) + math.log(math.pi / 2.0)


def _prep(pvals, weights) -> tuple[np.ndarray, np.ndarray]:
    p = np.asarray(pvals, dtype=np.float64).ravel()
    if p.size == 0:
        raise ValueError("no p-values to combine")
    if np.isnan(p).any():
        raise ValueError("p-values contain NaN")
    if p.min() < 0.0 or p.max() > 1.0:
        raise ValueError("p-values outside [0, 1]")
    if weights is None:
        w = np.full(p.size, 1.0 / p.size)
    else:
        w = np.asarray(weights, dtype=np.float64).ravel()
        if w.shape != p.shape:
            raise ValueError(f"{p.size} p-values but {w.size} weights")
        if not np.all(np.isfinite(w)) or np.any(w < 0) or not w.sum() > 0:
            raise ValueError("weights must be finite, >= 0 and not all 0")
        w = w / w.sum()
    return np.maximum(p, P_FLOOR), w


def cauchy_combination(pvals, weights=None) -> float:
    """Cauchy combination test (Liu & Xie 2020): one p-value from many, valid under dependence.

    H0: every p-value is U(0, 1) (any dependence).  Weights are normalised to sum to 1
    (default equal).  Numerics: ``tan((1/2 - p) pi)`` is evaluated as ``1 / tan(pi p)`` for
    p <= 1/2 and ``-1 / tan(pi (1 - p))`` above — the same number without the cancellation in
    ``1/2 - p`` (for tiny p it is ``1 / (pi p)`` to full precision).  The tail is
    ``P(C >= T) = arctan(1/T) / pi`` for T > 0 and ``1/2 + arctan(-T) / pi`` otherwise, so a
    huge T gives a tiny p, not 0.

    A p-value of exactly 1 is replaced by ``1 - 2^-53`` (otherwise T = -inf and the result is 1
    whatever the other p-values say); such a value still contributes about ``-2.9e15 w`` to T and
    masks moderate evidence elsewhere.  This is the method's nature: feed it continuous p-values.
    """
    p, w = _prep(pvals, weights)
    p = np.minimum(p, CAUCHY_P_MAX)
    low = p <= 0.5
    terms = np.empty_like(p)
    terms[low] = 1.0 / np.tan(math.pi * p[low])
    terms[~low] = -1.0 / np.tan(math.pi * (1.0 - p[~low]))
    t = float(np.sum(w * terms))
    if math.isnan(t):  # cannot happen with finite terms; guard anyway
        raise ArithmeticError("Cauchy combination statistic is NaN")
    if t > 0:
        res = math.atan(1.0 / t) / math.pi
    else:
        res = 0.5 + math.atan(-t) / math.pi
    return clip_p(res)


def harmonic_mean(pvals, weights=None) -> float:
    """Weighted harmonic mean ``1 / sum(w_i / p_i)`` of the p-values (weights normalised to 1)."""
    p, w = _prep(pvals, weights)
    return 1.0 / float(np.sum(w / p))


def harmonic_mean_p(pvals, weights=None) -> float:
    """Harmonic mean p-value, asymptotically exact version (Wilson 2019).

    H0: every p-value is U(0, 1) (any dependence for the bound to hold approximately).  With
    weights normalised to 1, ``1/HMP = sum w_i / p_i``; for independent uniforms this sum is in
    the domain of attraction of the Landau (stable, alpha = 1, beta = 1) law, and
    p = ``P(Landau(mu, pi/2) >= 1/HMP)`` with ``mu = 1 - gamma + log(pi/2) + H(w)``, where
    ``H(w) = -sum w_i log w_i`` (``= log L`` for equal weights, giving Wilson's
    ``mu = log L + 0.874``).  The Landau tail is ``scipy.stats.landau.sf`` (loc-scale on the
    standard Landau density).  The approximation is exact as L -> infinity and in the tail
    (p -> 0); for few p-values in the bulk it is approximate (for a single p-value it gives
    about p).  Result clipped into [P_FLOOR, 1].
    """
    p, w = _prep(pvals, weights)
    s = float(np.sum(w / p))
    nz = w[w > 0]
    entropy = float(-np.sum(nz * np.log(nz)))
    mu = _LANDAU_SHIFT + entropy
    res = float(stats.landau.sf(s, loc=mu, scale=math.pi / 2.0))
    return clip_p(res)
