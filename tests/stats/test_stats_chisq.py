"""Chi-square / G goodness of fit, pooling rule, exact multinomial test."""

from __future__ import annotations

import itertools
import math
from fractions import Fraction

import numpy as np
import pytest
from scipy import stats

from rngassay.stats import P_FLOOR, chisquare_gof, exact_multinomial_p, g_test, pooling_groups

_rng = np.random.default_rng(99)


def test_chisquare_matches_scipy_without_pooling():
    # reference: scipy.stats.chisquare (Pearson 1900), no cell below 5 expected -> no pooling
    for _ in range(40):
        k = int(_rng.integers(2, 40))
        probs = _rng.dirichlet(np.ones(k) * 5)
        n = int(_rng.integers(20 * k, 5000 * k))
        obs = _rng.multinomial(n, probs)
        if np.any(n * probs < 5):
            continue
        r = chisquare_gof(obs, probs)
        ref = stats.chisquare(obs, n * probs)
        assert r.statistic == pytest.approx(ref.statistic, rel=1e-12)
        assert r.p_value == pytest.approx(ref.pvalue, rel=1e-10)
        assert r.df == k - 1
        assert r.p_left == pytest.approx(stats.chi2.cdf(ref.statistic, k - 1), rel=1e-10)
        assert r.pooled_bins == [[i] for i in range(k)] and not r.pooled


def test_ddof_matches_scipy():
    obs = np.array([30, 25, 20, 25])
    r = chisquare_gof(obs, [0.25] * 4, ddof=1)
    ref = stats.chisquare(obs, ddof=1)  # scipy.stats reference
    assert r.df == 2
    assert r.p_value == pytest.approx(ref.pvalue, rel=1e-12)


def test_expected_counts_form():
    obs = [12, 18, 33, 37]
    r = chisquare_gof(obs, expected=[10, 20, 30, 40])
    ref = stats.chisquare(obs, [10, 20, 30, 40])  # scipy.stats reference
    assert r.statistic == pytest.approx(ref.statistic, rel=1e-14)
    assert r.p_value == pytest.approx(ref.pvalue, rel=1e-12)
    with pytest.raises(ValueError):
        chisquare_gof(obs, expected=[10, 20, 30, 42])  # sums differ


def test_g_test_matches_scipy_power_divergence():
    # reference: scipy.stats.power_divergence(lambda_="log-likelihood") (G test, Wilks 1938)
    for _ in range(20):
        k = int(_rng.integers(2, 12))
        probs = _rng.dirichlet(np.ones(k) * 5)
        n = int(_rng.integers(100 * k, 1000 * k))
        obs = _rng.multinomial(n, probs)
        if np.any(n * probs < 5):
            continue
        r = g_test(obs, probs)
        ref = stats.power_divergence(obs, n * probs, lambda_="log-likelihood")
        assert r.statistic == pytest.approx(ref.statistic, rel=1e-10)
        assert r.p_value == pytest.approx(ref.pvalue, rel=1e-8)
    # a zero cell contributes 0 to G (O ln O -> 0)
    r = g_test([0, 20, 20], expected=[5.0, 17.5, 17.5])
    assert r.statistic == pytest.approx(2 * 2 * 20 * math.log(20 / 17.5), rel=1e-14)  # hand formula


def test_pooling_rule_hand_example():
    # rule (module docstring): scan left to right, close a group once its expected >= 5;
    # a last group still below 5 joins the group before it.
    exp = [1, 2, 3, 10, 20, 10, 3, 2, 1]
    obs = [3, 1, 0, 10, 20, 10, 2, 1, 5]
    r = chisquare_gof(obs, expected=exp)
    assert r.pooled_bins == [[0, 1, 2], [3], [4], [5], [6, 7, 8]]
    np.testing.assert_array_equal(r.expected, [6, 10, 20, 10, 6])
    np.testing.assert_array_equal(r.observed, [4, 10, 20, 10, 8])
    assert r.df == 4 and r.pooled
    # hand computation: (4-6)^2/6 + 0 + 0 + 0 + (8-6)^2/6 = 4/3
    assert r.statistic == pytest.approx(4 / 3, rel=1e-14)
    assert r.p_value == pytest.approx(stats.chi2.sf(4 / 3, 4), rel=1e-12)


def test_pooling_geometric_tail():
    # gap-test-like probabilities p(1-p)^r, r < t, and (1-p)^t (Knuth 3.3.2; check-values §5)
    p, t, n = 0.5, 12, 200
    probs = np.array([p * (1 - p) ** r for r in range(t)] + [(1 - p) ** t])
    labels = pooling_groups(n * probs, 5.0)
    exp = n * probs
    groups = [np.flatnonzero(labels == g) for g in range(labels.max() + 1)]
    # every pooled cell has expected >= 5, and groups are runs of adjacent cells in order
    assert all(exp[g].sum() >= 5 for g in groups)
    assert np.all(np.diff(labels) >= 0) and labels[0] == 0
    # n*probs = 100, 50, 25, 12.5, 6.25, 3.125, ...: first five stand alone, the tail is one cell
    assert [list(g) for g in groups[:5]] == [[0], [1], [2], [3], [4]]
    assert list(groups[5]) == list(range(5, t + 1))


