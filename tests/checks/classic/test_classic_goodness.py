"""Kolmogorov-Smirnov and Anderson-Darling tests of uniforms."""

import math

import numpy as np
import pytest
from scipy import stats

from rngassay.checks.classic.goodness import (
    ad_from_sorted,
    check_anderson_darling,
    check_kolmogorov_smirnov,
    ks_from_sorted,
)
from rngassay.checks.registry import REGISTRY
from rngassay.stats import AD_EPS, ad_statistic


def pcg(seed, n):
    return np.random.Generator(np.random.PCG64(seed)).random(n)


@pytest.mark.parametrize("n", [1, 7, 100, 5000])
def test_ks_matches_scipy(n):
    u = pcg(n, n)
    r = check_kolmogorov_smirnov(u)
    ref = stats.kstest(u, "uniform", method="exact")  # scipy.stats reference
    assert r.statistic == pytest.approx(ref.statistic, rel=1e-12)
    assert r.p_value == pytest.approx(ref.pvalue, rel=1e-6)
    ref_p = stats.kstest(u, "uniform", alternative="greater")
    assert r.details["d_plus"] == pytest.approx(ref_p.statistic, rel=1e-12)


def test_ks_limiting_table_point():
    # P(sqrt(n) D_n > 1.3581) = 0.05 for the Kolmogorov limit (Smirnov 1948 table;
    # check-values.md §6).  A sample of n = 10^6 points with D_n = 1.3581/sqrt(n) exactly:
    # u_i = (i - 1/2)/n shifted by the wanted D minus 1/(2n).
    n = 10**6
    d = 1.3581 / math.sqrt(n)
    u = (np.arange(n) + 0.5) / n
    u[n // 2:] = np.minimum(u[n // 2:] + (d - 0.5 / n), 1 - 1e-12)
    u.sort()
    r = check_kolmogorov_smirnov(u)
    assert r.statistic == pytest.approx(d, rel=1e-9)
    assert r.p_value == pytest.approx(0.05, abs=5e-4)  # finite-n effect at n = 10^6 is ~1e-4


def test_ad_matches_definition_and_stats_core():
    u = pcg(21, 2000)
    s = np.sort(u)
    n = s.size
    i = np.arange(1, n + 1)
    # Anderson & Darling (1954), the computing form of Stephens (1974)
    a2 = -n - np.sum((2 * i - 1) * (np.log(s) + np.log(1 - s[::-1]))) / n
    r = check_anderson_darling(u)
    assert r.statistic == pytest.approx(a2, abs=1e-9)
    assert r.statistic == pytest.approx(ad_statistic(u), abs=1e-9)


def test_ad_p_value_at_critical_point():
    # upper 5% point of A^2 for a fully specified null: 2.492 (Stephens 1974; check-values.md §6
    # [memory]).  Build a sample whose A^2 is that point: scale a fixed sample's deviation from
    # the plotting positions until A^2 = 2.492 (bisection on the mixing weight), then the check's
    # p-value must be 0.05.
    n = 2000
    base = (np.arange(n) + 0.5) / n
    bent = np.sort(pcg(22, n)) ** 1.3  # A^2 far above 2.492
    lo, hi = 0.0, 1.0
    for _ in range(80):
        w = (lo + hi) / 2
        s = np.clip(base + w * (bent - base), 1e-12, 1 - 1e-12)
        if ad_from_sorted(s) < 2.492:
            lo = w
        else:
            hi = w
    r = check_anderson_darling(s)
    assert r.statistic == pytest.approx(2.492, abs=1e-6)
    assert r.p_value == pytest.approx(0.05, abs=1e-3)


def test_zero_value_gives_finite_statistic():
    u = pcg(23, 1000)
    u[5] = 0.0  # a 32-bit-resolution stream produces 0.0 now and then
    r = check_anderson_darling(u)
    assert math.isfinite(r.statistic) and r.details["zeros"] == 1
    clipped = u.copy()
    clipped[5] = AD_EPS
    assert r.statistic == pytest.approx(ad_statistic(clipped), abs=1e-9)


def test_large_sample_accuracy():
    # compensated summation: the A^2 of 4 million values equals the stats core's fsum version
    u = pcg(24, 4_000_000)
    s = np.sort(u)
    assert ad_from_sorted(s) == pytest.approx(ad_statistic(s), abs=1e-6)
    assert ks_from_sorted(s)[0] == pytest.approx(stats.kstest(u, "uniform", method="asymp").statistic, rel=1e-12)


def test_calibration():
    # 200 PCG64 replicates: p-values uniform (KS p > 1e-3; fixed seeds)
    ks = [check_kolmogorov_smirnov(pcg(1200 + s, 500)).p_value for s in range(200)]
    ad = [check_anderson_darling(pcg(1500 + s, 500)).p_value for s in range(200)]
    assert stats.kstest(ks, "uniform").pvalue > 1e-3
    assert stats.kstest(ad, "uniform").pvalue > 1e-3


def test_power_nonuniform():
    # u^1.05 is not uniform: D about 0.018, far beyond 1.36/sqrt(n) = 0.0027 at n = 2.6e5
    u = pcg(25, 2**18) ** 1.05
    assert check_kolmogorov_smirnov(u).p_value < 1e-20
    assert check_anderson_darling(u).p_value < 1e-20


def test_registry_defaults():
    for key in ("kolmogorov-smirnov", "anderson-darling"):
        spec = REGISTRY[key]
        assert spec.default_params(50) == []
        assert spec.default_params(1000) == [{"n": 1000}]
        assert spec.family == "classic" and spec.view == "uniforms"
