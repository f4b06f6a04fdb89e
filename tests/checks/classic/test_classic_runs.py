"""Runs-up / runs-down test (Knuth TAOCP Vol. 2 §3.3.2 G, covariance form)."""

import itertools
from fractions import Fraction
from math import factorial

import numpy as np
import pytest
from scipy import stats

from rngassay.checks.classic.runs import (
    check_runs,
    run_counts,
    runs_up_a,
    runs_up_a_exact,
    runs_up_b,
    runs_up_linear_moments,
    runs_up_moments,
)
from rngassay.checks.registry import REGISTRY
from rngassay.errors import InputError

# check-values.md §5, Knuth §3.3.2 G: the matrix a_ij as printed [memory; a Monte-Carlo inverse
# covariance agreed within 1%]
KNUTH_A = {
    (1, 1): 4529.4, (1, 2): 9044.9, (1, 3): 13568, (1, 4): 18091, (1, 5): 22615, (1, 6): 27892,
    (2, 2): 18097, (2, 3): 27139, (2, 4): 36187, (2, 5): 45234, (2, 6): 55789,
    (3, 3): 40721, (3, 4): 54281, (3, 5): 67852, (3, 6): 83685,
    (4, 4): 72414, (4, 5): 90470, (4, 6): 111580,
    (5, 5): 113262, (5, 6): 139476,
    (6, 6): 172860,
}


def brute_force_moments(n):
    """Mean and covariance of the run-up counts over all n! orderings (exhaustive enumeration)."""
    total = factorial(n)
    s1 = np.zeros(6, dtype=object)
    s2 = np.zeros((6, 6), dtype=object)
    for perm in itertools.permutations(range(n)):
        c = run_counts(np.array(perm, dtype=np.float64))
        c = np.array([int(x) for x in c], dtype=object)
        s1 += c
        s2 += np.outer(c, c)
    mean = [Fraction(int(x), total) for x in s1]
    cov = [[Fraction(int(s2[i, j]), total) - mean[i] * mean[j] for j in range(6)] for i in range(6)]
    return mean, cov


def test_b_matches_knuth_closed_form():
    # check-values.md §5 [derived]: b_i = i/(i+1)! - (i+1)/(i+2)! for i < 6, b_6 = 6/7! (= 1/840)
    expect = [Fraction(i, factorial(i + 1)) - Fraction(i + 1, factorial(i + 2)) for i in range(1, 6)]
    expect.append(Fraction(6, factorial(7)))
    assert list(runs_up_b()) == expect
    assert list(runs_up_b()) == [Fraction(1, 6), Fraction(5, 24), Fraction(11, 120), Fraction(19, 720),
                                 Fraction(29, 5040), Fraction(1, 840)]


def test_derived_a_matches_knuth_table():
    # check-values.md §5 [memory]: derived exact inverse covariance vs Knuth's printed a_ij, to 0.1%.
    # (measured agreement: 1.7e-5 relative at worst, i.e. the printed rounding to 5 digits)
    a = runs_up_a()
    assert np.allclose(a, a.T)
    for (i, j), v in KNUTH_A.items():
        assert a[i - 1, j - 1] == pytest.approx(v, rel=1e-3), (i, j)
        assert a[i - 1, j - 1] == pytest.approx(v, rel=3e-5), (i, j)


@pytest.mark.parametrize("n", [6, 7, 8])
def test_exact_moments_match_exhaustive_enumeration(n):
    # outside check: every ordering of n distinct values enumerated (n! of them)
    mean, cov = runs_up_moments(n)
    bm, bc = brute_force_moments(n)
    assert mean == bm
    assert cov == bc


def test_moments_are_linear_from_n_12():
    b, e0, S, I = runs_up_linear_moments()
    for n in (12, 14, 16):
        mean, cov = runs_up_moments(n)
        assert mean == [n * b[i] + e0[i] for i in range(6)]
        assert cov == [[n * S[i][j] + I[i][j] for j in range(6)] for i in range(6)]
    # a is the exact inverse of S
    A = runs_up_a_exact()
    for i in range(6):
        for j in range(6):
            assert sum(A[i][k] * S[k][j] for k in range(6)) == (1 if i == j else 0)


