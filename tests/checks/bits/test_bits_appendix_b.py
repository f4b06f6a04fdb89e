"""NIST SP 800-22 Rev. 1a, Appendix B: the first 10^6 bits of e, pi, sqrt 2, sqrt 3.

Figures and parameters from check-values.md §2 (all "printed+reproduced" unless a comment says
otherwise); tolerance 1e-6 absolute unless the notes there give another.  The inputs are the
committed reference streams (reference_streams/README.md).
"""

from __future__ import annotations

import math

import pytest

from rngassay.checks.bits import (
    approximate_entropy, binary_matrix_rank, block_frequency, cumulative_sums, linear_complexity,
    longest_run_of_ones, monobit_frequency, non_overlapping_template, overlapping_template,
    random_excursions, random_excursions_variant, runs_of_bits, serial_psi2, spectral_dft,
    universal_maurer,
)
from rngassay.checks.bits.templates import OVERLAPPING_PROBS_FIRST_EDITION, OVERLAPPING_PROBS_REV1A

from bits_testkit import CONSTANTS, load_reference

TOL = 1e-6
NAMES = ("e", "pi", "sqrt2", "sqrt3")

# check-values.md §2 table, columns e, pi, sqrt2, sqrt3 (SP 800-22 Rev. 1a Appendix B)
TABLE = {
    "frequency": (0.953749, 0.578211, 0.811881, 0.610051),
    "block frequency": (0.211072, 0.380615, 0.833222, 0.473961),
    "cusum forward": (0.669887, 0.628308, 0.879009, 0.917121),
    "cusum backward": (0.724266, 0.663369, 0.957206, 0.689519),
    "runs": (0.561917, 0.419268, 0.313427, 0.261123),
    "longest run": (0.718945, 0.024390, 0.012117, 0.446726),
    "rank": (0.306156, 0.083553, 0.823810, 0.314498),
    "spectral": (0.847187, 0.010186, 0.581909, 0.776046),
    "non-overlapping": (0.078790, 0.165757, 0.569461, 0.532235),
    "universal": (0.282568, 0.669012, 0.130805, 0.165981),
    "approximate entropy": (0.700073, 0.361595, 0.884740, 0.180481),
    "excursions +1": (0.786868, 0.844143, 0.216235, 0.783283),
    "linear complexity": (0.826335, 0.255475, 0.317127, 0.346469),
    "serial P1": (0.766182, 0.143005, 0.861925, 0.157500),
}

RUN = {
    "frequency": lambda d: monobit_frequency(d).p_value,
    "block frequency": lambda d: block_frequency(d, M=128).p_value,
    "cusum forward": lambda d: cumulative_sums(d, direction="forward").p_value,
    "cusum backward": lambda d: cumulative_sums(d, direction="backward").p_value,
    "runs": lambda d: runs_of_bits(d).p_value,
    "longest run": lambda d: longest_run_of_ones(d, M=10_000).p_value,
    "rank": lambda d: binary_matrix_rank(d, M=32, Q=32).p_value,
    "spectral": lambda d: spectral_dft(d).p_value,
    "non-overlapping": lambda d: non_overlapping_template(d, template="000000001", blocks=8).p_value,
    "universal": lambda d: universal_maurer(d, L=7, Q=1280).p_value,
    "approximate entropy": lambda d: approximate_entropy(d, m=10).p_value,
    "excursions +1": lambda d: _state(random_excursions(d), 1).p_value,
    "linear complexity": lambda d: linear_complexity(d, M=500).p_value,
    "serial P1": lambda d: serial_psi2(d, m=16, order=1).p_value,
}


def _state(results, x):
    return next(r for r in results if r.details["state"] == x)


@pytest.fixture(scope="module")
def streams():
    assert tuple(CONSTANTS) == NAMES
    return {name: load_reference(name) for name in NAMES}


