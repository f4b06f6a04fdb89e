"""Multiple-testing control over a family of p-values.

* Holm (1979), "A simple sequentially rejective multiple test procedure", Scand. J. Statist.
  6:65–70: controls the family-wise error rate at ``alpha`` under any dependence.
* Šidák (1967), "Rectangular confidence regions for the means of multivariate normal distributions",
  J. Amer. Statist. Assoc. 62:626–633: the smallest of m independent p-values, ``1 - (1 - p_min)^m``.
* Bonferroni's inequality: ``min(1, m p_min)`` for the smallest of m p-values under any dependence
  (common practice).
* Benjamini & Hochberg (1995), "Controlling the false discovery rate", J. R. Statist. Soc. B
  57:289–300: controls the false discovery rate at ``q`` for independent (or positively
  regression dependent) p-values.

The rejection functions apply the step rules exactly as published (comparisons
``p_(i) <= alpha / (m - i + 1)`` and ``p_(i) <= i q / m``); the adjusted p-values are the usual
monotone versions, so ``rejected == (adjusted <= level)`` except for rounding at the boundary.
NaN raises :class:`ValueError`; an empty input gives an empty output.
"""

from __future__ import annotations

import math

import numpy as np

from .tails import clip_p

__all__ = ["holm", "holm_adjusted", "benjamini_hochberg", "benjamini_hochberg_adjusted", "sidak", "sidak_min",
           "sidak_log", "bonferroni"]


def sidak(p_min: float, m: int) -> float:
    """P(min of m independent uniforms <= p_min) = 1 - (1 - p_min)^m, computed without cancellation."""
    if m <= 0 or p_min >= 1.0:
        return 1.0
    return clip_p(-math.expm1(m * math.log1p(-p_min)))


def sidak_min(ps) -> float:
    """:func:`sidak` of the smallest of ``ps`` (1.0 for none)."""
    ps = list(ps)
    return sidak(min(ps), len(ps)) if ps else 1.0


def sidak_log(log_q: float, K: int) -> tuple[float, float]:
    """Šidák correction of the smallest of K independent tail probabilities, given ``ln q_min``.

    Returns ``(p, log10 p)`` with ``p = 1 - (1 - q)^K`` computed without cancellation; when ``q``
    underflows, ``log10 p = log10 K + log10 q`` (first order, exact in the limit)."""
    if log_q >= 0.0:
        return 1.0, 0.0
    if log_q < -700.0:
        lg = (math.log(K) + log_q) / math.log(10.0)
        return clip_p(10.0**lg), lg
    q = math.exp(log_q)
    p = -math.expm1(K * math.log1p(-q))
    if p <= 0.0:
        return clip_p(0.0), (math.log(K) + log_q) / math.log(10.0)
    return clip_p(p), math.log10(p)


def bonferroni(ps) -> float:
    """``min(1, m p_min)`` for the smallest of m p-values (1.0 for none)."""
    ps = list(ps)
    return clip_p(min(1.0, len(ps) * min(ps))) if ps else 1.0


def _pvals(pvals) -> np.ndarray:
    p = np.asarray(pvals, dtype=np.float64).ravel()
    if np.isnan(p).any():
        raise ValueError("p-values contain NaN")
    if p.size and (p.min() < 0.0 or p.max() > 1.0):
        raise ValueError("p-values outside [0, 1]")
    return p


def _level(x: float, name: str) -> float:
    v = float(x)
    if not 0.0 < v < 1.0:
        raise ValueError(f"{name} must lie in (0, 1), got {x}")
    return v


def holm(pvals, alpha: float) -> np.ndarray:
    """Holm's step-down procedure: boolean array, True where the hypothesis is rejected.

    Sort ascending; reject ``p_(1), p_(2), ...`` while ``p_(i) <= alpha / (m - i + 1)``;
    stop at the first failure.
    """
    p = _pvals(pvals)
    a = _level(alpha, "alpha")
    m = p.size
    out = np.zeros(m, dtype=bool)
    if m == 0:
        return out
    order = np.argsort(p, kind="stable")
    ok = p[order] <= a / (m - np.arange(m))
    n_rej = m if ok.all() else int(np.argmin(ok))  # index of the first failure
    out[order[:n_rej]] = True
    return out


def holm_adjusted(pvals) -> np.ndarray:
    """Holm-adjusted p-values: ``max_{j<=i} min(1, (m - j + 1) p_(j))`` in original order."""
    p = _pvals(pvals)
    m = p.size
    if m == 0:
        return p.copy()
    order = np.argsort(p, kind="stable")
    adj = np.maximum.accumulate(np.minimum(1.0, (m - np.arange(m)) * p[order]))
    out = np.empty(m)
    out[order] = adj
    return out


def benjamini_hochberg(pvals, q: float) -> np.ndarray:
    """Benjamini–Hochberg step-up procedure: boolean array of rejections at FDR level ``q``.

    Sort ascending; find the largest ``i`` with ``p_(i) <= i q / m``; reject ``p_(1..i)``.
    """
    p = _pvals(pvals)
    qq = _level(q, "q")
    m = p.size
    out = np.zeros(m, dtype=bool)
    if m == 0:
        return out
    order = np.argsort(p, kind="stable")
    ok = p[order] <= np.arange(1, m + 1) * qq / m
    if ok.any():
        last = int(np.flatnonzero(ok)[-1])
        out[order[: last + 1]] = True
    return out


def benjamini_hochberg_adjusted(pvals) -> np.ndarray:
    """BH-adjusted p-values (q-values): ``min_{j>=i} min(1, m p_(j) / j)`` in original order."""
    p = _pvals(pvals)
    m = p.size
    if m == 0:
        return p.copy()
    order = np.argsort(p, kind="stable")
    raw = p[order] * m / np.arange(1, m + 1)
    adj = np.minimum(1.0, np.minimum.accumulate(raw[::-1])[::-1])
    out = np.empty(m)
    out[order] = adj
    return out
