"""Second-level tests: many first-level results of one check, taken together.

* Continuous p-values: under H0 they are i.i.d. U(0, 1); :func:`uniformity_of_pvalues` tests that
  with Anderson–Darling, and :func:`proportion_below` counts how many fell below a threshold.
* Discrete statistics are not turned into p-values first (their p-values are not uniform):
  their additive sufficient quantities are pooled and the pooled total is tested exactly —
  :func:`pool_poisson`, :func:`pool_chisquare`, :func:`pool_binomial`.  A sum of independent
  Poisson (binomial with common p, chi-square) variables is again Poisson (binomial, chi-square).

Every function returns right tail ``P(T >= t)`` and left tail ``P(T <= t)`` under H0.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from .ad import ad_uniform
from .tails import binomial_tails, chi2_tails, poisson_tails

__all__ = [
    "uniformity_of_pvalues",
    "proportion_below",
    "pool_poisson",
    "pool_chisquare",
    "pool_binomial",
]


def _pvals(p) -> np.ndarray:
    a = np.asarray(p, dtype=np.float64).ravel()
    if a.size == 0:
        raise ValueError("no p-values")
    if np.isnan(a).any():
        raise ValueError("p-values contain NaN")
    if a.min() < 0.0 or a.max() > 1.0:
        raise ValueError("p-values outside [0, 1]")
    return a


def uniformity_of_pvalues(p: np.ndarray) -> tuple[float, float]:
    """Anderson–Darling test that first-level p-values are i.i.d. U(0, 1): ``(A^2, p)``.

    H0: the first-level checks ran on independent data from a sound source and their
    statistics are continuous, so their p-values are uniform.  Anderson–Darling is used for
    every n >= 1 (it weights the tails, where a flawed source shows first); the p-value comes
    from :func:`rngassay.stats.ad.ad_pvalue`: exact for n = 1, absolute error <= 0.012 for
    n = 2 and <= 2e-3 for n = 3..4 (only near p ~ 0.9 — the bulk; tails are good), <= 4e-4 for
    n >= 5.  A p-value of 0 or 1 is clipped to 2^-53 / 1 - 2^-53, so a single p = 1e-300
    among many gives a large but finite A^2.  Do not feed p-values of discrete statistics.
    """
    a = _pvals(p)
    return ad_uniform(a)


def proportion_below(p: np.ndarray, threshold: float = 0.01) -> tuple[int, float, float]:
    """How many p-values fell strictly below ``threshold``: ``(count, P(X >= count), P(X <= count))``.

    H0: p-values i.i.d. U(0, 1), so ``X ~ Binomial(n, threshold)`` (exact tails).  The right
    tail flags too many small p-values; the left tail too few.
    """
    a = _pvals(p)
    t = float(threshold)
    if not 0.0 < t < 1.0:
        raise ValueError(f"threshold must lie in (0, 1), got {threshold}")
    count = int(np.count_nonzero(a < t))
    right, left = binomial_tails(count, a.size, t)
    return count, right, left


def _int_counts(x: Sequence[int], name: str) -> np.ndarray:
    a = np.asarray(x, dtype=np.float64).ravel()
    if a.size == 0:
        raise ValueError(f"{name}: empty")
    if not np.all(np.isfinite(a)) or np.any(a < 0) or np.any(a != np.floor(a)):
        raise ValueError(f"{name} must be non-negative integers")
    return a


def pool_poisson(observed: Sequence[int], mus: Sequence[float]) -> tuple[int, float, float, float]:
    """Pool independent Poisson counts: ``(total, mu_total, P(X >= total), P(X <= total))``.

    H0: ``observed[i] ~ Poisson(mus[i])`` independently, so the total is Poisson(sum mus).
    """
    k = _int_counts(observed, "observed")
    mu = np.asarray(mus, dtype=np.float64).ravel()
    if mu.shape != k.shape:
        raise ValueError(f"{k.size} counts but {mu.size} means")
    if not np.all(np.isfinite(mu)) or np.any(mu < 0):
        raise ValueError("Poisson means must be finite and >= 0")
    total = int(k.sum())
    mu_total = math.fsum(mu.tolist())
    right, left = poisson_tails(total, mu_total)
    return total, mu_total, right, left


def pool_chisquare(stats: Sequence[float], dfs: Sequence[float]) -> tuple[float, float, float, float]:
    """Pool independent chi-square statistics: ``(sum, df_sum, right, left)``.

    H0: ``stats[i] ~ chi2(dfs[i])`` independently, so the sum is chi2(sum dfs).
    """
    s = np.asarray(stats, dtype=np.float64).ravel()
    d = np.asarray(dfs, dtype=np.float64).ravel()
    if s.size == 0 or s.shape != d.shape:
        raise ValueError(f"{s.size} statistics but {d.size} degrees of freedom")
    if not np.all(np.isfinite(d)) or np.any(d <= 0):
        raise ValueError("degrees of freedom must be positive")
    if np.isnan(s).any() or np.any(s < 0):
        raise ValueError("chi-square statistics must be >= 0")
    total = math.fsum(s.tolist())
    df = math.fsum(d.tolist())
    right, left = chi2_tails(total, df)
    return total, df, right, left


def pool_binomial(ks: Sequence[int], ns: Sequence[int], p: float) -> tuple[int, int, float, float]:
    """Pool independent binomial counts with a common success probability.

    Returns ``(k_total, n_total, P(X >= k_total), P(X <= k_total))``.
    H0: ``ks[i] ~ Binomial(ns[i], p)`` independently, so the total is Binomial(sum ns, p).
    """
    k = _int_counts(ks, "ks")
    n = _int_counts(ns, "ns")
    if k.shape != n.shape:
        raise ValueError(f"{k.size} counts but {n.size} trial numbers")
    if np.any(k > n):
        raise ValueError("a count exceeds its number of trials")
    kt, nt = int(k.sum()), int(n.sum())
    right, left = binomial_tails(kt, nt, p)
    return kt, nt, right, left
