"""Checks on categorical outcomes: frequency and serial (pairs, triples)."""

import itertools
import math

import numpy as np
import pytest
from scipy import stats

from rngassay.checks.classic.categorical import (
    check_categorical_frequency,
    check_categorical_serial,
    choose_groups,
    group_sizes,
)
from rngassay.checks.registry import REGISTRY
from rngassay.errors import InputError


def die(seed, n, k=6):
    return np.random.Generator(np.random.PCG64(seed)).integers(0, k, n)


def test_frequency_matches_scipy_chisquare():
    x = die(1, 6000)
    r = check_categorical_frequency(x, k=6)
    ref = stats.chisquare(np.bincount(x, minlength=6))  # scipy.stats reference, 5 d.o.f.
    assert r.statistic == pytest.approx(ref.statistic, rel=1e-12)
    assert r.p_value == pytest.approx(ref.pvalue, rel=1e-9)
    assert r.kind == "continuous" and r.details["method"] == "chi-square"
    assert r.name == "categorical frequency k=6"


def test_frequency_exact_for_two_categories_is_the_binomial_test():
    # k = 2, 9 outcomes (4.5 expected per category < 5): exact multinomial by probability ordering
    # equals scipy's exact two-sided binomial test (same ordering rule)
    x = np.array([1, 1, 1, 1, 1, 1, 1, 1, 0])
    r = check_categorical_frequency(x, k=2)
    assert r.kind == "discrete" and r.details["method"] == "exact multinomial"
    assert r.p_value == pytest.approx(stats.binomtest(8, 9, 0.5).pvalue, rel=1e-9)
    assert r.pooled == {"counts": [1, 8], "k": 2}


def test_frequency_exact_three_categories_brute_force():
    # 12 throws of a 3-sided die, counts (8, 3, 1): p = total probability of all count vectors no
    # more probable than the observed one, by enumeration of the 3^12 sequences' count vectors
    x = np.array([0] * 8 + [1] * 3 + [2])
    r = check_categorical_frequency(x, k=3)
    n = 12

    def prob(c):
        return math.factorial(n) / math.prod(math.factorial(v) for v in c) / 3**n

    p_obs = prob((8, 3, 1))
    ref = sum(prob(c) for c in itertools.product(range(n + 1), repeat=3)
              if sum(c) == n and prob(c) <= p_obs * (1 + 1e-7))
    assert r.p_value == pytest.approx(ref, rel=1e-9)


def test_serial_nist_example():
    # NIST SP 800-22 Rev. 1a §2.11.8, eps = 0011011101, m = 3: P1 = 0.808792 (check-values.md §1):
    # the same first-difference statistic on outcomes in {0, 1}
    x = np.array([int(c) for c in "0011011101"])
    r = check_categorical_serial(x, k=2, d=3, groups=2)
    assert r.statistic == pytest.approx(1.6, abs=1e-12)
    assert r.p_value == pytest.approx(0.808792, abs=1e-6)
    assert r.name == "categorical serial k=2 d=3"


def test_grouping_rule():
    assert group_sizes(7, 3).tolist() == [3, 2, 2]  # floor(x * 3 / 7) for x = 0..6
    assert group_sizes(49, 7).tolist() == [7] * 7
    assert choose_groups(6, 2, 10_000) == 6  # 36 cells, 278 per cell
    g = choose_groups(49, 3, 3000)
    assert n_min_cell(49, g, 3, 3000) >= 5 and n_min_cell(49, g + 1, 3, 3000) < 5
    r = check_categorical_serial(die(2, 3000, 49), k=49, d=3)
    assert r.name == f"categorical serial k=49 d=3 groups={g}"
    assert r.null == f"chi2(df={g**3 - g**2})"


def n_min_cell(k, g, d, n):
    return n * (group_sizes(k, g).min() / k) ** d


@pytest.mark.parametrize("k,d,n,groups", [(6, 2, 400, None), (6, 3, 2000, None), (7, 3, 1500, 3),
                                          (49, 2, 2000, None)])
def test_serial_calibration(k, d, n, groups):
    # 200 PCG64 replicates: p-values uniform (KS p > 1e-3; fixed seeds).  (7, 3, groups=3) has
    # unequal group probabilities 3/7, 2/7, 2/7; (49, 2, n = 2000) is grouped automatically.
    rs = [check_categorical_serial(die(3000 + s, n, k), k=k, d=d, groups=groups) for s in range(200)]
    assert stats.kstest([r.p_value for r in rs], "uniform").pvalue > 1e-3
    assert stats.kstest([r.p_left for r in rs], "uniform").pvalue > 1e-3


def test_frequency_calibration():
    rs = [check_categorical_frequency(die(4000 + s, 600), k=6) for s in range(200)]
    assert stats.kstest([r.p_value for r in rs], "uniform").pvalue > 1e-3
    # small samples use the exact test: its p-values are discrete, so check the level instead:
    # P(p <= 0.05) <= 0.05 (binomial upper tail of the rejections over 400 replicates > 1e-3)
    ps = np.array([check_categorical_frequency(die(5000 + s, 15), k=6).p_value for s in range(400)])
    assert stats.binomtest(int(np.sum(ps <= 0.05)), 400, 0.05, alternative="greater").pvalue > 1e-3


def test_power_biased_die_and_sticky_die():
    rng = np.random.Generator(np.random.PCG64(6))
    loaded = rng.choice(6, 30_000, p=[0.2, 0.16, 0.16, 0.16, 0.16, 0.16])
    assert check_categorical_frequency(loaded, k=6).p_value < 1e-20
    # a die that repeats its last outcome with probability 0.05: uniform marginals, so the
    # frequency test has nothing to see, but pairs (a, a) are too common
    x = die(7, 30_000)
    rep = rng.random(30_000) < 0.05
    for i in np.flatnonzero(rep[1:]) + 1:  # loop over the few repeat positions, test code only
        x[i] = x[i - 1]
    assert check_categorical_frequency(x, k=6).p_value > 1e-3
    assert check_categorical_serial(x, k=6, d=2).p_value < 1e-20


def test_bad_input():
    with pytest.raises(InputError):
        check_categorical_frequency(np.array([0, 1, 6]), k=6)
    with pytest.raises(InputError):
        check_categorical_serial(die(1, 100), k=6, d=5)


def test_registry():
    f, s = REGISTRY["categorical frequency"], REGISTRY["categorical serial"]
    assert f.family == s.family == "categorical" and f.view == s.view == "integers"
    assert s.default_params(1000) == [{"n": 1000, "d": 2}, {"n": 1000, "d": 3}]
