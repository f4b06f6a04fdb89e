"""Gap test (Knuth TAOCP Vol. 2 §3.3.2 C)."""

import numpy as np
import pytest
from scipy import stats

from rngassay.checks.classic.gap import _gap_counts, check_gap, default_t, gap_probabilities
from rngassay.checks.registry import REGISTRY
from rngassay.errors import InputError
from rngassay.generators import make_generator


def pcg(seed, n):
    return np.random.Generator(np.random.PCG64(seed)).random(n)


@pytest.mark.parametrize("p,t", [(0.5, 16), (1 / 16, 168), (0.1, 5), (0.9, 3)])
def test_probabilities_are_the_geometric_law(p, t):
    # check-values.md §5: p_r = p (1-p)^r for r < t, p_t = (1-p)^t; scipy.stats.geom counts trials,
    # so a gap of r failures is geom.pmf(r + 1) and "r >= t" is geom.sf(t)
    pr = gap_probabilities(p, t)
    r = np.arange(t)
    assert np.allclose(pr[:t], stats.geom.pmf(r + 1, p), rtol=1e-12, atol=0)
    assert pr[t] == pytest.approx(stats.geom.sf(t, p), rel=1e-12)
    assert pr[:t] == pytest.approx(p * (1 - p) ** r, rel=1e-12)  # the formula itself
    assert pr.sum() == pytest.approx(1.0, abs=1e-13)


def reference_gaps(u, a, b, t):
    """The gap-counting procedure of Knuth §3.3.2 C, written out plainly (all complete gaps)."""
    counts = [0] * (t + 1)
    r = 0
    for x in u:
        if a <= x < b:
            counts[min(r, t)] += 1
            r = 0
        else:
            r += 1
    return counts, r


def test_counts_match_plain_algorithm():
    u = pcg(7, 5000)
    for a, b, t in [(0.0, 0.5, 6), (0.3, 0.4, 20), (0.9375, 1.0, 40)]:
        c, tail = _gap_counts(u, a, b, t)
        rc, rtail = reference_gaps(u.tolist(), a, b, t)
        assert c.tolist() == rc and tail == rtail


def test_statistic_matches_scipy_on_pooled_cells():
    u = pcg(8, 20_000)
    r = check_gap(u, a=0.0, b=0.5, t=8)
    c, _ = _gap_counts(u, 0.0, 0.5, 8)
    e = c.sum() * gap_probabilities(0.5, 8)
    assert np.all(e >= 5)  # no pooling at this size
    ref = stats.chisquare(c, e)  # scipy.stats reference, 8 d.o.f.
    assert r.statistic == pytest.approx(ref.statistic, rel=1e-10)
    assert r.p_value == pytest.approx(ref.pvalue, rel=1e-8)
    assert r.name == "gap a=0 b=0.5 t=8"


def test_calibration():
    # 200 PCG64 replicates per interval: p-values uniform (KS p > 1e-3; fixed seeds)
    for (a, b, t, n) in [(0.0, 0.5, 8, 2000), (0.9375, 1.0, 40, 20_000), (0.25, 0.5, 12, 3000)]:
        rs = [check_gap(pcg(300 + s, n), a=a, b=b, t=t) for s in range(200)]
        assert stats.kstest([x.p_value for x in rs], "uniform").pvalue > 1e-3
        assert stats.kstest([x.p_left for x in rs], "uniform").pvalue > 1e-3


def test_power_lcg_low_byte():
    # low byte of an LCG mod 2^32 moved to the top: period 256 (Knuth §3.2.1.1, from memory)
    w = make_generator("lcg32", 1).read(4 * 50_000).view("<u4")
    u = (w & np.uint32(0xFF)) * 2.0**-8 + (w >> np.uint32(8)) * 2.0**-32
    assert check_gap(u, a=0.0, b=0.5, t=10).p_value < 1e-50


def test_bad_parameters():
    with pytest.raises(InputError):
        check_gap(pcg(1, 100), a=0.5, b=0.5)
    with pytest.raises(InputError):
        check_gap(pcg(1, 100), a=0.0, b=1.0)
    # too few gaps for two pooled classes: judged on the number of hits in [a, b) instead
    r = check_gap(pcg(1, 20), a=0.0, b=0.1, t=5)
    assert r.details["fallback"] == "hits in [a, b)" and r.kind == "discrete"


def test_interval_never_hit_fails_through_the_fallback():
    # uniforms confined to [0, 0.5) (e.g. 31-bit words read as 32-bit) never enter [0.9375, 1):
    # Binomial(n, 1/16) at 0 hits has P = (15/16)^n (exact formula)
    u = pcg(2, 4000) * 0.5
    r = check_gap(u, a=0.9375, b=1.0, t=8)
    assert r.statistic == 0 and r.p_left == pytest.approx((15 / 16) ** 4000, rel=1e-9)


def test_registry_defaults():
    spec = REGISTRY["gap"]
    p = spec.default_params(8 << 20)
    assert [(q["a"], q["b"]) for q in p] == [(0.0, 0.5), (0.9375, 1.0)]
    for q in p:
        pr = q["b"] - q["a"]
        # the lumped class keeps >= 10 expected gaps (about n p gaps)
        assert (8 << 20) * pr * gap_probabilities(pr, q["t"])[-1] >= 10
    assert default_t(8 << 20, 1 / 16) == 168
    assert spec.default_params(10) == []