@pytest.mark.parametrize("test", sorted(TABLE))
def test_appendix_b_row(streams, test):
    got = [RUN[test](streams[name]) for name in NAMES]
    # cumulative sums: check-values.md §2 allows 2e-6 (an independent computation gives
    # e forward 0.669886, backward 0.724265)
    tol = 2e-6 if test.startswith("cusum") else TOL
    for name, g, want in zip(NAMES, got, TABLE[test]):
        assert g == pytest.approx(want, abs=tol), f"{test} {name}: {g:.6f} != {want}"


def test_appendix_b_e_only_figures(streams):
    e = streams["e"]
    # check-values.md §2: random excursions x = -4: 0.573306; variant x = -9: 0.858946; serial P2: 0.462921
    assert _state(random_excursions(e), -4).p_value == pytest.approx(0.573306, abs=TOL)
    assert _state(random_excursions_variant(e), -9).p_value == pytest.approx(0.858946, abs=TOL)
    assert serial_psi2(e, m=16, order=2).p_value == pytest.approx(0.462921, abs=TOL)


def test_cusum_independent_computation(streams):
    # check-values.md §2: "an independent computation gives e forward 0.669886 / backward 0.724265"
    e = streams["e"]
    assert cumulative_sums(e).p_value == pytest.approx(0.669886, abs=1e-6)
    assert cumulative_sums(e, direction="backward").p_value == pytest.approx(0.724265, abs=1e-6)


# Overlapping template: check-values.md §2 note.
OVERLAPPING_PRINTED = (0.110434, 0.296897, 0.791982, 0.082716)  # the appendix row
OVERLAPPING_FIRST_EDITION = (0.110431, 0.296900, 0.791962, 0.082716)  # first-edition probs [derived]
OVERLAPPING_REV1A = (0.159027, 0.260700, 0.828867, 0.080767)  # corrected Rev. 1a probs [derived]


def test_overlapping_template_first_edition_probabilities(streams):
    for name, printed, derived in zip(NAMES, OVERLAPPING_PRINTED, OVERLAPPING_FIRST_EDITION):
        p = overlapping_template(streams[name], template="1" * 9, M=1032,
                                 probabilities=OVERLAPPING_PROBS_FIRST_EDITION).p_value
        assert p == pytest.approx(derived, abs=TOL)
        assert p == pytest.approx(printed, abs=3e-5)  # "reproduce the row to about 3e-5"


def test_overlapping_template_corrected_probabilities(streams):
    for name, want in zip(NAMES, OVERLAPPING_REV1A):
        p = overlapping_template(streams[name], probabilities=OVERLAPPING_PROBS_REV1A).p_value
        assert p == pytest.approx(want, abs=TOL)
        # default "exact" probabilities: equal to the Rev. 1a table to its 6 printed decimals,
        # so the p-value moves by far less than the gap between the two probability sets
        exact = overlapping_template(streams[name]).p_value
        assert exact == pytest.approx(want, abs=5e-5)


def test_linear_complexity_needs_printed_table(streams):
    # check-values.md §2 note: with pi_0 = 0.010417 one gets e 0.826194 instead of 0.826335
    p = linear_complexity(streams["e"], M=500,
                          probabilities=(0.010417, 0.03125, 0.125, 0.5, 0.25, 0.0625, 0.020833)).p_value
    assert p == pytest.approx(0.826194, abs=TOL)
    assert not math.isclose(p, 0.826335, abs_tol=1e-5)


def test_matrix_rank_rounded_probabilities_differ(streams):
    # check-values.md §1: the rounded probabilities give 0.531905 on the first 100,000 bits of e
    from rngassay.checks.bits.rank import rank_class_probs

    r = binary_matrix_rank(streams["e"], 100_000)
    counts = r.details["counts"]
    chi2 = sum((c - 97 * p) ** 2 / (97 * p) for c, p in zip(counts, (0.2888, 0.5776, 0.1336)))
    assert math.exp(-chi2 / 2) == pytest.approx(0.531905, abs=TOL)
    assert rank_class_probs(32, 32) == pytest.approx([0.288788, 0.577576, 0.133636], abs=5e-7)
