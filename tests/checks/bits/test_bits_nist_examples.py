"""Worked examples of NIST SP 800-22 Rev. 1a (2010), section 2 (subsection .8 of each test).

Every figure is from check-values.md §1 ("printed+reproduced"); tolerance 1e-6 absolute on the
6-decimal figures unless the row says otherwise.
"""

from __future__ import annotations

import numpy as np
import pytest

from rngassay.checks.bits import (
    approximate_entropy, binary_matrix_rank, bits_from_string, block_frequency, cumulative_sums,
    linear_complexity, linear_complexity_profile_bits, longest_run_of_ones, monobit_frequency,
    non_overlapping_template, random_excursions_variant, runs_of_bits, serial_psi2,
)
from rngassay.errors import InputError

from bits_testkit import load_reference

PI_100 = ("1100100100001111110110101010001000100001011010001100001000110100"
          "110001001100011001100010100010111000")
LONGEST_128 = ("11001100000101010110110001001100111000000000001001001101010100010001001111010110"
               "100000001101011111001100111001101101100010110010")
TOL = 1e-6


def test_pi_100_is_the_binary_expansion_of_pi():
    # check-values.md: "pi-100" = first 100 bits of pi, integer part included
    packed = load_reference("pi")
    assert "".join(map(str, np.unpackbits(packed)[:100])) == PI_100


def test_bits_from_string_packs_msb_first():
    packed, n = bits_from_string("1011 0101 1")
    assert n == 9 and packed.tolist() == [0b10110101, 0b10000000]
    with pytest.raises(InputError):
        bits_from_string("10201")


@pytest.mark.parametrize("bits, expected", [
    ("1011010101", 0.527089),  # SP 800-22 §2.1.8
    (PI_100, 0.109599),        # SP 800-22 §2.1.8
])
def test_monobit_frequency(bits, expected):
    assert monobit_frequency(*bits_from_string(bits)).p_value == pytest.approx(expected, abs=TOL)


@pytest.mark.parametrize("bits, M, expected", [
    ("0110011010", 3, 0.801252),  # SP 800-22 §2.2.8
    (PI_100, 10, 0.706438),       # SP 800-22 §2.2.8
])
def test_block_frequency(bits, M, expected):
    assert block_frequency(*bits_from_string(bits), M=M).p_value == pytest.approx(expected, abs=TOL)


@pytest.mark.parametrize("bits, expected", [
    ("1001101011", 0.147232),  # SP 800-22 §2.3.8
    (PI_100, 0.500798),        # SP 800-22 §2.3.8
])
def test_runs_of_bits(bits, expected):
    r = runs_of_bits(*bits_from_string(bits))
    assert r.p_value == pytest.approx(expected, abs=TOL)
    assert not r.details.get("prerequisite_failed", False)


def test_runs_prerequisite_reports_the_monobit_p():
    # SP 800-22 §2.3.4 step (2): the runs test is not applied when |pi - 1/2| >= 2/sqrt(n)
    r = runs_of_bits(*bits_from_string("1" * 90 + "0" * 10))
    assert r.details["prerequisite_failed"]
    assert r.p_value == pytest.approx(monobit_frequency(*bits_from_string("1" * 90 + "0" * 10)).p_value)


def test_longest_run_of_ones_m8():
    # SP 800-22 §2.4.8: P = 0.180609 (check-values.md §1: tolerance 2e-5; the 4-decimal class
    # probabilities give 0.180598, the exact ones k/256 give the printed figure)
    packed, n = bits_from_string(LONGEST_128)
    r = longest_run_of_ones(packed, n, M=8)
    assert r.details["counts"] == [4, 9, 3, 0]  # SP 800-22 §2.4.8: nu = (4, 9, 3, 0)
    assert r.p_value == pytest.approx(0.180609, abs=2e-5)
    assert r.p_value == pytest.approx(0.180609, abs=1e-6)  # exact k/256 probabilities
    rounded = longest_run_of_ones(packed, n, M=8, probabilities=[0.2148, 0.3672, 0.2305, 0.1875])
    assert rounded.p_value == pytest.approx(0.180598, abs=1e-6)  # check-values.md §1 note


