"""Serial correlation test (Knuth TAOCP Vol. 2 §3.3.2 K)."""

import itertools

import numpy as np
import pytest
from scipy import stats

from rngassay.checks.classic.correlation import (
    check_serial_correlation,
    circular_lag_sum,
    permutation_moments,
)
from rngassay.checks.registry import REGISTRY
from rngassay.errors import InputError
from rngassay.generators import make_generator


def pcg(seed, n):
    return np.random.Generator(np.random.PCG64(seed)).random(n)


def power_sums(x):
    return [float(np.sum(x**k)) for k in (1, 2, 3, 4)]


@pytest.mark.parametrize("n,lag", [(6, 1), (6, 2), (7, 1), (7, 3), (8, 2), (8, 3)])
def test_permutation_moments_match_full_enumeration(n, lag):
    # exact mean and variance of R over all n! arrangements, by brute force
    x = pcg(n * 10 + lag, n)
    rs = np.array([circular_lag_sum(x[list(p)], lag) for p in itertools.permutations(range(n))])
    mean, var = permutation_moments(*power_sums(x), n)
    assert mean == pytest.approx(rs.mean(), rel=1e-12)
    assert var == pytest.approx(rs.var(), rel=1e-9)


def test_knuth_mean_and_variance_of_c():
    # Knuth §3.3.2 K: mu_n = -1/(n-1) exactly, sigma_n^2 = n^2/((n-1)^2 (n-2)) [memory]; ours is
    # the exact permutation variance given the values, which agrees to O(1/n) relative
    for n in (20, 1000, 100_000):
        u = pcg(n, n)
        s1, s2, s3, s4 = power_sums(u)
        mean, var = permutation_moments(s1, s2, s3, s4, n)
        denom = n * s2 - s1 * s1
        assert (n * mean - s1 * s1) / denom == pytest.approx(-1 / (n - 1), rel=1e-9)
        sd_c = np.sqrt(var) * n / denom
        knuth = n / ((n - 1) * np.sqrt(n - 2))
        assert sd_c == pytest.approx(knuth, rel=5 / n)


def test_statistic_is_knuths_c_standardised():
    u = pcg(31, 5000)
    r = check_serial_correlation(u, lag=3)
    n = u.size
    # Knuth §3.3.2 (23), circular, written with np.roll as the outside computation
    c = (n * np.sum(u * np.roll(u, -3)) - u.sum() ** 2) / (n * np.sum(u**2) - u.sum() ** 2)
    assert r.details["correlation"] == pytest.approx(c, rel=1e-9, abs=1e-12)
    z = (c - r.details["mean_under_h0"]) / r.details["sd_under_h0"]
    assert r.statistic == pytest.approx(z, rel=1e-7, abs=1e-9)
    assert r.p_value == pytest.approx(stats.norm.sf(z), rel=1e-6)
    assert r.p_left == pytest.approx(stats.norm.cdf(z), rel=1e-6)


@pytest.mark.parametrize("lag", [1, 2, 16])
def test_calibration(lag):
    # 200 PCG64 replicates of 1000 values: p-values uniform (KS p > 1e-3; fixed seeds)
    rs = [check_serial_correlation(pcg(2000 + s, 1000), lag=lag) for s in range(200)]
    assert stats.kstest([r.p_value for r in rs], "uniform").pvalue > 1e-3
    assert stats.kstest([r.p_left for r in rs], "uniform").pvalue > 1e-3


def test_calibration_tails_small_n():
    # normal approximation at n = 100: fraction beyond |z| > 2.576 close to 1% over 4000 replicates
    # (binomial sd 0.16%: a fraction outside [0.4%, 1.7%] would be a >4 sd departure)
    z = np.array([check_serial_correlation(pcg(9000 + s, 100), lag=1).statistic for s in range(4000)])
    frac = np.mean(np.abs(z) > 2.576)
    assert 0.004 < frac < 0.017


def test_power_correlated_uniforms():
    # u_j = F(v_j + v_{j+1}) with F the triangular CDF of a sum of two uniforms: exactly uniform
    # marginals (inverse-CDF method, check-values.md §7) but neighbours share v_{j+1}: lag-1
    # correlation 1/2 in the sums, none at lag >= 2
    v = pcg(41, 20_001)
    s = v[:-1] + v[1:]
    u = np.where(s < 1, s * s / 2, 1 - (2 - s) ** 2 / 2)
    assert check_serial_correlation(u, lag=1).p_value < 1e-50
    assert stats.kstest(u, "uniform").pvalue > 1e-3
    r2 = check_serial_correlation(u, lag=2)
    assert min(r2.p_value, r2.p_left) > 1e-4


def test_power_lcg_low_byte():
    # low byte of an LCG mod 2^32 moved to the top: period 256 (Knuth §3.2.1.1, from memory)
    w = make_generator("lcg32", 1).read(4 * 50_000).view("<u4")
    u = (w & np.uint32(0xFF)) * 2.0**-8 + (w >> np.uint32(8)) * 2.0**-32
    r = check_serial_correlation(u, lag=1)
    assert min(r.p_value, r.p_left) < 1e-20  # correlation about -0.05, z about -11


def test_bad_input():
    with pytest.raises(InputError):
        check_serial_correlation(np.full(100, 0.5), lag=1)
    with pytest.raises(InputError):
        check_serial_correlation(pcg(1, 30), lag=11)


def test_registry_defaults():
    spec = REGISTRY["serial correlation"]
    assert spec.default_params(500) == []
    assert [p["lag"] for p in spec.default_params(1000)] == [1, 2, 3, 8]
    assert [p["lag"] for p in spec.default_params(10_000)] == [1, 2, 3, 8, 16, 32, 64]
    assert spec.both_tails
