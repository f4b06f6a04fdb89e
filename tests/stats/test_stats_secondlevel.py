"""Second-level tests: uniformity of p-values, proportion below a threshold, exact pooling."""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath as mp
import numpy as np
import pytest
from scipy import stats

from rngassay.stats import (
    ad_uniform,
    pool_binomial,
    pool_chisquare,
    pool_poisson,
    proportion_below,
    uniformity_of_pvalues,
)


def test_uniformity_is_anderson_darling():
    rng = np.random.default_rng(8)
    p = rng.random(500)
    assert uniformity_of_pvalues(p) == ad_uniform(p)


def test_uniformity_fixed_seed_calibration_and_power():
    rng = np.random.default_rng(31)
    # honest p-values (seed fixed): second-level p above 1e-3 (false failure chance 1e-3)
    assert uniformity_of_pvalues(rng.random(1000))[1] > 1e-3
    # p-values of a slightly biased source: squared uniforms pile up near 0
    assert uniformity_of_pvalues(rng.random(1000) ** 1.5)[1] < 1e-10
    # extreme values are allowed: 0, 1 and 1e-300 give a finite statistic
    a2, p = uniformity_of_pvalues(np.array([0.0, 1e-300, 0.3, 0.6, 1.0]))
    assert math.isfinite(a2) and 0 < p <= 1
    with pytest.raises(ValueError):
        uniformity_of_pvalues(np.array([0.2, np.nan]))
    with pytest.raises(ValueError):
        uniformity_of_pvalues(np.array([0.2, 1.5]))


def test_proportion_below_exact():
    p = np.full(100, 0.5)
    p[:3] = [0.001, 0.009, 0.0099]
    p[3] = 0.01  # not strictly below the threshold
    count, right, left = proportion_below(p, 0.01)
    assert count == 3
    # exact binomial formula in rational arithmetic: X ~ Binomial(100, 1/100)
    q = Fraction(1, 100)
    pmf = [math.comb(100, j) * q**j * (1 - q) ** (100 - j) for j in range(101)]
    assert right == pytest.approx(float(sum(pmf[3:])), rel=1e-12)
    assert left == pytest.approx(float(sum(pmf[:4])), rel=1e-12)
    with pytest.raises(ValueError):
        proportion_below(p, 1.0)


def test_pool_poisson_exact():
    total, mu, right, left = pool_poisson([1, 2, 3], [0.5, 1.0, 1.5])
    assert (total, mu) == (6, 3.0)
    # exact Poisson(3) sums (mpmath): P(X >= 6), P(X <= 6)
    pm = [mp.exp(-3) * mp.mpf(3) ** j / mp.factorial(j) for j in range(7)]
    assert left == pytest.approx(float(sum(pm)), rel=1e-12)
    assert right == pytest.approx(float(1 - sum(pm[:6])), rel=1e-12)
    with pytest.raises(ValueError):
        pool_poisson([1, 2], [1.0])
    with pytest.raises(ValueError):
        pool_poisson([1.5], [1.0])


def test_pool_chisquare():
    s, df, right, left = pool_chisquare([3.0, 4.5], [2, 3])
    assert (s, df) == (7.5, 5.0)
    assert right == pytest.approx(stats.chi2.sf(7.5, 5), rel=1e-12)  # scipy.stats reference
    assert left == pytest.approx(stats.chi2.cdf(7.5, 5), rel=1e-12)


def test_pool_binomial():
    k, n, right, left = pool_binomial([3, 5], [10, 20], 0.25)
    assert (k, n) == (8, 30)
    assert right == pytest.approx(stats.binom.sf(7, 30, 0.25), rel=1e-12)  # scipy.stats reference
    assert left == pytest.approx(stats.binom.cdf(8, 30, 0.25), rel=1e-12)
    with pytest.raises(ValueError):
        pool_binomial([11], [10], 0.5)
