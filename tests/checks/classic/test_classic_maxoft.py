"""Maximum-of-t test (Knuth TAOCP Vol. 2 §3.3.2 G)."""

import numpy as np
import pytest
from scipy import stats

from rngassay.checks.classic.maxoft import check_maximum_of_t, max_power
from rngassay.checks.registry import REGISTRY
from rngassay.errors import InputError
from rngassay.generators import make_generator
from rngassay.stats import ad_statistic


def pcg(seed, n):
    return np.random.Generator(np.random.PCG64(seed)).random(n)


def test_max_power_and_ks_match_scipy():
    u = pcg(11, 30_001)
    v = max_power(u, 3)
    ref_v = u[:30_000].reshape(-1, 3).max(axis=1) ** 3
    assert np.allclose(v, ref_v, rtol=1e-14, atol=0)
    r = check_maximum_of_t(u, t=3)
    ref = stats.kstest(ref_v, "uniform", method="exact")  # scipy.stats reference
    assert r.statistic == pytest.approx(ref.statistic, rel=1e-12)
    assert r.p_value == pytest.approx(ref.pvalue, rel=1e-6)
    assert r.n == 30_000 and r.details["groups"] == 10_000


def test_maximum_has_beta_t_1_law():
    # the maximum of t uniforms has CDF x^t, i.e. Beta(t, 1) (Knuth §3.3.2 G): V = max^t is
    # uniform, and the un-powered maxima are Beta(t, 1) by scipy's own test
    u = pcg(12, 40_000)
    m = u.reshape(-1, 4).max(axis=1)
    assert stats.kstest(m, stats.beta(4, 1).cdf).pvalue > 1e-3
    assert stats.kstest(m, "uniform").pvalue < 1e-100


def test_ad_variant_matches_stats_core():
    u = pcg(13, 8000)
    r = check_maximum_of_t(u, t=8, stat="ad")
    v = u.reshape(-1, 8).max(axis=1) ** 8
    assert r.statistic == pytest.approx(ad_statistic(v), abs=1e-9)
    assert r.name == "maximum-of-t t=8 stat=ad"


@pytest.mark.parametrize("t,stat", [(3, "ks"), (8, "ad"), (2, "ks")])
def test_calibration(t, stat):
    # 200 PCG64 replicates: p-values uniform (KS p > 1e-3; fixed seeds)
    p = [check_maximum_of_t(pcg(1000 + s, 300 * t), t=t, stat=stat).p_value for s in range(200)]
    assert stats.kstest(p, "uniform").pvalue > 1e-3


def test_power_lcg_low_byte():
    # low byte of an LCG mod 2^32 moved to the top: period 256 (Knuth §3.2.1.1, from memory)
    w = make_generator("lcg32", 1).read(4 * 2**18).view("<u4")
    u = (w & np.uint32(0xFF)) * 2.0**-8 + (w >> np.uint32(8)) * 2.0**-32
    assert check_maximum_of_t(u, t=3).p_value < 1e-20
    assert check_maximum_of_t(u, t=8, stat="ad").p_value < 1e-6


def test_bad_parameters():
    with pytest.raises(InputError):
        check_maximum_of_t(pcg(1, 100), t=1)
    with pytest.raises(InputError):
        check_maximum_of_t(pcg(1, 100), t=3, stat="cvm")


def test_registry_defaults():
    spec = REGISTRY["maximum-of-t"]
    assert spec.default_params(200) == []
    assert spec.default_params(10_000) == [{"n": 10_000, "t": 3, "stat": "ks"},
                                           {"n": 10_000, "t": 8, "stat": "ad"}]