def test_pooling_depends_on_expected_only():
    exp = np.array([0.5, 0.5, 4.0, 30.0, 30.0, 2.0, 1.0])
    a = chisquare_gof([0, 0, 2, 30, 30, 4, 2], expected=exp)
    b = chisquare_gof([5, 0, 0, 30, 30, 0, 3], expected=exp)
    assert a.pooled_bins == [[0, 1, 2], [3], [4, 5, 6]]
    assert a.pooled_bins == b.pooled_bins


def test_no_degrees_of_freedom_raises():
    with pytest.raises(ValueError):
        chisquare_gof([1, 2, 1], [0.3, 0.4, 0.3])  # total expected 4 < 5: one pooled cell
    with pytest.raises(ValueError):
        chisquare_gof([50, 50], [0.5, 0.5], ddof=1)


def test_probability_sum_check():
    with pytest.raises(ValueError):
        chisquare_gof([10, 10, 10], [0.3, 0.3, 0.4 + 1e-6])
    chisquare_gof([10, 10, 10], [0.3, 0.3, 0.4 + 1e-12])  # within 1e-9: accepted
    # NIST SP 800-22 linear-complexity class probabilities as printed sum to 1.000053
    # (check-values.md §2 note): accepted only with an explicit looser tolerance, used as given.
    nist = [0.01047, 0.03125, 0.125, 0.5, 0.25, 0.0625, 0.020833]
    with pytest.raises(ValueError):
        chisquare_gof([11, 31, 125, 500, 250, 62, 21], nist)
    r = chisquare_gof([11, 31, 125, 500, 250, 62, 21], nist, sum_tol=1e-4)
    hand = sum((o - 1000 * q) ** 2 / (1000 * q) for o, q in zip([11, 31, 125, 500, 250, 62, 21], nist))
    assert r.statistic == pytest.approx(hand, rel=1e-12)


def test_left_tail_means_too_good():
    # observed exactly equal to expected: X^2 = 0, right tail 1, left tail P(chi2 <= 0) = 0 -> floor
    r = chisquare_gof([25, 25, 25, 25], [0.25] * 4)
    assert r.statistic == 0.0 and r.p_value == 1.0 and r.p_left == P_FLOOR
    # suspiciously even counts over 10 cells: X^2 = 0.02, df 9 -> left tail is tiny
    r = chisquare_gof([100, 100, 100, 100, 100, 100, 100, 100, 101, 99], [0.1] * 10)
    assert r.statistic == pytest.approx(0.02, rel=1e-12)
    assert r.p_left == pytest.approx(stats.chi2.cdf(0.02, 9), rel=1e-10)
    assert r.p_left < 1e-9 and r.p_value > 0.999999


def test_impossible_cell():
    r = chisquare_gof([3, 50, 47], expected=[0.0, 50.0, 50.0])
    assert r.statistic == math.inf and r.p_value == P_FLOOR and r.p_left == 1.0
    assert g_test([3, 50, 47], expected=[0.0, 50.0, 50.0]).p_value == P_FLOOR


# ------------------------------------------------------------ exact multinomial


def _brute_force_exact(obs, probs):
    """Exact definition, in rational arithmetic: sum of P(x) over all x with P(x) <= P(obs)."""
    n, k = sum(obs), len(obs)
    fr = [Fraction(p).limit_denominator(10**6) for p in probs]

    def prob(x):
        c = math.factorial(n)
        out = Fraction(1)
        for xi, pi in zip(x, fr):
            c //= math.factorial(xi)
            out *= pi**xi
        return c * out

    p_obs = prob(obs)
    total = Fraction(0)
    for head in itertools.product(range(n + 1), repeat=k - 1):
        if sum(head) <= n:
            x = (*head, n - sum(head))
            px = prob(x)
            if px <= p_obs:
                total += px
    return float(total)


def test_exact_multinomial_vs_brute_force():
    cases = [([3, 1, 6], [0.2, 0.3, 0.5]), ([0, 0, 7], [0.25, 0.25, 0.5]), ([2, 2, 2, 2], [0.4, 0.3, 0.2, 0.1]),
             ([5, 0, 1, 0, 0], [0.5, 0.125, 0.125, 0.125, 0.125])]
    for obs, probs in cases:
        assert exact_multinomial_p(obs, probs) == pytest.approx(_brute_force_exact(obs, probs), rel=1e-9)


def test_exact_multinomial_k2_is_exact_binomial_test():
    # scipy.stats.binomtest two-sided uses the same probability ordering (relative tolerance 1e-7)
    for n in (5, 17, 40, 60):
        for p in (0.1, 0.3, 0.5, 0.77):
            for k in range(0, n + 1, max(1, n // 7)):
                ref = stats.binomtest(k, n, p).pvalue
                assert exact_multinomial_p([k, n - k], [p, 1 - p]) == pytest.approx(ref, rel=1e-9)


def test_exact_multinomial_limits():
    assert exact_multinomial_p([10] * 6, [1 / 6] * 6) == pytest.approx(1.0)  # the mode
    with pytest.raises(ValueError):
        exact_multinomial_p([20] * 7, [1 / 7] * 7)  # C(146, 6) outcomes: too many
    assert exact_multinomial_p([1, 3], [0.0, 1.0]) == P_FLOOR  # impossible outcome observed
    with pytest.raises(ValueError):
        exact_multinomial_p([1.5, 3], [0.5, 0.5])