def test_binary_matrix_rank_e_100000():
    # SP 800-22 §2.5.8: first 100,000 bits of e, 32x32 matrices, P = 0.532069 (exact probabilities)
    r = binary_matrix_rank(load_reference("e"), 100_000, M=32, Q=32)
    assert r.details["matrices"] == 97
    assert r.p_value == pytest.approx(0.532069, abs=TOL)


def test_non_overlapping_template_example():
    # SP 800-22 §2.7.8: B = 001, N = 2 blocks of 10, P = 0.344154
    r = non_overlapping_template(*bits_from_string("10100100101110010110"), template="001", blocks=2)
    assert r.details["counts"] == [2, 1]  # SP 800-22 §2.7.8: W_1 = 2, W_2 = 1
    assert r.p_value == pytest.approx(0.344154, abs=TOL)


def test_berlekamp_massey_example():
    # SP 800-22 §2.10.8 (§2.10.4 step 2 example): L(1101011110001) = 4
    assert linear_complexity_profile_bits(*bits_from_string("1101011110001")) == 4


def test_linear_complexity_e_m1000():
    # SP 800-22 §2.10.8: first 10^6 bits of e, M = 1000, P = 0.845406 (printed pi table)
    assert linear_complexity(load_reference("e"), M=1000).p_value == pytest.approx(0.845406, abs=TOL)


def test_serial_example():
    # SP 800-22 §2.11.8: 0011011101, m = 3: P1 = 0.808792, P2 = 0.670320
    packed, n = bits_from_string("0011011101")
    r1 = serial_psi2(packed, n, m=3, order=1)
    r2 = serial_psi2(packed, n, m=3, order=2)
    assert r1.p_value == pytest.approx(0.808792, abs=TOL)
    assert r2.p_value == pytest.approx(0.670320, abs=TOL)
    assert r1.details["p2"] == r2.p_value


@pytest.mark.parametrize("bits, m, expected", [
    ("0100110101", 3, 0.261961),  # SP 800-22 §2.12.8
    (PI_100, 2, 0.235301),        # SP 800-22 §2.12.8
])
def test_approximate_entropy(bits, m, expected):
    assert approximate_entropy(*bits_from_string(bits), m=m).p_value == pytest.approx(expected, abs=TOL)


def test_cumulative_sums_pi_100():
    # SP 800-22 §2.13.8: forward 0.219194, backward 0.114866
    packed, n = bits_from_string(PI_100)
    assert cumulative_sums(packed, n).p_value == pytest.approx(0.219194, abs=TOL)
    assert cumulative_sums(packed, n, direction="backward").p_value == pytest.approx(0.114866, abs=TOL)


def test_cumulative_sums_small_example():
    # SP 800-22 §2.13.8: 1011010111 forward, z = 4, P = 0.4116 (check-values.md §1: tol 1e-3;
    # the exact series gives 0.411585)
    r = cumulative_sums(*bits_from_string("1011010111"))
    assert r.details["z"] == 4
    assert r.p_value == pytest.approx(0.4116, abs=1e-3)
    assert r.p_value == pytest.approx(0.411585, abs=1e-6)


def test_random_excursions_variant_example():
    # SP 800-22 §2.15.8: 0110110101, x = +1: xi = 4, J = 3, P = 0.683091.  The standard's
    # 500-cycle rule is lifted (min_cycles=0) for this illustration, as in the standard's example.
    res = random_excursions_variant(*bits_from_string("0110110101"), min_cycles=0)
    r = next(r for r in res if r.details["state"] == 1)
    assert (r.details["visits"], r.details["cycles"]) == (4, 3)
    assert r.p_value == pytest.approx(0.683091, abs=TOL)
