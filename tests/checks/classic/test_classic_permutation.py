"""Permutation test (Knuth TAOCP Vol. 2 §3.3.2 F)."""

import itertools
import math

import numpy as np
import pytest
from scipy import stats

from rngassay.checks.classic.permutation import _perm_counts, check_permutation, lehmer_index
from rngassay.checks.registry import REGISTRY
from rngassay.errors import InputError
from rngassay.generators import make_generator


def pcg(seed, n):
    return np.random.Generator(np.random.PCG64(seed)).random(n)


@pytest.mark.parametrize("t", [2, 3, 4, 5])
def test_index_is_a_bijection_onto_t_factorial(t):
    idx = {lehmer_index(p) for p in itertools.permutations(range(t))}
    assert idx == set(range(math.factorial(t)))


@pytest.mark.parametrize("t", [3, 4, 5])
def test_counts_match_argsort_classification(t):
    # outside classification: each tuple's ordering as numpy's argsort permutation
    u = pcg(t, 12_000)
    c, ties = _perm_counts(u, t)
    tuples = u[: (u.size // t) * t].reshape(-1, t)
    perms = {p: i for i, p in enumerate(itertools.permutations(range(t)))}
    ref = np.zeros(math.factorial(t), np.int64)
    for row in np.argsort(tuples, axis=1).tolist():
        ref[perms[tuple(row)]] += 1
    assert ties == 0
    assert sorted(c.tolist()) == sorted(ref.tolist())  # same multiset of counts...
    # ... and cell for cell once the two labelings are matched
    for p, i in perms.items():
        ranks = np.empty(t, int)
        ranks[list(p)] = np.arange(t)  # values whose argsort is p
        assert c[lehmer_index(ranks.tolist())] == ref[i]
    r = check_permutation(u, t=t)
    ref_chi = stats.chisquare(ref)  # scipy.stats reference, t! - 1 d.o.f.
    assert r.statistic == pytest.approx(ref_chi.statistic, rel=1e-12)
    assert r.p_value == pytest.approx(ref_chi.pvalue, rel=1e-9)


def test_ties_are_dropped_and_counted():
    u = np.array([0.1, 0.2, 0.3, 0.5, 0.5, 0.1, 0.9, 0.8, 0.7, 0.3, 0.3, 0.3])
    c, ties = _perm_counts(u, 3)
    assert ties == 2 and c.sum() == 2
    assert c[lehmer_index([0.1, 0.2, 0.3])] == 1 and c[lehmer_index([0.9, 0.8, 0.7])] == 1


def test_ties_keep_the_test_exact():
    # 5-bit uniforms (32 values): about 18% of 4-tuples have a tie.  Dropping them keeps the
    # orderings uniform (exchangeability), so p-values stay uniform; KS p > 1e-3, fixed seeds
    rs = [check_permutation(np.floor(pcg(700 + s, 4000) * 32) / 32, t=4) for s in range(200)]
    tie_rate = np.mean([r.details["ties"] / r.details["tuples"] for r in rs])
    assert tie_rate == pytest.approx(1 - 31 * 30 * 29 / 32**3, abs=0.01)  # 1 - P(all distinct)
    assert stats.kstest([r.p_value for r in rs], "uniform").pvalue > 1e-3


@pytest.mark.parametrize("t,n", [(3, 600), (4, 2400), (5, 12_000)])
def test_calibration(t, n):
    # 200 PCG64 replicates: p-values uniform (KS p > 1e-3; fixed seeds)
    rs = [check_permutation(pcg(800 + s, n), t=t) for s in range(200)]
    assert stats.kstest([r.p_value for r in rs], "uniform").pvalue > 1e-3
    assert stats.kstest([r.p_left for r in rs], "uniform").pvalue > 1e-3


def test_power_lcg_low_byte():
    # low byte of an LCG mod 2^32 moved to the top: period 256 (Knuth §3.2.1.1, from memory)
    w = make_generator("lcg32", 1).read(4 * 50_000).view("<u4")
    u = (w & np.uint32(0xFF)) * 2.0**-8 + (w >> np.uint32(8)) * 2.0**-32
    assert check_permutation(u, t=4).p_value < 1e-50


def test_bad_input():
    with pytest.raises(InputError):
        check_permutation(pcg(1, 100), t=9)
    with pytest.raises(InputError):
        check_permutation(np.zeros(30), t=3)  # every tuple tied


def test_registry_defaults():
    spec = REGISTRY["permutation"]
    assert [p["t"] for p in spec.default_params(100)] == []
    assert [p["t"] for p in spec.default_params(100_000)] == [3, 4, 5]
    assert [p["t"] for p in spec.default_params(1500)] == [3, 4]
