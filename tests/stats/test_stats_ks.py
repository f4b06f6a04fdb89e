"""Kolmogorov–Smirnov: limiting-distribution table points, exact small cases, scipy reference."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from rngassay.stats import KS_EXACT_MAX_N, P_FLOOR, ks_cdf, ks_pvalue, ks_statistic, ks_uniform

BIG_N = 10**8  # above KS_EXACT_MAX_N: the limiting Kolmogorov distribution is used


def test_kolmogorov_limiting_points():
    assert BIG_N > KS_EXACT_MAX_N
    s = math.sqrt(BIG_N)
    # check-values.md §6 (Smirnov 1948 table): P(sqrt(n) D > 1.3581) = 0.05, > 1.6276 = 0.01,
    # P(sqrt(n) D <= 1) = 0.7300; points printed to 4-5 digits, so tolerance 1e-4.
    assert ks_pvalue(1.3581 / s, BIG_N) == pytest.approx(0.05, abs=1e-4)
    assert ks_pvalue(1.6276 / s, BIG_N) == pytest.approx(0.01, abs=1e-4)
    assert 1.0 - ks_pvalue(1.0 / s, BIG_N) == pytest.approx(0.7300, abs=1e-4)


def test_exact_branch_approaches_limit():
    # the exact finite-n distribution tends to the Kolmogorov limit; the difference is O(1/sqrt(n))
    # (check-values.md §6 points again, at n = KS_EXACT_MAX_N = 10^5: within 5e-4)
    n = KS_EXACT_MAX_N
    assert ks_pvalue(1.3581 / math.sqrt(n), n) == pytest.approx(0.05, abs=5e-4)
    assert ks_pvalue(1.6276 / math.sqrt(n), n) == pytest.approx(0.01, abs=5e-4)


def test_limit_branch_accuracy_just_above_threshold():
    # documented accuracy of the limiting form above the threshold, against the exact
    # finite-n distribution (scipy.stats.kstwo): < 0.5 % relative for p >= 0.01, < 2 % at 1e-10
    n = KS_EXACT_MAX_N + 1
    for c, tol in ((0.8, 5e-3), (1.3581, 5e-3), (1.6276, 5e-3), (3.5, 2e-2)):
        d = c / math.sqrt(n)
        assert ks_pvalue(d, n) == pytest.approx(stats.kstwo.sf(d, n), rel=tol)


def test_n1_exact():
    # exact for n = 1: D = max(u, 1 - u), P(D >= d) = 2 (1 - d) for 1/2 <= d <= 1 [derived]
    d, p = ks_uniform(np.array([0.2]))
    assert d == pytest.approx(0.8, rel=1e-15)
    assert p == pytest.approx(0.4, rel=1e-12)


def test_statistic_hand_example():
    # u = 0.1, 0.4, 0.7: D+ = max(1/3-0.1, 2/3-0.4, 1-0.7) = 0.3; D- = max(0.1, 0.4-1/3, 0.7-2/3) = 0.1
    d, p = ks_uniform(np.array([0.7, 0.1, 0.4]))
    assert d == pytest.approx(0.3, rel=1e-14)
    assert p == pytest.approx(stats.kstwo.sf(0.3, 3), rel=1e-12)  # scipy.stats reference


def test_vs_scipy_kstest():
    rng = np.random.default_rng(5)
    for n in (5, 30, 140, 141, 1000, 20000):
        u = rng.random(n) ** 1.05
        d, p = ks_uniform(u)
        ref = stats.kstest(u, "uniform", method="exact" if n <= 10000 else "auto")  # scipy.stats reference
        assert d == pytest.approx(ref.statistic, rel=1e-13)
        assert p == pytest.approx(ref.pvalue, rel=1e-9)


def test_ks_cdf_general():
    rng = np.random.default_rng(6)
    x = rng.normal(0.1, 1.0, 400)
    d, p = ks_cdf(x, stats.norm.cdf)
    ref = stats.kstest(x, "norm")  # scipy.stats reference
    assert d == pytest.approx(ref.statistic, rel=1e-13)
    assert p == pytest.approx(ref.pvalue, rel=1e-9)
    # same as ks_uniform on the probability-integral transform
    assert ks_cdf(x, stats.norm.cdf) == ks_uniform(stats.norm.cdf(x))


def test_far_tail_never_zero():
    # D = 0.9 at n = 1000: P = 2 (1 - D)^n ~ 1e-1000 [Ruben–Gambino exact region]: floor, not 0
    assert ks_pvalue(0.9, 1000) == P_FLOOR > 0
    assert ks_pvalue(0.9, 2 * 10**7) == P_FLOOR
    assert ks_pvalue(0.0, 10) == 1.0


def test_calibration_fixed_seed():
    # 1500 samples of 50 uniforms (seed fixed): the fraction of p <= 0.05 is Binomial(1500, 0.05)
    # under an exact p-value; assert within 4.5 standard errors (false failure ~1e-5).
    rng = np.random.default_rng(11)
    ps = np.array([ks_uniform(rng.random(50))[1] for _ in range(1500)])
    se = math.sqrt(0.05 * 0.95 / 1500)
    assert abs(np.mean(ps <= 0.05) - 0.05) < 4.5 * se


def test_bad_input():
    with pytest.raises(ValueError):
        ks_uniform(np.array([0.1, 1.2]))
    with pytest.raises(ValueError):
        ks_uniform(np.array([0.1, np.nan]))
    with pytest.raises(ValueError):
        ks_uniform(np.array([]))
    with pytest.raises(ValueError):
        ks_pvalue(0.1, 0)
    assert ks_statistic(np.array([0.5])) == 0.5
