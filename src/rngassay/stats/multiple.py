"""Multiple-testing control over a family of p-values.

* Holm (1979), "A simple sequentially rejective multiple test procedure", Scand. J. Statist.
  6:65–70: controls the family-wise error rate at ``alpha`` under any dependence.
* Benjamini & Hochberg (1995), "Controlling the false discovery rate", J. R. Statist. Soc. B
  57:289–300: controls the false discovery rate at ``q`` for independent (or positively
  regression dependent) p-values.

The rejection functions apply the step rules exactly as published (comparisons
``p_(i) <= alpha / (m - i + 1)`` and ``p_(i) <= i q / m``); the adjusted p-values are the usual
monotone versions, so ``rejected == (adjusted <= level)`` except for rounding at the boundary.
NaN raises :class:`ValueError`; an empty input gives an empty output.
"""

from __future__ import annotations

import numpy as np

__all__ = ["holm", "holm_adjusted", "benjamini_hochberg", "benjamini_hochberg_adjusted"]


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
