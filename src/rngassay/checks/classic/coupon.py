"""Coupon-collector test (Knuth §3.3.2 E).

The uniforms become integers Y = floor(d u) in [0, d); the sequence is cut into successive
segments, each ending as soon as it contains all d values.  Under H0 (i.i.d. U[0, 1)) the
segment lengths r are i.i.d. with

    q_r = d! / d^r · S(r−1, d−1)              for d <= r < t,
    q_t = P(r >= t) = 1 − d! / d^(t−1) · S(t−1, d),

S the Stirling numbers of the second kind (Knuth §3.3.2 E).  The probabilities are computed in
exact rational arithmetic, so the tail class has no cancellation.  Pearson chi-square over the
t − d + 1 classes, small expected classes pooled (``rngassay.stats.chisquare_gof``); both tails.
The unfinished segment at the end of the data is dropped.
"""

from __future__ import annotations

from fractions import Fraction
from functools import lru_cache
from math import factorial

import numpy as np
from numba import njit

from rngassay.checks.registry import CheckSpec, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError

from .frequency import KNUTH, MIN_EXPECTED_DEFAULT, equiprobable_chi2, gof, need, result_name, small_list, uniforms
from .poker import stirling2

#: Most length classes the default parameters use (t - d <= this).
MAX_DEFAULT_CLASSES = 200


@lru_cache(maxsize=64)
def coupon_probabilities_exact(d: int, t: int) -> tuple[Fraction, ...]:
    """(q_d, ..., q_{t-1}, q_t) exactly; q_t is P(length >= t)."""
    if d < 2 or t <= d:
        raise ValueError(f"coupon probabilities need d >= 2 and t > d, got d={d}, t={t}")
    fd = factorial(d)
    out = [Fraction(fd * stirling2(r - 1, d - 1), d**r) for r in range(d, t)]
    out.append(1 - Fraction(fd * stirling2(t - 1, d), d ** (t - 1)))
    return tuple(out)


def coupon_probabilities(d: int, t: int) -> np.ndarray:
    """Segment-length probabilities for r = d..t-1 and the class r >= t (Knuth §3.3.2 E)."""
    return np.array([float(x) for x in coupon_probabilities_exact(int(d), int(t))], dtype=np.float64)


@njit(cache=True)
def _coupon_counts(u, d, t):
    counts = np.zeros(t - d + 1, dtype=np.int64)
    mark = np.full(d, -1, dtype=np.int64)
    seg = 0
    seen = 0
    r = 0
    fd = float(d)
    for i in range(u.size):
        y = int(u[i] * fd)
        if y >= d:
            y = d - 1
        elif y < 0:
            y = 0
        r += 1
        if mark[y] != seg:
            mark[y] = seg
            seen += 1
            if seen == d:
                counts[(r if r < t else t) - d] += 1
                seg += 1
                seen = 0
                r = 0
    return counts, r


def check_coupon(data: np.ndarray, d: int = 8, t: int = 40, n: int | None = None) -> CheckResult:
    """Coupon-collector test on the integers floor(d u) (Knuth §3.3.2 E).

    H0: the uniforms are i.i.d. U[0, 1); lengths of the segments needed to see all d values
    follow :func:`coupon_probabilities`.  Pearson chi-square over lengths d..t-1 and >= t
    (small classes pooled); both tails.
    """
    d, t = int(d), int(t)
    if not 2 <= d <= 4096 or t <= d or t - d > 10_000:
        raise InputError(f"coupon collector: need 2 <= d <= 4096 and d < t <= d + 10000, got d={d} t={t}")
    u = uniforms(data, n, "coupon collector")
    need(u.size, d, "coupon collector")
    counts, tail = _coupon_counts(u, d, t)
    probs = coupon_probabilities(d, t)
    try:
        res = gof(counts, probs, f"coupon collector d={d} t={t}")
    except InputError:
        # too few complete segments for a chi-square (some values rarely or never appear):
        # judge the frequencies of the d values themselves instead
        cells = np.bincount(np.minimum((u * d).astype(np.int64), d - 1), minlength=d)
        x2, df, right, left = equiprobable_chi2(cells)
        return CheckResult(
            name=result_name("coupon collector", {"d": d, "t": t}), statistic=x2, p_value=right, p_left=left,
            null=f"chi2(df={df}) on value frequencies (too few segments for the coupon chi-square)",
            n=int(u.size), details={"segments": int(counts.sum()), "fallback": "value frequencies"},
            pooled={"counts": cells},
        )
    return CheckResult(
        name=result_name("coupon collector", {"d": d, "t": t}), statistic=res.statistic,
        p_value=res.p_value, p_left=res.p_left, null=f"chi2(df={res.df})", n=int(u.size),
        details={"segments": int(counts.sum()), "unfinished_segment": int(tail),
                 "counts": small_list(counts), "pooled_cells": len(res.pooled_bins)},
        pooled={"counts": counts, "probs": probs},
    )


# --------------------------------------------------------------------------- registry

DEFAULT_D = (8, 32)


def default_t(n: int, d: int, min_expected: float = MIN_EXPECTED_DEFAULT,
              max_classes: int = MAX_DEFAULT_CLASSES) -> int:
    """Largest t <= d + max_classes with >= min_expected segments expected in the class >= t
    (about n / (d H_d) segments); 0 when not even t = d + 1 qualifies."""
    mean_len = d * sum(1.0 / j for j in range(1, d + 1))
    segs = n / mean_len
    best = 0
    tail = 1.0  # P(length >= t), updated from the exact class probabilities
    probs = coupon_probabilities(d, d + max_classes)
    for t in range(d + 1, d + max_classes + 1):
        tail -= probs[t - 1 - d]
        if segs * tail >= min_expected:
            best = t
        else:
            break
    return best


def _coupon_defaults(n: int) -> list[dict]:
    """d = 8 and d = 32; t from :func:`default_t` (>= 10 expected in the class >= t, at most 200
    classes), run when t >= d + 4."""
    out = []
    for d in DEFAULT_D:
        t = default_t(n, d)
        if t >= d + 4:
            out.append({"n": n, "d": d, "t": t})
    return out


register(CheckSpec(
    key="coupon collector", family="classic", title="coupon-collector test", view="uniforms",
    sized=("t",),  # the longest run length counted, from the data available
    kind="continuous", func=check_coupon, values_needed=lambda p: int(p["n"]),
    default_params=_coupon_defaults, both_tails=True, source=f"{KNUTH} E",
    notes="d = 8 and 32; t so that >= 10 segments are expected in the lumped class",
))
