"""Poker (partition) test (Knuth TAOCP Vol. 2 §3.3.2 D)."""

import itertools
from fractions import Fraction

import numpy as np
import pytest
from scipy import special, stats

from rngassay.checks.classic.poker import (
    check_poker,
    poker_probabilities,
    poker_probabilities_exact,
    stirling2,
)
from rngassay.checks.registry import REGISTRY
from rngassay.errors import InputError
from rngassay.generators import make_generator


def pcg(seed, n):
    return np.random.Generator(np.random.PCG64(seed)).random(n)


def test_stirling_numbers_match_scipy():
    # scipy.special.stirling2 (exact integers) as the outside reference
    for k in range(0, 25):
        for r in range(0, k + 1):
            assert stirling2(k, r) == int(special.stirling2(k, r, exact=True))


@pytest.mark.parametrize("d,k", [(4, 4), (3, 5), (5, 3), (2, 6), (6, 4)])
def test_probabilities_match_brute_force(d, k):
    # enumerate all d^k hands (256 for d = k = 4) and count distinct values:
    # check-values.md §5, P(r) = d(d-1)...(d-r+1)/d^k S(k, r)
    tally = [0] * (k + 1)
    for hand in itertools.product(range(d), repeat=k):
        tally[len(set(hand))] += 1
    exact = poker_probabilities_exact(d, k)
    assert list(exact) == [Fraction(tally[r], d**k) for r in range(1, k + 1)]
    assert sum(exact) == 1
    assert poker_probabilities(d, k).sum() == pytest.approx(1.0, abs=1e-15)


def test_five_decimal_digit_hands():
    # the classic poker hands of five decimal digits (d = 10, k = 5) [from memory, common
    # knowledge]: five alike 0.0001, four alike + full house 0.0045 + 0.009, two pairs + three
    # alike 0.108 + 0.072, one pair 0.504, all different 0.3024
    assert poker_probabilities(10, 5) == pytest.approx([0.0001, 0.0135, 0.18, 0.504, 0.3024], abs=1e-12)


def test_counts_and_statistic():
    u = pcg(5, 50_000)
    r = check_poker(u, d=8, k=5)
    y = np.floor(u[: 10_000 * 5] * 8).astype(int).reshape(-1, 5)
    distinct = np.array([len(set(h)) for h in y.tolist()])
    counts = np.bincount(distinct, minlength=6)[1:]
    assert r.details["counts_by_distinct"] == counts.tolist()
    # r = 1 (2.4 expected) pooled with r = 2, as the stats core does; scipy reference, 3 d.o.f.
    e = counts.sum() * poker_probabilities(8, 5)
    po = np.array([counts[:2].sum(), counts[2], counts[3], counts[4]])
    pe = np.array([e[:2].sum(), e[2], e[3], e[4]])
    assert e[0] < 5 <= e[:2].sum()
    ref = stats.chisquare(po, pe)
    assert r.statistic == pytest.approx(ref.statistic, rel=1e-10)
    assert r.p_value == pytest.approx(ref.pvalue, rel=1e-8)


@pytest.mark.parametrize("d,k,n", [(8, 5, 2500), (32, 8, 8000), (4, 4, 800)])
def test_calibration(d, k, n):
    # 200 PCG64 replicates: p-values uniform (KS p > 1e-3; fixed seeds)
    rs = [check_poker(pcg(400 + s, n), d=d, k=k) for s in range(200)]
    assert stats.kstest([x.p_value for x in rs], "uniform").pvalue > 1e-3
    assert stats.kstest([x.p_left for x in rs], "uniform").pvalue > 1e-3


def test_power_lcg_low_byte():
    # low byte of an LCG mod 2^32 moved to the top: period 256 (Knuth §3.2.1.1, from memory)
    w = make_generator("lcg32", 1).read(4 * 50_000).view("<u4")
    u = (w & np.uint32(0xFF)) * 2.0**-8 + (w >> np.uint32(8)) * 2.0**-32
    assert check_poker(u, d=8, k=5).p_value < 1e-20


def test_bad_parameters():
    with pytest.raises(InputError):
        check_poker(pcg(1, 100), d=1, k=5)
    with pytest.raises(InputError):  # 4 hands: nothing left after pooling
        check_poker(pcg(1, 20), d=8, k=5)


def test_registry_defaults():
    spec = REGISTRY["poker"]
    assert spec.default_params(100) == []
    assert spec.default_params(1 << 20) == [{"n": 1 << 20, "d": 8, "k": 5}, {"n": 1 << 20, "d": 32, "k": 8}]
