"""Gap test (Knuth §3.3.2 C).

For an interval [a, b) with p = b − a, a *gap* of length r is a run of r values outside [a, b)
followed by one inside.  H0 (i.i.d. U[0, 1)) makes gap lengths i.i.d. geometric:

    p_r = p (1 − p)^r  for 0 <= r < t,   p_t = P(r >= t) = (1 − p)^t.

All complete gaps in the data are counted (the first starts at the first value, as in Knuth's
algorithm; the unfinished gap at the end is dropped), lengths >= t are lumped, and Pearson's
chi-square is taken over the t + 1 classes, small expected classes pooled
(``rngassay.stats.chisquare_gof``, expected >= 5).  Both tails.

The number of gaps here is random (all gaps in a fixed amount of data) where Knuth collects a
fixed number of gaps; the chi-square limit is the same, and the calibration tests confirm it.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from rngassay.checks.registry import CheckSpec, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError
from rngassay.stats import binomial_tails

from .frequency import KNUTH, MIN_EXPECTED_DEFAULT, gof, need, result_name, small_list, uniforms

#: Largest t the default parameters use.
MAX_DEFAULT_T = 256


def gap_probabilities(p: float, t: int) -> np.ndarray:
    """[p_0, ..., p_{t-1}, p_t]: p_r = p (1-p)^r for r < t, p_t = (1-p)^t (Knuth §3.3.2 C)."""
    p = float(p)
    t = int(t)
    if not 0.0 < p < 1.0 or t < 1:
        raise ValueError(f"gap probabilities need 0 < p < 1 and t >= 1, got p={p}, t={t}")
    r = np.arange(t + 1, dtype=np.float64)
    q = np.exp(r * math.log1p(-p))  # (1-p)^r without cancellation for small p
    out = p * q
    out[t] = q[t]
    return out


@njit(cache=True)
def _gap_counts(u, a, b, t):
    counts = np.zeros(t + 1, dtype=np.int64)
    r = 0
    for i in range(u.size):
        x = u[i]
        if x >= a and x < b:
            counts[r if r < t else t] += 1
            r = 0
        else:
            r += 1
    return counts, r


def check_gap(data: np.ndarray, a: float = 0.0, b: float = 0.5, t: int = 16,
              n: int | None = None) -> CheckResult:
    """Gap test on [a, b) with gap lengths >= t lumped (Knuth §3.3.2 C).

    H0: the uniforms are i.i.d. U[0, 1), so gap lengths are i.i.d. geometric with the
    probabilities of :func:`gap_probabilities`.  Pearson chi-square over the t + 1 classes
    (small classes pooled); both tails.
    """
    a, b, t = float(a), float(b), int(t)
    if not 0.0 <= a < b <= 1.0 or (a == 0.0 and b == 1.0):
        raise InputError(f"gap: need 0 <= a < b <= 1 and [a, b) != [0, 1), got a={a} b={b}")
    if t < 1:
        raise InputError(f"gap: t must be >= 1, got {t}")
    u = uniforms(data, n, "gap")
    need(u.size, 2, "gap")
    counts, tail = _gap_counts(u, a, b, t)
    probs = gap_probabilities(b - a, t)
    try:
        res = gof(counts, probs, f"gap a={a:g} b={b:g} t={t}")
    except InputError:
        # too few complete gaps for a chi-square: that itself is evidence when the interval is
        # rarely hit. Judge the number of values in [a, b) against Binomial(n, b - a) instead.
        hits = int(np.count_nonzero((u >= a) & (u < b)))
        right, left = binomial_tails(hits, int(u.size), b - a)
        return CheckResult(
            name=result_name("gap", {"a": a, "b": b, "t": t}), statistic=float(hits), p_value=right,
            p_left=left, null=f"binomial(n={u.size}, p={b - a:g}) hits in [a, b) (too few gaps for chi-square)",
            kind="discrete", n=int(u.size), details={"gaps": int(counts.sum()), "fallback": "hits in [a, b)"},
            pooled={"observed": hits, "n": int(u.size), "p": b - a},
        )
    return CheckResult(
        name=result_name("gap", {"a": a, "b": b, "t": t}), statistic=res.statistic,
        p_value=res.p_value, p_left=res.p_left, null=f"chi2(df={res.df})", n=int(u.size),
        details={"gaps": int(counts.sum()), "unfinished_gap": int(tail), "counts": small_list(counts),
                 "pooled_cells": len(res.pooled_bins)},
        pooled={"counts": counts, "probs": probs},
    )


# --------------------------------------------------------------------------- registry

#: The intervals the default parameters use: the lower half (Knuth's "runs below the mean"
#: case) and the top sixteenth, where flaws of the last bits of floats near 1 tend to show.
DEFAULT_INTERVALS = ((0.0, 0.5), (0.9375, 1.0))


def default_t(n: int, p: float, min_expected: float = MIN_EXPECTED_DEFAULT,
              t_max: int = MAX_DEFAULT_T) -> int:
    """Largest t <= t_max whose lumped class r >= t keeps ``min_expected`` expected gaps
    (about n p gaps in n values); 0 when not even t = 1 qualifies."""
    gaps = n * p
    if gaps * (1.0 - p) < min_expected:
        return 0
    t = int(math.floor(math.log(min_expected / gaps) / math.log1p(-p)))
    return max(0, min(t, t_max))


def _gap_defaults(n: int) -> list[dict]:
    """[0, 0.5) and [0.9375, 1); t from :func:`default_t` (>= 10 expected in the lumped class),
    run only when t >= 4."""
    out = []
    for a, b in DEFAULT_INTERVALS:
        t = default_t(n, b - a)
        if t >= 4:
            out.append({"n": n, "a": a, "b": b, "t": t})
    return out


register(CheckSpec(
    key="gap", family="classic", windows=("reversed",), title="gap test", view="uniforms", kind="continuous", func=check_gap,
    sized=("t",),  # the longest gap counted, from the data available
    values_needed=lambda p: int(p["n"]), default_params=_gap_defaults, both_tails=True,
    source=f"{KNUTH} C",
    notes="[0, 0.5) and [0.9375, 1); t so that >= 10 gaps are expected in the lumped class (t <= 256)",
))
