"""Goodness of fit for counts: Pearson chi-square and G test with small-count pooling,
and an exact multinomial test for small totals.

Null hypothesis throughout: the counts ``observed`` are one multinomial sample with the
stated cell probabilities (or expected counts).

Pooling rule (the same for :func:`chisquare_gof` and :func:`g_test`)
---------------------------------------------------------------------
Cells are pooled only when some expected count is below ``min_expected``:

1. Scan the cells in index order and add them to the current group; close the group as
   soon as its total expected count is ``>= min_expected`` (and positive).
2. A last group left open below ``min_expected`` is merged into the group before it.
3. If fewer than ``2 + ddof`` groups remain the test has no degrees of freedom and a
   :class:`ValueError` is raised.

So small cells at the low end are merged upwards into the first large-enough group and
small cells at the high end (the usual case: tails of gap lengths, run lengths, Poisson
counts) are merged into one tail group.  The rule depends only on the expected counts,
never on the observed ones, so the null distribution is not disturbed.  The "expected
count >= 5" threshold is common practice (Cochran's rule).

A cell with expected count 0 and a positive observed count is an outcome the null hypothesis
calls impossible: the statistic is then ``inf`` with right tail ``P_FLOOR``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from math import comb

import numpy as np
from scipy import special

from .tails import P_FLOOR, chi2_tails, clip_p

__all__ = [
    "ChiSquareResult",
    "pooling_groups",
    "chisquare_gof",
    "g_test",
    "exact_multinomial_p",
]


@dataclass(frozen=True)
class ChiSquareResult:
    """Outcome of a chi-square-type goodness-of-fit test.

    statistic   -- Pearson X^2 (or G for :func:`g_test`) over the pooled cells
    df          -- degrees of freedom: pooled cells - 1 - ddof
    p_value     -- right tail P(chi2_df >= statistic)
    p_left      -- left tail P(chi2_df <= statistic): small means "fits too well"
    observed    -- pooled observed counts
    expected    -- pooled expected counts
    pooled_bins -- for each pooled cell, the list of original cell indices merged into it
    """

    statistic: float
    df: int
    p_value: float
    p_left: float
    observed: np.ndarray
    expected: np.ndarray
    pooled_bins: list[list[int]]

    @property
    def pooled(self) -> bool:
        """True when at least two original cells were merged."""
        return len(self.pooled_bins) != sum(len(g) for g in self.pooled_bins)


def pooling_groups(expected: np.ndarray, min_expected: float = 5.0) -> np.ndarray:
    """Group label (0, 1, ...) of every cell under the module's pooling rule.

    Returns an int64 array of the same length as ``expected``; labels are non-decreasing
    (groups are runs of adjacent cells).  Only the cells' expected counts are used.
    """
    e = np.asarray(expected, dtype=np.float64)
    k = e.size
    thr = float(min_expected)
    if k == 0:
        return np.zeros(0, dtype=np.int64)
    if np.all(e >= thr) and np.all(e > 0):
        return np.arange(k, dtype=np.int64)
    # Greedy scan over cells (not over data values): close a group when it is big enough.
    labels = np.empty(k, dtype=np.int64)
    g = 0
    acc = 0.0
    closed_any = False
    last_closed = -1
    for i, ei in enumerate(e.tolist()):
        labels[i] = g
        acc += ei
        if acc >= thr and acc > 0:
            closed_any = True
            last_closed = g
            g += 1
            acc = 0.0
    if labels[-1] == g and closed_any:  # last group left open: merge into the previous one
        labels[labels == g] = last_closed
    return labels


def _prepare(observed, probs, expected, sum_tol: float) -> tuple[np.ndarray, np.ndarray]:
    obs = np.asarray(observed, dtype=np.float64).ravel()
    if obs.size < 2:
        raise ValueError("need at least two cells")
    if not np.all(np.isfinite(obs)) or np.any(obs < 0):
        raise ValueError("observed counts must be finite and >= 0")
    total = float(obs.sum())
    if (probs is None) == (expected is None):
        raise ValueError("give exactly one of probs and expected")
    if probs is not None:
        pr = np.asarray(probs, dtype=np.float64).ravel()
        if pr.shape != obs.shape:
            raise ValueError(f"probs has {pr.size} cells, observed has {obs.size}")
        if not np.all(np.isfinite(pr)) or np.any(pr < 0):
            raise ValueError("probabilities must be finite and >= 0")
        s = float(math.fsum(pr.tolist()))
        if abs(s - 1.0) > sum_tol:
            raise ValueError(f"probabilities sum to {s!r}, not 1 within {sum_tol:g}")
        exp = total * pr
    else:
        exp = np.asarray(expected, dtype=np.float64).ravel()
        if exp.shape != obs.shape:
            raise ValueError(f"expected has {exp.size} cells, observed has {obs.size}")
        if not np.all(np.isfinite(exp)) or np.any(exp < 0):
            raise ValueError("expected counts must be finite and >= 0")
        s = float(exp.sum())
        if abs(s - total) > sum_tol * max(total, 1.0):
            raise ValueError(f"expected counts sum to {s!r} but observed to {total!r}")
    if total <= 0:
        raise ValueError("no observations")
    return obs, exp


_GROUPS: dict[tuple[bytes, float], tuple[np.ndarray, tuple[tuple[int, int], ...]]] = {}


def _groups_of(exp: np.ndarray, min_expected: float) -> tuple[np.ndarray, tuple[tuple[int, int], ...]]:
    """(labels, (start, end) of every group) for these expected counts; remembered, because a check calls it
    with the same expected counts in every replicate (and a seed sweep in every seed). Read-only labels."""
    key = (exp.tobytes(), float(min_expected))
    hit = _GROUPS.get(key)
    if hit is None:
        labels = pooling_groups(exp, min_expected)
        labels.flags.writeable = False
        starts = np.flatnonzero(np.diff(labels, prepend=-1))
        ends = np.append(starts[1:], labels.size)
        hit = (labels, tuple(zip(starts.tolist(), ends.tolist())))
        if len(_GROUPS) >= 256:
            _GROUPS.clear()
        _GROUPS[key] = hit
    return hit


def _pool(obs: np.ndarray, exp: np.ndarray, min_expected: float):
    labels, spans = _groups_of(exp, min_expected)
    ng = int(labels[-1]) + 1
    po = np.bincount(labels, weights=obs, minlength=ng)
    pe = np.bincount(labels, weights=exp, minlength=ng)
    groups = [list(range(a, b)) for a, b in spans]
    impossible = bool(np.any((exp == 0) & (obs > 0)))
    return po, pe, groups, impossible


def _finish(stat: float, po, pe, groups, impossible: bool, ddof: int) -> ChiSquareResult:
    df = len(groups) - 1 - int(ddof)
    if df < 1:
        raise ValueError(
            f"only {len(groups)} cell(s) left after pooling to expected >= min_expected "
            f"(ddof={ddof}): no degrees of freedom; use more data"
        )
    if impossible or not math.isfinite(stat):
        return ChiSquareResult(math.inf, df, P_FLOOR, 1.0, po, pe, groups)
    right, left = chi2_tails(stat, df)
    return ChiSquareResult(float(stat), df, right, left, po, pe, groups)


def chisquare_gof(
    observed,
    probs=None,
    expected=None,
    min_expected: float = 5.0,
    ddof: int = 0,
    *,
    sum_tol: float = 1e-9,
) -> ChiSquareResult:
    """Pearson's chi-square goodness-of-fit test, ``X^2 = sum (O - E)^2 / E``.

    H0: ``observed`` is a multinomial sample with cell probabilities ``probs`` (expected
    counts ``total * probs``), or with the given ``expected`` counts.  Cells are pooled by the
    module's rule (see module docstring) so every pooled expected count is ``>= min_expected``;
    ``df = pooled cells - 1 - ddof``.  The right tail is the usual p-value; the left tail
    flags a fit too good to be random.

    ``probs`` must sum to 1 within ``sum_tol`` (default 1e-9); a published table rounded to a
    few decimals needs an explicitly looser ``sum_tol``, and is then used as given.
    ``expected`` must sum to the observed total within ``sum_tol`` relative.
    (Pearson 1900; the pooling threshold 5 is common practice.)
    """
    obs, exp = _prepare(observed, probs, expected, sum_tol)
    po, pe, groups, impossible = _pool(obs, exp, min_expected)
    stat = float(np.sum((po - pe) ** 2 / pe)) if not impossible else math.inf
    return _finish(stat, po, pe, groups, impossible, ddof)


def g_test(
    observed,
    probs=None,
    expected=None,
    min_expected: float = 5.0,
    ddof: int = 0,
    *,
    sum_tol: float = 1e-9,
) -> ChiSquareResult:
    """Likelihood-ratio (G) goodness-of-fit test, ``G = 2 sum O ln(O / E)``.

    Same null hypothesis, pooling and degrees of freedom as :func:`chisquare_gof`; G is
    referred to chi-square(df) (Wilks 1938).  Cells with ``O = 0`` contribute 0.
    """
    obs, exp = _prepare(observed, probs, expected, sum_tol)
    po, pe, groups, impossible = _pool(obs, exp, min_expected)
    if impossible:
        stat = math.inf
    else:
        stat = float(2.0 * np.sum(special.xlogy(po, po / pe)))
        stat = max(stat, 0.0)  # rounding can give -1e-16 for a perfect fit
    return _finish(stat, po, pe, groups, impossible, ddof)


#: Largest number of outcomes :func:`exact_multinomial_p` enumerates.
EXACT_MULTINOMIAL_MAX_OUTCOMES = 10_000_000


def exact_multinomial_p(observed, probs, *, sum_tol: float = 1e-9,
                        max_outcomes: int = EXACT_MULTINOMIAL_MAX_OUTCOMES) -> float:
    """Exact multinomial goodness-of-fit p-value by probability ordering.

    H0: ``observed`` (k cells, total n) is Multinomial(n, probs).  The p-value is the total
    probability of all outcomes no more probable than the one observed,
    ``sum P(x) over x with P(x) <= P(observed) * (1 + 1e-7)``; the relative tolerance 1e-7
    counts outcomes tied up to rounding as ties (common practice).  All
    ``C(n + k - 1, k - 1)`` outcomes are enumerated (vectorised); more than ``max_outcomes``
    (default 10^7, e.g. n = 60 with k = 6 is 8.3 million) raises :class:`ValueError`.
    For k = 2 this is the exact two-sided binomial test.
    """
    obs = np.asarray(observed).ravel()
    if obs.size < 2:
        raise ValueError("need at least two cells")
    if not np.all(np.isfinite(obs)) or np.any(obs < 0) or np.any(obs != np.floor(obs)):
        raise ValueError("observed counts must be non-negative integers")
    x_obs = obs.astype(np.int64)
    pr = np.asarray(probs, dtype=np.float64).ravel()
    if pr.shape != x_obs.shape:
        raise ValueError(f"probs has {pr.size} cells, observed has {x_obs.size}")
    if not np.all(np.isfinite(pr)) or np.any(pr < 0):
        raise ValueError("probabilities must be finite and >= 0")
    s = math.fsum(pr.tolist())
    if abs(s - 1.0) > sum_tol:
        raise ValueError(f"probabilities sum to {s!r}, not 1 within {sum_tol:g}")
    pr = pr / s
    n = int(x_obs.sum())
    k = int(x_obs.size)
    count = comb(n + k - 1, k - 1)
    if count > max_outcomes:
        raise ValueError(
            f"exact multinomial test would enumerate {count} outcomes (n={n}, k={k}); "
            f"limit is {max_outcomes}: use chisquare_gof"
        )
    if n == 0:
        return 1.0
    # table[j, x] = x ln p_j - ln x!  (with 0 ln 0 = 0 and x ln 0 = -inf for x > 0)
    xs = np.arange(n + 1, dtype=np.float64)
    table = special.xlogy(xs[None, :], pr[:, None]) - special.gammaln(xs + 1.0)[None, :]
    lognf = math.lgamma(n + 1.0)
    log_obs = lognf + float(table[np.arange(k), x_obs].sum())
    if log_obs == -math.inf:
        return P_FLOOR  # the observed outcome is impossible under H0
    # Enumerate compositions cell by cell, carrying (remaining total, partial log-probability).
    rem = np.array([n], dtype=np.int32)
    logp = np.zeros(1, dtype=np.float64)
    for j in range(k - 1):
        reps = rem + 1
        idx = np.repeat(np.arange(rem.size, dtype=np.int32), reps)
        offsets = np.repeat((np.cumsum(reps) - reps).astype(np.int32), reps)
        xj = np.arange(idx.size, dtype=np.int32) - offsets
        logp = logp[idx] + table[j, xj]
        rem = rem[idx] - xj
    logp = logp + table[k - 1, rem] + lognf
    cut = log_obs + math.log1p(1e-7)
    sel = logp[logp <= cut]
    if sel.size == 0:
        return P_FLOOR
    m = float(sel.max())
    p = math.exp(m) * float(np.sum(np.exp(sel - m)))
    return clip_p(min(p, 1.0))