def test_run_counts_small_example():
    # Knuth §3.3.2 G's example [memory]: "1 2 9 8 5 3 6 7 0 4" has runs up |1 2 9|8|5|3 6 7|0 4|,
    # lengths 3, 1, 1, 3, 2 (checked by hand).
    u = np.array([1, 2, 9, 8, 5, 3, 6, 7, 0, 4], dtype=np.float64)
    assert run_counts(u).tolist() == [2, 1, 2, 0, 0, 0]
    # runs down: |1|2|9 8 5 3|6|7 0|4| -> lengths 1, 1, 4, 1, 2, 1
    assert run_counts(u, "down").tolist() == [4, 1, 0, 1, 0, 0]
    assert run_counts(-u).tolist() == run_counts(u, "down").tolist()
    assert run_counts(np.arange(20.0)).tolist() == [0, 0, 0, 0, 0, 1]


def test_statistic_is_knuths_quadratic_form_with_the_printed_matrix():
    u = np.random.Generator(np.random.PCG64(11)).random(20_000)
    r = check_runs(u)
    c = np.array(r.details["counts"], dtype=np.float64)
    b = np.array([1 / 6, 5 / 24, 11 / 120, 19 / 720, 29 / 5040, 1 / 840])
    a = np.zeros((6, 6))
    for (i, j), v in KNUTH_A.items():
        a[i - 1, j - 1] = a[j - 1, i - 1] = v
    d = c - u.size * b
    v = d @ a @ d / (u.size - 6)  # Knuth §3.3.2 G, formula for V with the printed a_ij
    # the printed a_ij are rounded (half a unit of the last digit shown: 0.05 for a11, a12, else 0.5);
    # V is sensitive to that (A is ill-conditioned), so allow the propagated rounding error
    half = np.full((6, 6), 0.5)
    half[0, 0] = half[0, 1] = half[1, 0] = 0.05
    slack = np.abs(d) @ half @ np.abs(d) / (u.size - 6)
    assert abs(r.statistic - v) <= slack
    assert r.statistic == pytest.approx(d @ runs_up_a() @ d / (u.size - 6), rel=1e-12)
    assert r.p_value == pytest.approx(stats.chi2.sf(r.statistic, 6), rel=1e-9)  # scipy reference
    assert r.p_left == pytest.approx(stats.chi2.cdf(r.statistic, 6), rel=1e-9)
    assert r.details["v_exact_moments"] == pytest.approx(r.statistic, rel=0.05, abs=0.05)
    assert r.name == "runs up" and r.null == "chi2(df=6)" and r.n == 20_000


@pytest.mark.slow
@pytest.mark.parametrize("direction", ["up", "down"])
def test_calibration_pcg64(direction):
    # 300 replicates of n = 4000 (Knuth's suggested minimum): p-values uniform.  KS at p > 1e-3
    # (fixed seeds: a sound check fails this with probability 1e-3, once, deterministically).
    ps = []
    for seed in range(300):
        u = np.random.Generator(np.random.PCG64([seed, 17])).random(4000)
        ps.append(check_runs(u, direction).p_value)
    assert stats.kstest(ps, "uniform").pvalue > 1e-3


def test_detects_sticky_sequence():
    # a random walk mod 1 with small steps has long runs: V explodes
    rng = np.random.Generator(np.random.PCG64(3))
    u = np.mod(np.cumsum(rng.normal(0.0, 0.05, 50_000)), 1.0)
    assert check_runs(u).p_value < 1e-10
    assert check_runs(u, "down").p_value < 1e-10


def test_registry_and_errors():
    for d in ("up", "down"):
        spec = REGISTRY[f"runs {d}"]
        assert spec.view == "uniforms" and spec.kind == "continuous" and spec.family == "classic"
        assert spec.default_params(3999) == []
        (p,) = spec.default_params(10_000)
        assert p == {"direction": d, "n": 10_000} and spec.values_needed(p) == 10_000
    with pytest.raises(InputError):
        check_runs(np.zeros(999))
    with pytest.raises(InputError):
        check_runs(np.zeros(5000), direction="sideways")
    with pytest.raises(InputError):
        check_runs(np.zeros(5000), n=6000)
