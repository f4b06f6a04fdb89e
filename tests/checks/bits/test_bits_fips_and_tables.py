"""FIPS 140-2 equivalences (check-values.md §4) and the exact tables behind the bit checks."""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest
from scipy import stats

from rngassay.checks.bits import monobit_frequency, poker_symbols
from rngassay.checks.bits.complexity import LC_PROBS_LIMIT, LC_PROBS_PRINTED, lc_class_probs_exact
from rngassay.checks.bits.rank import rank_class_probs, rank_probability
from rngassay.checks.bits.runs import LONGEST_RUN_TABLES, longest_run_class_probs
from rngassay.checks.bits.templates import (
    OVERLAPPING_PROBS_FIRST_EDITION, OVERLAPPING_PROBS_REV1A, first_edition_probs,
    overlapping_count_probs, renewal_moments,
)
from rngassay.checks.bits.excursions import excursion_probs
from rngassay.checks.bits.universal import EXPECTED, VARIANCE


def _bits_with_ones(ones: int, n: int = 20_000) -> np.ndarray:
    bits = np.zeros(n, dtype=np.uint8)
    bits[:ones] = 1
    return np.packbits(bits)


# ----------------------------------------------------------------------------- FIPS 140-2 §4.9.1


def test_fips_monobit_interval_is_p_1e4():
    # check-values.md §4: 9725 < ones < 10275 on 20,000 bits [memory]; [derived] two-sided p = 1.0e-4
    at_edge = monobit_frequency(_bits_with_ones(9725)).p_value
    outside = monobit_frequency(_bits_with_ones(9724)).p_value
    upper = monobit_frequency(_bits_with_ones(10275)).p_value
    assert at_edge == pytest.approx(1.0e-4, rel=0.01)
    assert upper == pytest.approx(at_edge, rel=1e-12)  # symmetric interval
    # p = 1e-4 is crossed within one count of the FIPS boundary
    assert outside < 1.0e-4 < at_edge


def _nibbles_packed(counts: list[int]) -> np.ndarray:
    nib = np.repeat(np.arange(16, dtype=np.uint8), counts)
    return (nib[0::2] << 4 | nib[1::2]).astype(np.uint8)


def test_fips_poker_statistic_and_tails():
    # FIPS 140-2 §4.9.1 poker: X = (16/5000) sum f_i^2 - 5000 on 5000 nibbles.
    counts = [312] * 8 + [313] * 8  # 5000 nibbles, as even as possible
    r = poker_symbols(_nibbles_packed(counts), m=4)
    assert r.details["counts"] == counts
    assert r.statistic == pytest.approx(16 / 5000 * sum(c * c for c in counts) - 5000, abs=1e-9)
    # check-values.md §4 [derived]: the interval 2.16 < X < 46.17 corresponds to chi2_15 tails of
    # 4.93e-5 (left, at 2.16) and 5.00e-5 (right, at 46.17)
    assert stats.chi2.cdf(2.16, 15) == pytest.approx(4.93e-5, rel=2e-3)
    assert stats.chi2.sf(46.17, 15) == pytest.approx(5.00e-5, rel=2e-3)
    # the check's two tails are these distribution functions of its statistic
    assert r.p_left == pytest.approx(stats.chi2.cdf(r.statistic, 15), rel=1e-12)
    assert r.p_value == pytest.approx(stats.chi2.sf(r.statistic, 15), rel=1e-12)
    assert r.p_left < 4.93e-5  # this too-even input fails the FIPS interval on the left


def test_fips_poker_right_tail_on_a_skewed_input():
    counts = [455] + [303] * 15  # 5000 nibbles
    r = poker_symbols(_nibbles_packed(counts), m=4)
    x = 16 / 5000 * sum(c * c for c in counts) - 5000
    assert r.statistic == pytest.approx(x)
    assert (r.p_value < 5.0e-5) == (x > 46.17)


# ----------------------------------------------------------------------------- exact tables


def test_rank_probabilities_sum_to_one_and_match_section_3_5():
    # SP 800-22 §2.5.4 / §3.5: 32x32 -> 0.2888, 0.5776, 0.1336 (exact 0.288788, 0.577576, 0.133636,
    # check-values.md §1)
    assert rank_class_probs(32, 32) == pytest.approx([0.288788, 0.577576, 0.133636], abs=5e-7)
    for M, Q in [(3, 3), (8, 5), (32, 32), (64, 100)]:
        assert sum(rank_probability(r, M, Q) for r in range(min(M, Q) + 1)) == pytest.approx(1, abs=1e-12)
    # exact count for 2x2 matrices over GF(2): 6 of 16 are invertible, 9 have rank 1 (direct count)
    assert rank_probability(2, 2, 2) == pytest.approx(6 / 16) and rank_probability(1, 2, 2) == pytest.approx(9 / 16)


