"""Poker (partition) test (Knuth §3.3.2 D).

The uniforms become integers Y = floor(d u) in [0, d); the n // k disjoint hands of k successive
integers are classified by r, the number of distinct values in the hand.  Under H0 (i.i.d.
U[0, 1), hence i.i.d. uniform Y)

    P(r) = d (d−1) … (d−r+1) / d^k · S(k, r),   1 <= r <= min(k, d),

with S(k, r) the Stirling numbers of the second kind.  Pearson chi-square over the classes, the
improbable small-r classes pooled upwards (``rngassay.stats.chisquare_gof``, expected >= 5), as
Knuth recommends lumping them.  Both tails.
"""

from __future__ import annotations

from fractions import Fraction
from functools import lru_cache

import numpy as np
from numba import njit

from rngassay.checks.registry import CheckSpec, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError

from .frequency import KNUTH, gof, need, result_name, small_list, uniforms


@lru_cache(maxsize=None)
def stirling2_row(k: int) -> tuple[int, ...]:
    """(S(k, 0), ..., S(k, k)): Stirling numbers of the second kind, exact integers, by
    S(k, r) = r S(k-1, r) + S(k-1, r-1)."""
    if k == 0:
        return (1,)
    prev = stirling2_row(k - 1)
    row = [0] * (k + 1)
    for r in range(1, k + 1):
        row[r] = (r * prev[r] if r < k else 0) + prev[r - 1]
    return tuple(row)


def stirling2(k: int, r: int) -> int:
    """S(k, r), exact."""
    if r < 0 or r > k:
        return 0
    return stirling2_row(k)[r]


@lru_cache(maxsize=256)
def poker_probabilities_exact(d: int, k: int) -> tuple[Fraction, ...]:
    """(P(r = 1), ..., P(r = k)) as exact fractions (zero for r > d)."""
    out = []
    for r in range(1, k + 1):
        falling = 1
        for j in range(r):
            falling *= d - j  # becomes 0 for r > d
        out.append(Fraction(falling * stirling2(k, r), d**k))
    return tuple(out)


def poker_probabilities(d: int, k: int) -> np.ndarray:
    """P(r distinct values among k i.i.d. uniform values in [0, d)), r = 1..k (Knuth §3.3.2 D)."""
    return np.array([float(x) for x in poker_probabilities_exact(int(d), int(k))], dtype=np.float64)


@njit(cache=True)
def _poker_counts(u, d, k):
    m = u.size // k
    mark = np.full(d, -1, dtype=np.int64)
    counts = np.zeros(k + 1, dtype=np.int64)
    fd = float(d)
    for h in range(m):
        r = 0
        base = h * k
        for j in range(k):
            y = int(u[base + j] * fd)
            if y >= d:
                y = d - 1
            elif y < 0:
                y = 0
            if mark[y] != h:
                mark[y] = h
                r += 1
        counts[r] += 1
    return counts[1:]


def check_poker(data: np.ndarray, d: int = 8, k: int = 5, n: int | None = None) -> CheckResult:
    """Poker (partition) test: distinct values in hands of k integers floor(d u) (Knuth §3.3.2 D).

    H0: the uniforms are i.i.d. U[0, 1); the count of distinct values per hand follows
    :func:`poker_probabilities`.  Pearson chi-square (small classes pooled); both tails.
    """
    d, k = int(d), int(k)
    if not 2 <= d <= 1 << 20 or not 2 <= k <= 64:
        raise InputError(f"poker: need 2 <= d <= 2^20 and 2 <= k <= 64, got d={d} k={k}")
    u = uniforms(data, n, "poker")
    need(u.size // k, 1, f"poker k={k}")
    counts = _poker_counts(u, d, k)
    probs = poker_probabilities(d, k)
    m = u.size // k
    res = gof(counts, probs, f"poker d={d} k={k}")
    return CheckResult(
        name=result_name("poker", {"d": d, "k": k}), statistic=res.statistic, p_value=res.p_value,
        p_left=res.p_left, null=f"chi2(df={res.df})", n=m * k,
        details={"hands": m, "counts_by_distinct": small_list(counts), "pooled_cells": len(res.pooled_bins)},
        pooled={"counts": counts, "probs": probs},
    )


# --------------------------------------------------------------------------- registry

#: (d, k) pairs the default parameters use: Knuth's five-card hands on eight values, and
#: eight-card hands on 32 values.
DEFAULT_HANDS = ((8, 5), (32, 8))


def _poker_defaults(n: int) -> list[dict]:
    """The DEFAULT_HANDS whose hands, after pooling to >= 5 expected, still leave >= 3 classes
    (checked with the exact probabilities)."""
    out = []
    for d, k in DEFAULT_HANDS:
        m = n // k
        e = m * poker_probabilities(d, k)
        if m >= 100 and np.count_nonzero(e >= 5.0) >= 3:
            out.append({"n": n, "d": d, "k": k})
    return out


register(CheckSpec(
    key="poker", family="classic", windows=("reversed",), title="poker (partition) test", view="uniforms", kind="continuous",
    func=check_poker, values_needed=lambda p: int(p["n"]), default_params=_poker_defaults,
    both_tails=True, source=f"{KNUTH} D",
    notes="(d, k) = (8, 5) and (32, 8)",
))
