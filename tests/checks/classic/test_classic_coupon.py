"""Coupon-collector test (Knuth TAOCP Vol. 2 §3.3.2 E)."""

import itertools
from fractions import Fraction

import numpy as np
import pytest
from scipy import stats

from rngassay.checks.classic.coupon import (
    _coupon_counts,
    check_coupon,
    coupon_probabilities,
    coupon_probabilities_exact,
    default_t,
)
from rngassay.checks.registry import REGISTRY
from rngassay.errors import InputError
from rngassay.generators import make_generator


def pcg(seed, n):
    return np.random.Generator(np.random.PCG64(seed)).random(n)


def markov_chain_law(d, t):
    """Independent exact computation: the number of distinct values seen is a Markov chain
    j -> j + 1 with probability (d - j)/d; the segment ends on entering j = d."""
    dist = [Fraction(0)] * (d + 1)
    dist[0] = Fraction(1)
    out = []
    for _ in range(1, t):
        new = [Fraction(0)] * (d + 1)
        for j in range(d):
            new[j] += dist[j] * Fraction(j, d)
            new[j + 1] += dist[j] * Fraction(d - j, d)
        out.append(new[d])  # P(length = step)
        new[d] = Fraction(0)
        dist = new
    probs = out[d - 1:]  # lengths d..t-1
    return probs + [1 - sum(out)]


@pytest.mark.parametrize("d,t", [(2, 10), (3, 12), (5, 25), (8, 40)])
def test_probabilities_match_markov_chain(d, t):
    exact = coupon_probabilities_exact(d, t)
    assert list(exact) == markov_chain_law(d, t)
    assert sum(exact) == 1
    assert coupon_probabilities(d, t).sum() == pytest.approx(1.0, abs=1e-14)


def test_probabilities_match_enumeration_d3():
    # brute force: all 3^r sequences; length = first position where all 3 values have appeared
    d, t = 3, 9
    exact = coupon_probabilities_exact(d, t)
    for r in range(d, t):
        hits = sum(1 for s in itertools.product(range(d), repeat=r)
                   if len(set(s)) == d and len(set(s[:-1])) == d - 1)
        assert exact[r - d] == Fraction(hits, d**r)


def test_mean_segment_length():
    # expected length d H_d (the coupon collector's problem; common practice)
    d = 8
    p = coupon_probabilities(d, 400)
    mean = float(np.dot(np.arange(d, 400), p[:-1]))
    assert p[-1] < 1e-20
    assert mean == pytest.approx(d * sum(1 / j for j in range(1, d + 1)), rel=1e-12)


def test_counts_match_plain_algorithm():
    u = pcg(9, 3000)
    d, t = 4, 15
    c, tail = _coupon_counts(u, d, t)
    ref = [0] * (t - d + 1)
    seen, r = set(), 0
    for x in np.floor(u * d).astype(int).tolist():  # Knuth §3.3.2 E written out
        r += 1
        seen.add(x)
        if len(seen) == d:
            ref[min(r, t) - d] += 1
            seen, r = set(), 0
    assert c.tolist() == ref and tail == r


@pytest.mark.parametrize("d,t,n", [(4, 16, 3000), (8, 40, 8000), (32, 200, 40_000)])
def test_calibration(d, t, n):
    # 200 PCG64 replicates: p-values uniform (KS p > 1e-3; fixed seeds)
    rs = [check_coupon(pcg(600 + s, n), d=d, t=t) for s in range(200)]
    assert stats.kstest([x.p_value for x in rs], "uniform").pvalue > 1e-3
    assert stats.kstest([x.p_left for x in rs], "uniform").pvalue > 1e-3


def test_power_lcg_low_bits():
    # the low 16 bits of an LCG mod 2^32 have period 2^16 (Knuth §3.2.1.1, from memory):
    # four periods repeat every segment four times
    w = make_generator("lcg32", 1).read(4 * 2**18).view("<u4")
    u = (w & np.uint32(0xFFFF)) * 2.0**-16
    assert check_coupon(u, d=8, t=40).p_value < 1e-30


def test_bad_parameters():
    with pytest.raises(InputError):
        check_coupon(pcg(1, 1000), d=8, t=8)
    # too few complete segments: judged on the value frequencies instead
    assert check_coupon(pcg(1, 30), d=8, t=30).details["fallback"] == "value frequencies"


def test_registry_defaults():
    spec = REGISTRY["coupon collector"]
    assert spec.default_params(100) == []
    p = spec.default_params(8 << 20)
    assert [q["d"] for q in p] == [8, 32]
    for q in p:
        segs = (8 << 20) / (q["d"] * sum(1 / j for j in range(1, q["d"] + 1)))
        assert segs * coupon_probabilities(q["d"], q["t"])[-1] >= 10
    assert default_t(8 << 20, 8) == p[0]["t"]
