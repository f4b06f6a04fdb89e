"""Anderson–Darling statistic and its null distribution."""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest
from scipy import integrate, stats

from rngassay.stats import (
    AD_TAIL_SWITCH,
    P_FLOOR,
    ad_log10_pvalue,
    ad_pvalue,
    ad_statistic,
    ad_uniform,
    adinf_sf,
)

mp.mp.dps = 30


def _a2_rows(u: np.ndarray) -> np.ndarray:
    """Textbook A^2 (Anderson & Darling 1954) row by row, for Monte Carlo."""
    n = u.shape[1]
    u = np.sort(u, axis=1)
    i = np.arange(1, n + 1)
    return -n - np.sum((2 * i - 1) * (np.log(u) + np.log1p(-u[:, ::-1])), axis=1) / n


# ------------------------------------------------------------------ statistic


def test_statistic_vs_scipy_goodness_of_fit():
    # independent implementation: scipy.stats.goodness_of_fit(statistic="ad") with all
    # parameters known computes the same A^2 (its Monte Carlo p-value is not used here)
    rng = np.random.default_rng(3)
    for n in (1, 7, 250):
        u = rng.random(n)
        ref = stats.goodness_of_fit(stats.uniform, u, known_params={"loc": 0, "scale": 1},
                                    statistic="ad", n_mc_samples=9, rng=1).statistic
        assert ad_statistic(u) == pytest.approx(ref, rel=1e-12, abs=1e-12)


def test_statistic_hand_n1():
    # n = 1: A^2 = -1 - ln u - ln(1 - u) (definition)
    assert ad_statistic(np.array([0.3])) == pytest.approx(-1 - math.log(0.3) - math.log(0.7), rel=1e-14)


def test_statistic_chunked_large_n():
    # n = 3 * 2^20 + 5 spans several chunks; compare with a one-pass long-double evaluation
    rng = np.random.default_rng(4)
    u = rng.random(3 * 2**20 + 5)
    s = np.sort(u).astype(np.longdouble)
    n = s.size
    i = np.arange(1, n + 1, dtype=np.longdouble)
    ref = -n - np.sum((2 * i - 1) * np.log(s) + (2 * n + 1 - 2 * i) * np.log1p(-s)) / n
    assert ad_statistic(u) == pytest.approx(float(ref), abs=1e-6)


def test_statistic_clips_zero_and_one():
    u = np.array([0.0, 0.25, 0.5, 0.75, 1.0])
    a2 = ad_statistic(u)
    assert math.isfinite(a2) and a2 > 0
    with pytest.raises(ValueError):
        ad_statistic(np.array([0.5, 1.5]))
    with pytest.raises(ValueError):
        ad_statistic(np.array([0.5, np.nan]))


# ------------------------------------------------------ limiting distribution


@pytest.mark.parametrize(
    "point, p",
    # check-values.md §6: Stephens (1974), upper 10/5/2.5/1 % points 1.933, 2.492, 3.070, 3.857
    # [from memory]. Asserted to +-1e-3 in p: the exact limit gives 0.09999, 0.05002, 0.02522,
    # 0.01024 (the table's 2.5 % and 1 % points are about 0.008 / 0.02 too low).
    [(1.933, 0.10), (2.492, 0.05), (3.070, 0.025), (3.857, 0.01)],
)
def test_stephens_upper_points(point, p):
    assert adinf_sf(point) == pytest.approx(p, abs=1e-3)
    assert ad_pvalue(point, 10_000) == pytest.approx(p, abs=1e-3)


def _smirnov_tail_mp(z: float) -> mp.mpf:
    """Independent high-precision evaluation (mpmath quadrature) of Smirnov's formula with the
    closed-form Fredholm determinant D(u) = -cos(pi sqrt(1+4u)/2) / (pi u) [derived]."""
    z = mp.mpf(z)
    tot, k = mp.mpf(0), 1
    while True:
        a, b = (2 * k - 1) * 2 * k, 2 * k * (2 * k + 1)
        if z * (a - 2) / 2 > 60:
            break
        f = lambda u: mp.exp(-z * (u - 2) / 2) / mp.sqrt(u * abs(mp.cos(mp.pi * mp.sqrt(1 + 4 * u) / 2)))
        tot += (-1) ** (k + 1) * mp.quad(f, mp.linspace(a, b, 5))
        k += 1
    return tot / mp.sqrt(mp.pi) * mp.exp(-z)


# z = 0.1: the mpmath reference takes ~20 s (slow); the other points stay in the fast run
@pytest.mark.parametrize("z", [pytest.param(0.1, marks=pytest.mark.slow), 0.5, 1.0, 2.0, 5.0, 30.0, 300.0, 700.0])
def test_limit_vs_mpmath_quadrature(z):
    ref = _smirnov_tail_mp(z)
    assert adinf_sf(z) == pytest.approx(float(ref), rel=1e-11)


