"""Property tests (hypothesis): p-values always in (0, 1]; discrete tails add up; structure of
pooling and multiple-testing outputs."""

from __future__ import annotations

import math
import os

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from rngassay.stats import (
    P_FLOOR,
    ad_pvalue,
    benjamini_hochberg,
    benjamini_hochberg_adjusted,
    binomial_tails,
    cauchy_combination,
    chi2_tails,
    chisquare_gof,
    harmonic_mean_p,
    holm,
    holm_adjusted,
    normal_tails,
    poisson_tails,
    pooling_groups,
)

# RNGASSAY_HYPOTHESIS_EXAMPLES raises the example count for an occasional deeper local run.
FAST = settings(max_examples=int(os.environ.get("RNGASSAY_HYPOTHESIS_EXAMPLES", "150")), deadline=None)
prob = st.floats(0.0, 1.0, allow_nan=False)


def _valid(p: float) -> bool:
    return P_FLOOR <= p <= 1.0 and not math.isnan(p)


@FAST
@given(k=st.integers(-5, 3000), mu=st.floats(0.0, 2000.0, allow_nan=False))
def test_poisson_tails_add_up(k, mu):
    right, left = poisson_tails(k, mu)
    assert _valid(right) and _valid(left)
    # exact identity P(X >= k) + P(X <= k) - P(X = k) = 1 (pmf from scipy.stats)
    pmf = float(stats.poisson.pmf(k, mu)) if mu > 0 else float(k == 0)
    assert abs(right + left - pmf - 1.0) < 1e-9


@FAST
@given(n=st.integers(0, 3000), p=prob, data=st.data())
def test_binomial_tails_add_up(n, p, data):
    k = data.draw(st.integers(-2, n + 2))
    right, left = binomial_tails(k, n, p)
    assert _valid(right) and _valid(left)
    # pmf by the formula C(n, k) p^k (1-p)^(n-k), in logs (scipy's pmf overflows for p ~ 1e-308)
    if 0 < p < 1 and 0 <= k <= n:
        pmf = math.exp(math.lgamma(n + 1) - math.lgamma(k + 1) - math.lgamma(n - k + 1)
                       + k * math.log(p) + (n - k) * math.log1p(-p))
    else:
        pmf = float(0 <= k <= n and k == round(n * p))
    assert abs(right + left - pmf - 1.0) < 1e-9


@FAST
@given(x=st.floats(-10, 1e6, allow_nan=False), df=st.floats(0.01, 1e5, allow_nan=False))
def test_chi2_tails_in_range(x, df):
    right, left = chi2_tails(x, df)
    assert _valid(right) and _valid(left)
    assert abs(right + left - 1.0) < 1e-9  # continuous: tails add to 1 (up to the floor)


@FAST
@given(z=st.floats(-1e4, 1e4, allow_nan=False))
def test_normal_tails_in_range(z):
    right, left = normal_tails(z)
    assert _valid(right) and _valid(left)
    assert abs(right + left - 1.0) < 1e-12


@FAST
@given(a2=st.floats(-1, 1e6, allow_nan=False), n=st.one_of(st.none(), st.integers(1, 10**9)))
def test_ad_pvalue_in_range(a2, n):
    assert _valid(ad_pvalue(a2, n))


@FAST
@given(ps=st.lists(prob, min_size=1, max_size=30), use_w=st.booleans(), data=st.data())
def test_combinations_in_range(ps, use_w, data):
    w = None
    if use_w:
        w = data.draw(st.lists(st.floats(0.01, 10), min_size=len(ps), max_size=len(ps)))
    assert _valid(cauchy_combination(ps, w))
    assert _valid(harmonic_mean_p(ps, w))


@FAST
@given(ps=st.lists(prob, min_size=0, max_size=40), level=st.floats(0.001, 0.5))
def test_multiple_testing_structure(ps, level):
    p = np.array(ps)
    for adj_fn, rej_fn in ((holm_adjusted, holm), (benjamini_hochberg_adjusted, benjamini_hochberg)):
        adj = adj_fn(p)
        rej = rej_fn(p, level)
        assert np.all((adj >= p - 1e-15) & (adj <= 1.0))
        # rejections by the step rule agree with adjusted <= level up to rounding at the boundary
        assert np.all(adj[rej] <= level * (1 + 1e-12))
        assert np.all(adj[~rej] > level * (1 - 1e-12))
        # rejected hypotheses are exactly those with the smallest p-values
        if rej.any() and (~rej).any():
            assert p[rej].max() <= p[~rej].min()


@FAST
@given(e=st.lists(st.floats(0.0, 50.0), min_size=2, max_size=60), thr=st.floats(0.5, 10.0))
def test_pooling_groups_structure(e, thr):
    e = np.array(e)
    labels = pooling_groups(e, thr)
    assert labels[0] == 0 and np.all(np.diff(labels) >= 0) and np.all(np.diff(labels) <= 1)
    sums = np.bincount(labels, weights=e)
    if sums.size > 1 or e.sum() >= thr:
        assert np.all(sums >= thr)  # every pooled cell is big enough once anything closed


@FAST
@given(counts=st.lists(st.integers(0, 200), min_size=3, max_size=20), data=st.data())
def test_chisquare_gof_valid(counts, data):
    k = len(counts)
    raw = data.draw(st.lists(st.floats(0.01, 1.0), min_size=k, max_size=k))
    probs = np.array(raw) / math.fsum(raw)
    n = sum(counts)
    if n * probs.sum() < 15:  # need at least 3 pooled cells of expected >= 5 to have a test
        return
    try:
        r = chisquare_gof(counts, probs)
    except ValueError:  # too few pooled cells: documented
        return
    assert _valid(r.p_value) and _valid(r.p_left)
    assert r.df == len(r.pooled_bins) - 1
    assert sorted(i for g in r.pooled_bins for i in g) == list(range(k))
