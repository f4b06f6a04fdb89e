"""Tail functions against published tables, scipy.stats and mpmath."""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest
from scipy import stats

from rngassay.stats import (
    P_FLOOR,
    binomial_tails,
    chi2_log10_sf,
    chi2_tails,
    clip_p,
    clip_p_array,
    discrete_two_sided,
    log10_p,
    normal_log10_sf,
    normal_tails,
    normal_two_sided,
    poisson_tails,
)

mp.mp.dps = 40


# ------------------------------------------------------------------- the floor


def test_floor_is_smallest_normal_double():
    assert P_FLOOR == np.finfo(np.float64).tiny  # IEEE 754 binary64: 2^-1022
    assert P_FLOOR == 2.0**-1022


def test_clip_p():
    assert clip_p(0.0) == P_FLOOR
    assert clip_p(-1e-17) == P_FLOOR  # rounding below 0 is clipped, never returned
    assert clip_p(1e-320) == P_FLOOR  # subnormal
    assert clip_p(1.0 + 1e-15) == 1.0
    assert clip_p(0.25) == 0.25
    with pytest.raises(ValueError):
        clip_p(float("nan"))
    np.testing.assert_array_equal(clip_p_array([0.0, 0.5, 2.0]), [P_FLOOR, 0.5, 1.0])
    with pytest.raises(ValueError):
        clip_p_array([0.1, np.nan])
    assert log10_p(0.0) == pytest.approx(-307.6526555685888, abs=1e-12)  # log10(2^-1022)


# --------------------------------------------------------- published tables


def test_chi2_percentage_points():
    # check-values.md §6, Abramowitz & Stegun table 26.8: 95% point for 10 d.o.f. is 18.307.
    # The point is rounded to 3 decimals: +-0.0005 moves p by <= 6e-6 (pdf there is 0.011).
    right, left = chi2_tails(18.307, 10)
    assert abs(right - 0.05) < 1e-5
    assert abs(left - 0.95) < 1e-5
    # check-values.md §6, A&S 26.8: 99% point for 15 d.o.f. is 30.578 (pdf 0.0023: +-1.2e-6).
    right, left = chi2_tails(30.578, 15)
    assert abs(right - 0.01) < 5e-6
    assert abs(left - 0.99) < 5e-6


@pytest.mark.parametrize(
    "z, q",
    # check-values.md §6, Abramowitz & Stegun 26.2: Q(z), printed to 5 significant digits
    [(3.0, 1.3499e-3), (4.0, 3.1671e-5), (5.0, 2.8665e-7), (6.0, 9.8659e-10)],
)
def test_normal_upper_tail_table(z, q):
    right, left = normal_tails(z)
    assert right == pytest.approx(q, rel=5e-5)
    # symmetry: the left tail at -z is the same number
    assert normal_tails(-z)[1] == pytest.approx(right, rel=1e-14)
    assert normal_two_sided(z) == pytest.approx(2 * q, rel=5e-5)
    assert normal_two_sided(-z) == normal_two_sided(z)


# ------------------------------------------------------- scipy.stats reference

_rng = np.random.default_rng(20240611)


def test_chi2_vs_scipy_grid():
    dfs = np.concatenate([_rng.uniform(0.2, 5, 30), _rng.integers(1, 500, 30)])
    for df in dfs:
        for x in _rng.gamma(df, 2.0, 5) * _rng.uniform(0.05, 3, 5):
            right, left = chi2_tails(x, df)
            assert right == pytest.approx(max(stats.chi2.sf(x, df), P_FLOOR), rel=1e-12)
            assert left == pytest.approx(max(stats.chi2.cdf(x, df), P_FLOOR), rel=1e-12)


def test_normal_vs_scipy_grid():
    for z in _rng.uniform(-40, 40, 300):
        right, left = normal_tails(z)
        assert right == pytest.approx(max(stats.norm.sf(z), P_FLOOR), rel=1e-12)
        assert left == pytest.approx(max(stats.norm.cdf(z), P_FLOOR), rel=1e-12)


