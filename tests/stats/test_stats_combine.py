"""Cauchy combination (Liu & Xie 2020) and harmonic mean p-value (Wilson 2019)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, stats

from rngassay.stats import P_FLOOR, cauchy_combination, harmonic_mean, harmonic_mean_p


@pytest.mark.parametrize("p", [1e-300, 1e-20, 1e-16, 1e-3, 0.3, 0.5, 0.7, 1 - 1e-9])
def test_cauchy_single_p_is_identity(p):
    # one p-value: T = tan((1/2 - p) pi) and P(C >= T) = p exactly [Liu & Xie 2020, eq. (2)]
    assert cauchy_combination([p]) == pytest.approx(p, rel=1e-12)
    assert cauchy_combination([p, p, p]) == pytest.approx(p, rel=1e-12)  # equal p's, equal weights


def test_cauchy_tiny_p_numerics():
    # with weights 1/2: T ~ 1/(2 pi p) and P(C >= T) ~ 1/(pi T) = 2p (first-order Cauchy tail)
    assert cauchy_combination([1e-300, 0.5]) == pytest.approx(2e-300, rel=1e-12)
    assert cauchy_combination([1e-200, 0.5], weights=[0.25, 0.75]) == pytest.approx(4e-200, rel=1e-12)


def test_cauchy_never_zero_or_nan():
    for ps in ([1e-300, 1.0], [1.0] * 5, [0.0], [0.0, 1.0], [1.0], [0.0] * 3):
        c = cauchy_combination(ps)
        assert P_FLOOR <= c <= 1.0 and not math.isnan(c)
    assert cauchy_combination([1.0]) == 1.0
    assert cauchy_combination([0.0]) == P_FLOOR


def test_cauchy_vs_numerical_convolution():
    # under independence T = w1 C1 + w2 C2 with standard Cauchy C_i; P(T >= t) by numerical
    # integration (scipy.integrate.quad over the density of C1) must equal our p-value
    w1, w2 = 0.3, 0.7
    for p1, p2 in ((0.2, 0.6), (0.01, 0.9), (0.5, 0.5), (0.97, 0.99)):
        t = w1 * math.tan((0.5 - p1) * math.pi) + w2 * math.tan((0.5 - p2) * math.pi)
        val = integrate.quad(lambda c: stats.cauchy.pdf(c) * stats.cauchy.sf((t - w1 * c) / w2),
                             -np.inf, np.inf, epsabs=1e-13, limit=400)[0]
        assert cauchy_combination([p1, p2], weights=[w1, w2]) == pytest.approx(val, rel=1e-7)


def test_cauchy_exact_under_independence_monte_carlo():
    # fixed seed, 200,000 independent triples with unequal weights: the combined p-value is
    # exactly U(0,1); fractions below 0.01 / 0.05 within 4.5 binomial s.e. (false failure ~1e-5)
    rng = np.random.default_rng(2020)
    u = rng.random((200_000, 3))
    w = np.array([0.2, 0.3, 0.5])
    c = np.array([cauchy_combination(row, w) for row in u[:20_000]])  # the function itself
    t = (w * np.tan((0.5 - u) * np.pi)).sum(axis=1)  # vectorised same statistic for the bulk
    c_all = stats.cauchy.sf(t)
    np.testing.assert_allclose(c, c_all[:20_000], rtol=1e-9)
    for a in (0.01, 0.05, 0.5):
        se = math.sqrt(a * (1 - a) / c_all.size)
        assert abs(np.mean(c_all <= a) - a) < 4.5 * se


def test_harmonic_mean_basics():
    assert harmonic_mean([0.5, 0.25]) == pytest.approx(1 / 3, rel=1e-14)  # 1 / (0.5/0.5 + 0.5/0.25)
    assert harmonic_mean([0.5, 0.25], [3, 1]) == pytest.approx(1 / (0.75 / 0.5 + 0.25 / 0.25), rel=1e-14)
    # far tail: Landau tail (2/pi)/x in scipy's scale, times pi/2 -> p_HMP ~ HMP (Wilson 2019)
    assert harmonic_mean_p([1e-300] * 3) == pytest.approx(1e-300, rel=1e-6)
    for ps in ([1e-300, 1.0], [1.0] * 4, [0.0], [0.0, 1.0]):
        h = harmonic_mean_p(ps)
        assert P_FLOOR <= h <= 1.0 and not math.isnan(h)


@pytest.mark.parametrize("L, weighted", [(50, False), (200, True)])
def test_harmonic_mean_p_calibration(L, weighted):
    # asymptotically exact under independence (Wilson 2019); fixed seed, 10,000 replicates;
    # fractions within 4.5 binomial s.e. + 2 % of alpha for the asymptotic approximation
    rng = np.random.default_rng(1195 + L)
    w = rng.dirichlet(np.ones(L)) if weighted else None
    reps = 10_000
    hp = np.array([harmonic_mean_p(row, w) for row in rng.random((reps, L))])
    for a in (0.01, 0.05, 0.2):
        se = math.sqrt(a * (1 - a) / reps)
        assert abs(np.mean(hp <= a) - a) < 4.5 * se + 0.02 * a


def test_bad_input():
    with pytest.raises(ValueError):
        cauchy_combination([])
    with pytest.raises(ValueError):
        cauchy_combination([0.1, np.nan])
    with pytest.raises(ValueError):
        harmonic_mean_p([0.1, 1.2])
    with pytest.raises(ValueError):
        cauchy_combination([0.1, 0.2], weights=[1.0])