def test_longest_run_tables_against_exact_recursion():
    # SP 800-22 §3.4 tables (4 decimals) vs the exact recursion; M = 8 probabilities are k/256
    exact8 = longest_run_class_probs(8, 1, 4)
    assert exact8 * 256 == pytest.approx(np.round(exact8 * 256), abs=1e-9)
    assert exact8 == pytest.approx(LONGEST_RUN_TABLES[8][3], abs=5e-5)
    # M = 128: one entry is truncated rather than rounded (exact 0.249363 printed 0.2493)
    assert longest_run_class_probs(128, 4, 6) == pytest.approx(LONGEST_RUN_TABLES[128][3], abs=1e-4)
    # M = 10^4: the printed table differs from the exact values by up to 1.6e-3 (it is what the
    # Appendix B figures use; both are available)
    assert longest_run_class_probs(10_000, 10, 7) == pytest.approx(LONGEST_RUN_TABLES[10_000][3], abs=2e-3)


def test_overlapping_probabilities():
    # corrected Rev. 1a values equal the exact dynamic programme to their printed 6 decimals
    assert overlapping_count_probs("1" * 9, 1032) == pytest.approx(OVERLAPPING_PROBS_REV1A, abs=6e-7)
    # the first edition's printed values follow from its compound-Poisson formula
    assert first_edition_probs(9, 1032) == pytest.approx(OVERLAPPING_PROBS_FIRST_EDITION, abs=6e-7)
    # brute force over all 2^12 strings of 12 bits, template 11: distribution of overlapping counts
    counts = np.zeros(6)
    for v in range(4096):
        s = format(v, "012b")
        counts[min(sum(s[i:i + 2] == "11" for i in range(11)), 5)] += 1
    assert overlapping_count_probs("11", 12) == pytest.approx(counts / 4096, abs=1e-12)


def test_renewal_moments_match_the_standard_for_aperiodic_templates():
    # SP 800-22 §2.7.4: sigma^2 = M (2^-m - (2m - 1) 2^-2m) = M Var T / (E T)^3 when E T = 2^m
    for t in ("001", "000000001", "111111110", "0011"):
        m = len(t)
        et, vt = renewal_moments(t)
        assert et == 2**m
        assert vt / et**3 == Fraction(1, 2**m) - Fraction(2 * m - 1, 2 ** (2 * m))
    # periodic: waiting time for "11" has mean 6 and variance 22 (Feller vol. 1, XIII.7, from memory)
    assert renewal_moments("11") == (6, 22)


def test_linear_complexity_class_probabilities():
    # SP 800-22 §3.10: the limits 1/96, 1/32, 1/8, 1/2, 1/4, 1/16, 1/48; the printed table's
    # pi_0 = 0.01047 is a misprint of 0.010417 (check-values.md §2 note)
    for M in (500, 501, 1000):
        assert lc_class_probs_exact(M) == pytest.approx(LC_PROBS_LIMIT, abs=1e-12)
        assert lc_class_probs_exact(M).sum() == pytest.approx(1.0, abs=1e-12)
    assert LC_PROBS_PRINTED[0] - LC_PROBS_LIMIT[0] == pytest.approx(5.3e-5, abs=1e-6)
    assert np.array(LC_PROBS_PRINTED[1:]) == pytest.approx(LC_PROBS_LIMIT[1:], abs=5e-7)


def test_universal_table_matches_the_geometric_distance_law():
    # SP 800-22 §2.9.4 table (Maurer 1992): E and Var of log2 of a geometric distance with
    # parameter 2^-L; the table prints 7 decimals for E and 3 for Var (L = 8 is truncated: 3.2387)
    for L in range(1, 17):
        p = 2.0**-L
        i = np.arange(1, int(60 / p) + 1, dtype=np.float64)
        w = p * np.exp((i - 1) * np.log1p(-p))
        lg = np.log2(i)
        e = float(np.sum(w * lg))
        v = float(np.sum(w * (lg - e) ** 2))
        assert e == pytest.approx(EXPECTED[L], abs=6e-7)
        assert v == pytest.approx(VARIANCE[L], abs=1e-3)


def test_excursion_probabilities():
    # SP 800-22 §3.14: for x = 1, pi = (1/2, 1/4, 1/8, 1/16, 1/32, 1/32)
    assert excursion_probs(1) == pytest.approx([0.5, 0.25, 0.125, 0.0625, 0.03125, 0.03125])
    for x in (1, 2, 3, 4):
        assert excursion_probs(x).sum() == pytest.approx(1.0)
        assert excursion_probs(-x) == pytest.approx(excursion_probs(x))