def test_poisson_vs_scipy_grid():
    for mu in np.concatenate([_rng.uniform(0.01, 5, 20), _rng.uniform(5, 2000, 20)]):
        for k in np.unique(_rng.poisson(mu, 8) + _rng.integers(-3, 4, 8)):
            right, left = poisson_tails(int(k), mu)
            # right tail P(X >= k) = sf(k - 1); left P(X <= k) = cdf(k)
            assert right == pytest.approx(max(stats.poisson.sf(k - 1, mu), P_FLOOR), rel=1e-12)
            assert left == pytest.approx(max(stats.poisson.cdf(k, mu), P_FLOOR), rel=1e-12)


def test_binomial_vs_scipy_grid():
    for _ in range(60):
        n = int(_rng.integers(1, 5000))
        p = float(_rng.uniform(0.001, 0.999))
        for k in np.unique(np.clip(_rng.binomial(n, p, 6) + _rng.integers(-3, 4, 6), -1, n + 1)):
            right, left = binomial_tails(int(k), n, p)
            assert right == pytest.approx(max(stats.binom.sf(k - 1, n, p), P_FLOOR), rel=1e-12)
            assert left == pytest.approx(max(stats.binom.cdf(k, n, p), P_FLOOR), rel=1e-12)


# ------------------------------------------------ far tails against mpmath


@pytest.mark.parametrize("x, df", [(200.0, 10), (1000.0, 10), (1300.0, 3.5), (3000.0, 1000)])
def test_chi2_far_right_tail_vs_mpmath(x, df):
    # exact: P(chi2_df >= x) = Q(df/2, x/2), regularised upper incomplete gamma (mpmath, 40 digits)
    ref = mp.gammainc(mp.mpf(df) / 2, mp.mpf(x) / 2, mp.inf, regularized=True)
    right, _ = chi2_tails(x, df)
    if ref > P_FLOOR:
        assert right == pytest.approx(float(ref), rel=1e-9)
    else:
        assert right == P_FLOOR
    assert chi2_log10_sf(x, df) == pytest.approx(float(mp.log10(ref)), abs=1e-9)


def test_chi2_far_tail_never_zero():
    # chi2 df=10 at x=2000: the tail is about 1e-424, below any double: clipped, not 0.
    right, left = chi2_tails(2000.0, 10)
    assert right == P_FLOOR > 0.0
    assert left == 1.0
    ref = mp.log10(mp.gammainc(5, 1000, mp.inf, regularized=True))  # exact, mpmath
    assert chi2_log10_sf(2000.0, 10) == pytest.approx(float(ref), abs=1e-9)
    # left tail far out: chi2 df=200 at x=1 is about 1e-300-ish; never 0
    assert chi2_tails(1e-3, 200)[1] == P_FLOOR


def test_chi2_left_tail_small_vs_mpmath():
    # exact: P(chi2_df <= x) = P(df/2, x/2), regularised lower incomplete gamma
    ref = mp.gammainc(mp.mpf(50), 0, mp.mpf(5), regularized=True)
    assert chi2_tails(10.0, 100)[1] == pytest.approx(float(ref), rel=1e-9)


def test_normal_far_tail():
    # Q(40) ~ 3.7e-350: underflows; log10 from log_ndtr vs mpmath erfc (exact)
    assert normal_tails(40.0)[0] == P_FLOOR
    assert normal_two_sided(40.0) == P_FLOOR
    ref = mp.log10(mp.erfc(mp.mpf(40) / mp.sqrt(2)) / 2)
    assert normal_log10_sf(40.0) == pytest.approx(float(ref), abs=1e-10)
    ref = mp.erfc(mp.mpf(30) / mp.sqrt(2)) / 2
    assert normal_tails(30.0)[0] == pytest.approx(float(ref), rel=1e-12)


def test_poisson_far_tail_vs_mpmath():
    # exact: P(X >= k) = 1 - sum_{j<k} e^-mu mu^j / j!  computed as the tail sum in mpmath
    mu, k = mp.mpf(3), 150
    ref = mp.nsum(lambda j: mp.exp(-mu) * mu**j / mp.factorial(j), [k, mp.inf])
    assert poisson_tails(k, 3.0)[0] == pytest.approx(float(ref), rel=1e-9)
    # mu = 1, k = 400: about 1e-870: floor, never 0
    assert poisson_tails(400, 1.0) == (P_FLOOR, 1.0)


