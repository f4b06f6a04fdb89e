"""Quantile-transform checks: targets against scipy.stats, the inverse-CDF identity, calibration, power."""

import numpy as np
import pytest
from scipy import stats

from rngassay.checks.catalog import load_all
from rngassay.checks.transform._common import CONTINUOUS_TARGETS, DISCRETE_TARGETS
from rngassay.checks.transform.quantile import check_quantile_transform, transform
from rngassay.stats import ad_statistic


def pcg(seed):
    return np.random.Generator(np.random.PCG64(seed))


@pytest.mark.parametrize("name", list(CONTINUOUS_TARGETS))
def test_continuous_targets_agree_with_scipy(name):
    # reference: scipy.stats ppf / logcdf / logsf of the same law
    t = CONTINUOUS_TARGETS[name]
    ref = t.scipy()
    u = np.concatenate([pcg(1).random(2000), [1e-300, 2.0**-53, 1e-9, 0.5, 1 - 1e-9, 1 - 2.0**-53]])
    bulk = (u > 1e-6) & (u < 1 - 1e-6)  # scipy's tan(pi (u - 1/2)) for the Cauchy loses digits in the tails
    np.testing.assert_allclose(t.ppf(u)[bulk], ref.ppf(u[bulk]), rtol=1e-9, atol=1e-12)
    x = ref.ppf(u[bulk])
    np.testing.assert_allclose(t.logcdf(x), ref.logcdf(x), rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(t.logsf(x), ref.logsf(x), rtol=1e-9, atol=1e-12)
    # in the far tails our forms keep relative precision: F(F^-1(u)) = u to ~1e-12 relative
    tail = u < 1e-6
    np.testing.assert_allclose(np.exp(t.logcdf(t.ppf(u[tail]))), u[tail], rtol=1e-9)


def test_cauchy_ppf_is_exact_in_the_lower_tail():
    # exact formula: the Cauchy quantile is -cot(pi u) = -1 / tan(pi u) ~ -1 / (pi u) for tiny u
    u = np.array([1e-300, 1e-100, 2.0**-53])
    np.testing.assert_allclose(CONTINUOUS_TARGETS["cauchy"].ppf(u), -1.0 / (np.pi * u), rtol=1e-12)


@pytest.mark.parametrize("name", list(DISCRETE_TARGETS))
def test_discrete_tables_agree_with_scipy(name):
    # reference: scipy.stats pmf and ppf of Poisson(3), binomial(10, 0.3), geometric(0.2)
    t = DISCRETE_TARGETS[name]
    ref = t.scipy()
    tab = t.table()
    k = np.arange(tab.lo, tab.hi)
    np.testing.assert_allclose(tab.pmf[:-1], ref.pmf(k), rtol=1e-12, atol=1e-300)
    assert abs(tab.pmf.sum() - 1.0) < 1e-12
    u = np.concatenate([pcg(2).random(5000), [1e-12, 0.5, 1 - 1e-12]])
    np.testing.assert_array_equal(tab.ppf(u), ref.ppf(u).astype(np.int64))
    # the definition min{k : F(k) >= u}, checked with scipy's sf also where scipy's own ppf rounds
    # (geometric at u = 1 - 2^-53: S(164) = 0.8^164 = 1.3e-16 > 2^-53, so the quantile is 165)
    u = np.concatenate([u, [1 - 2.0**-53, 1 - 2.0**-52, 2.0**-53]])
    k = tab.ppf(u)
    lo_half = u <= 0.5
    assert np.all(ref.cdf(k[lo_half]) >= u[lo_half]) and np.all(ref.cdf(k[lo_half] - 1) < u[lo_half])
    hi_half = ~lo_half
    assert np.all(ref.sf(k[hi_half]) <= 1 - u[hi_half]) and np.all(ref.sf(k[hi_half] - 1) > 1 - u[hi_half])


def test_named_scipy_probabilities():
    # scipy.stats as reference for the exact values in the tables
    pois = DISCRETE_TARGETS["poisson(mu=3)"].table()
    assert pois.pmf[0] == pytest.approx(np.exp(-3.0), rel=1e-14)  # exact formula e^-mu
    assert pois.pmf[3] == pytest.approx(27 / 6 * np.exp(-3.0), rel=1e-14)  # mu^k e^-mu / k!
    binom = DISCRETE_TARGETS["binomial(n=10 p=0.3)"].table()
    assert binom.pmf[3] == pytest.approx(120 * 0.3**3 * 0.7**7, rel=1e-13)  # C(10,3) p^3 q^7
    geom = DISCRETE_TARGETS["geometric(p=0.2)"].table()
    assert geom.lo == 1 and geom.pmf[2] == pytest.approx(0.8**2 * 0.2, rel=1e-13)  # q^(k-1) p, k = 3


@pytest.mark.parametrize("name", list(CONTINUOUS_TARGETS))
def test_inverse_cdf_identity_continuous(name):
    # check-values.md §7 (common practice): F^-1(U) has distribution F; KS against scipy's F.
    # Fixed seed; a sound transform fails p > 1e-3 with probability 1e-3.
    x = transform(pcg(10 + len(name)).random(20000), name)
    assert stats.kstest(x, CONTINUOUS_TARGETS[name].scipy().cdf).pvalue > 1e-3


@pytest.mark.parametrize("name", list(DISCRETE_TARGETS))
def test_inverse_cdf_identity_discrete(name):
    # check-values.md §7: F^-1(U) has law F; counts against scipy's pmf (scipy.stats.chisquare)
    t = DISCRETE_TARGETS[name]
    x = transform(pcg(20 + len(name)).random(50000), name)
    ref = t.scipy()
    k = np.arange(t.table().lo, 12 + t.table().lo)
    obs = np.array([np.count_nonzero(x == v) for v in k] + [np.count_nonzero(x > k[-1])])
    exp = np.append(ref.pmf(k), ref.sf(k[-1])) * x.size
    keep = exp >= 5
    obs = np.append(obs[keep], obs[~keep].sum())
    exp = np.append(exp[keep], exp[~keep].sum())
    if exp[-1] == 0:
        obs, exp = obs[:-1], exp[:-1]
    assert stats.chisquare(obs, exp).pvalue > 1e-3


def test_exact_transform_gives_the_uniform_anderson_darling():
    # the docstring's honest claim: for an exact transform A2 against F equals the uniform A2
    u = pcg(3).random(4096)
    base = ad_statistic(u)
    for name in ("normal", "exponential", "cauchy"):
        assert check_quantile_transform(u, target=name).statistic == pytest.approx(base, rel=1e-9, abs=1e-9)


def test_zero_is_left_out_and_counted():
    u = pcg(4).random(5000)
    u[17] = 0.0
    r = check_quantile_transform(u, target="normal")
    assert r.details["at_endpoint"] == 1 and r.details["non_finite"] == 1 and np.isfinite(r.statistic)
    r = check_quantile_transform(u, target="exponential")  # -log1p(-0) = 0: at the support's edge, finite
    assert r.details["at_endpoint"] == 1 and r.details["non_finite"] == 0


@pytest.mark.parametrize("name", ["normal", "gamma(a=2)", "poisson(mu=3)", "geometric(p=0.2)"])
def test_calibration(name):
    # H0 p-values uniform: 200 replicates of 2000 PCG64 uniforms, KS of the p-values (p > 1e-3, fixed seeds)
    ps = [check_quantile_transform(pcg(1000 + i).random(2000), target=name).p_value for i in range(200)]
    assert stats.kstest(ps, "uniform").pvalue > 1e-3


def test_power_against_clipped_uniforms():
    # uniforms kept inside [0.001, 0.999]: the geometric target's long tail sees the pile-up at once,
    # Anderson-Darling (like the uniform AD test) hardly notices a 0.1% atom at each end
    u = pcg(5).random(1 << 16)
    v = np.clip(u, 1e-3, 1 - 1e-3)
    assert check_quantile_transform(v, target="geometric(p=0.2)").p_value < 1e-10
    assert check_quantile_transform(v, target="poisson(mu=3)").p_value < 1e-3
    assert check_quantile_transform(v, target="normal").p_value > 1e-3  # honest: no power at this size
    v = np.clip(u, 1e-2, 1 - 1e-2)  # a 1% atom at each end: AD notices too
    assert check_quantile_transform(v, target="normal").p_value < 1e-3


def test_registry_defaults_scale_with_data():
    spec = load_all()["quantile transform"]
    assert spec.default_params(500) == []
    ps = spec.default_params(1 << 20)
    assert {p["target"] for p in ps} == set(CONTINUOUS_TARGETS) | set(DISCRETE_TARGETS)
    assert all(p["n"] <= 1 << 17 for p in ps)
    assert spec.family == "transform" and spec.view == "uniforms"