def test_limit_moments():
    # A^2_inf = sum_j chi2_1 / (j (j+1)) [Anderson & Darling 1954], so exactly
    # E = sum 1/(j(j+1)) = 1 and E[A^4] = Var + 1 = 2 (pi^2/3 - 3) + 1 [derived].
    # E X = int_0^inf P(X > z) dz, E X^2 = 2 int_0^inf z P(X > z) dz.
    m1 = integrate.quad(adinf_sf, 0, np.inf, limit=200, epsabs=1e-12)[0]
    m2 = 2 * integrate.quad(lambda z: z * adinf_sf(z), 0, np.inf, limit=200, epsabs=1e-12)[0]
    assert m1 == pytest.approx(1.0, abs=1e-8)
    assert m2 == pytest.approx(2 * (math.pi**2 / 3 - 3) + 1, abs=1e-8)


def test_limit_far_tail_asymptote():
    # leading term of the tail: sqrt(3) erfc(sqrt(z)) [derived: largest weight 1/2, and
    # prod_{j>=2} (1 - 2/(j(j+1)))^(-1/2) = sqrt(3)]; relative gap O(1/z)
    for z in (1e3, 5e4):
        lg = ad_log10_pvalue(z, None)
        ref = math.log10(math.sqrt(3)) + float(mp.log10(mp.erfc(mp.sqrt(z))))
        assert abs(lg - ref) < 0.5 / z
    # never 0: p far below the double range is the floor, its log10 stays finite
    assert ad_pvalue(2000.0, 100) == P_FLOOR > 0
    assert -880 < ad_log10_pvalue(2000.0, 100) < -860
    assert ad_pvalue(0.0, 5) == 1.0 and ad_pvalue(-1.0, None) == 1.0


# -------------------------------------------------------- finite n


def test_n1_exact_distribution_vs_monte_carlo():
    # n = 1 uses P(A^2_1 > z) = 1 - sqrt(1 - 4 exp(-1 - z)) [derived]; check it by simulation
    # (200,000 draws, fixed seed; 4.5 binomial standard errors: false failure ~1e-5 per point)
    rng = np.random.default_rng(12)
    a2 = _a2_rows(rng.random((200_000, 1)))
    for z in (0.5, 1.0, 2.0, 4.0):
        mc = np.mean(a2 >= z)
        se = math.sqrt(mc * (1 - mc) / a2.size)
        assert ad_pvalue(z, 1) == pytest.approx(mc, abs=4.5 * se)


@pytest.mark.parametrize("n, reps", [(10, 400_000), (100, 40_000)])
def test_finite_n_vs_monte_carlo(n, reps):
    # fixed-seed Monte Carlo of A^2_n; assert |ad_pvalue - empirical| < 4.5 binomial standard
    # errors (+ 3e-4 for the documented accuracy of the M&M (2004) correction).  Per point the
    # chance of a false failure is ~1e-5.
    rng = np.random.default_rng(2004 + n)
    chunks = [_a2_rows(rng.random((min(reps, 50_000), n))) for _ in range(reps // min(reps, 50_000))]
    a2 = np.concatenate(chunks)
    for z in (0.3, 0.5, 1.0, 1.5, 2.492, 3.857, 5.0, 6.0):
        mc = np.mean(a2 >= z)
        se = math.sqrt(mc * (1 - mc) / a2.size)
        assert ad_pvalue(z, n) == pytest.approx(mc, abs=4.5 * se + 3e-4)
    if n == 10:
        # the test has power: at n = 10 the limiting distribution alone is off by > 6 s.e.
        mc = np.mean(a2 >= 0.5)
        se = math.sqrt(mc * (1 - mc) / a2.size)
        assert abs(adinf_sf(0.5) - mc) > 6 * se


def test_monotone_and_continuous():
    # p decreases in A^2; M&M's pieces meet at x = 0.8 with a jump of at most ~1e-4/n, and the
    # far-tail form is continuous at AD_TAIL_SWITCH by construction
    for n in (2, 5, 10, 100, 10**6, None):
        zs = np.linspace(0.05, 20, 2000)
        ps = np.array([ad_pvalue(z, n) for z in zs])
        assert np.all(np.diff(ps) <= 1e-4)
        below = ad_pvalue(AD_TAIL_SWITCH - 1e-9, n)
        above = ad_pvalue(AD_TAIL_SWITCH + 1e-9, n)
        assert above == pytest.approx(below, rel=1e-6)


def test_large_n_tends_to_limit():
    for z in (0.5, 2.0, 8.0, 40.0):
        assert ad_pvalue(z, 10**7) == pytest.approx(adinf_sf(z), rel=1e-5)


def test_ad_uniform_power_and_calibration():
    rng = np.random.default_rng(21)
    a2, p = ad_uniform(rng.random(10_000))
    assert p > 1e-3  # a fair sample (fixed seed); a false failure would have chance 1e-3
    a2b, pb = ad_uniform(rng.random(10_000) ** 1.1)  # distorted: A^2 far out
    assert pb < 1e-10 and a2b > a2
    with pytest.raises(ValueError):
        ad_pvalue(float("nan"), 10)
    with pytest.raises(ValueError):
        ad_pvalue(1.0, 0)