def test_binomial_far_tail_exact():
    # P(X >= n) = p^n exactly: 0.5^1000 = 9.33e-302 (still a normal double)
    assert binomial_tails(1000, 1000, 0.5)[0] == pytest.approx(0.5**1000, rel=1e-10)
    # P(X <= 0) = (1 - p)^n
    assert binomial_tails(0, 200, 0.3)[1] == pytest.approx(0.7**200, rel=1e-10)
    # P(X >= 2000 of 2000) at p = 0.5 is 2^-2000: floor
    assert binomial_tails(2000, 2000, 0.5)[0] == P_FLOOR


def test_binomial_exact_small_by_enumeration():
    # exact formula: sum of C(n, j) p^j (1-p)^(n-j), in rational arithmetic
    from fractions import Fraction

    n, p = 12, Fraction(3, 10)
    pmf = [math.comb(n, j) * p**j * (1 - p) ** (n - j) for j in range(n + 1)]
    for k in range(-1, n + 2):
        right, left = binomial_tails(k, n, 0.3)
        r_ref = float(sum(pmf[max(k, 0):]))
        l_ref = float(sum(pmf[: max(min(k, n) + 1, 0)])) if k >= 0 else 0.0
        assert right == pytest.approx(max(r_ref, P_FLOOR), rel=1e-12)
        assert left == pytest.approx(max(l_ref, P_FLOOR), rel=1e-12)


def test_discrete_edge_cases():
    assert poisson_tails(0, 2.0) == (1.0, pytest.approx(math.exp(-2.0), rel=1e-15))
    assert poisson_tails(-1, 2.0) == (1.0, P_FLOOR)
    assert poisson_tails(3, 0.0) == (P_FLOOR, 1.0)
    assert poisson_tails(0, 0.0) == (1.0, 1.0)
    assert binomial_tails(0, 0, 0.5) == (1.0, 1.0)
    assert binomial_tails(5, 10, 0.0) == (P_FLOOR, 1.0)
    assert binomial_tails(5, 10, 1.0) == (1.0, P_FLOOR)
    assert binomial_tails(10, 10, 1.0) == (1.0, 1.0)


def test_discrete_two_sided():
    assert discrete_two_sided(0.01, 0.995) == pytest.approx(0.02)
    assert discrete_two_sided(0.7, 0.6) == 1.0
    assert discrete_two_sided(0.0, 1.0) == P_FLOOR


def test_bad_input():
    with pytest.raises(ValueError):
        chi2_tails(float("nan"), 3)
    with pytest.raises(ValueError):
        chi2_tails(1.0, 0)
    with pytest.raises(ValueError):
        normal_tails(float("nan"))
    with pytest.raises(ValueError):
        poisson_tails(2.5, 1.0)
    with pytest.raises(ValueError):
        poisson_tails(2, -1.0)
    with pytest.raises(ValueError):
        binomial_tails(2, 10, 1.5)
    with pytest.raises(ValueError):
        binomial_tails(2, -1, 0.5)
    # integral floats are accepted as counts
    assert poisson_tails(3.0, 1.0) == poisson_tails(3, 1.0)
    assert chi2_tails(-1.0, 4) == (1.0, P_FLOOR)


def test_poisson_tails_are_scipy_stats_poisson_bit_for_bit():
    """poisson_tails uses scipy.special.pdtrc/pdtr directly; they must be exactly what scipy.stats.poisson's
    sf/cdf give (the reference), across means from 1e-3 to 1e4 and both tails."""
    rng = np.random.default_rng(7)
    for _ in range(3000):
        mu = float(10 ** rng.uniform(-3, 4))
        k = int(rng.integers(1, int(3 * mu) + 10))
        right, left = poisson_tails(k, mu)
        assert right == max(float(stats.poisson.sf(k - 1, mu)), P_FLOOR)
        assert left == max(float(stats.poisson.cdf(k, mu)), P_FLOOR)
