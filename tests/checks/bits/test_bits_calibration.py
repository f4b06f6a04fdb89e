"""Calibration: on numpy PCG64 output the p-values of every continuous bit check are uniform.

Common practice (check-values.md §7): for a sound generator p-values are uniform on (0, 1).
Each check runs on R >= 200 disjoint replicates from PCG64 with a FIXED seed; the Kolmogorov-Smirnov
test of the R p-values against U(0, 1) must give p > 1e-3.  With about 45 such KS tests, a false
failure of a correct check has probability about 4.5% over all seeds, but the seeds are fixed, so
the outcome is reproducible; a miscalibrated check (wrong null distribution) gives KS p-values
far below 1e-3 at R = 200.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from rngassay.checks.bits import (
    approximate_entropy, binary_matrix_rank, binary_matrix_rank_lanes, block_frequency,
    cumulative_sums, linear_complexity, linear_complexity_lanes, longest_run_of_ones,
    monobit_frequency, non_overlapping_template, overlapping_template, poker_symbols,
    random_excursions, random_excursions_variant, runs_of_bits, serial_psi2, spectral_dft,
    universal_maurer,
)

R = 200
KS_LEVEL = 1e-3


def pcg64_bytes(seed: int, reps: int, nbytes: int) -> np.ndarray:
    """reps x nbytes array of numpy PCG64 output bytes (little-endian 64-bit words)."""
    words = -(-reps * nbytes // 8)
    raw = np.random.PCG64(seed).random_raw(words).astype("<u8").view(np.uint8)
    return raw[: reps * nbytes].reshape(reps, nbytes)


# name -> (function of (packed row, n_bits) or words, n_bits per replicate, view)
CASES = {
    "monobit frequency": (lambda d, n: monobit_frequency(d, n), 10_000),
    "block frequency M=128": (lambda d, n: block_frequency(d, n, M=128), 99 * 128),
    "runs of bits": (lambda d, n: runs_of_bits(d, n), 10_000),
    "longest run M=128": (lambda d, n: longest_run_of_ones(d, n, M=128), 49 * 128),
    "longest run M=10000": (lambda d, n: longest_run_of_ones(d, n, M=10_000), 75 * 10_000),
    "binary matrix rank 32x32": (lambda d, n: binary_matrix_rank(d, n, M=32, Q=32), 40 * 1024),
    "binary matrix rank 64x64": (lambda d, n: binary_matrix_rank(d, n, M=64, Q=64), 40 * 4096),
    "spectral dft": (lambda d, n: spectral_dft(d, n), 1 << 14),
    "non-overlapping template": (lambda d, n: non_overlapping_template(d, n, template="000000001", blocks=8),
                                 8 * 4096),
    "non-overlapping template periodic 1111": (
        lambda d, n: non_overlapping_template(d, n, template="1111", blocks=8), 8 * 4096),
    "overlapping template": (lambda d, n: overlapping_template(d, n), 100 * 1032),
    "universal maurer L=6": (lambda d, n: universal_maurer(d, n, L=6), 387_840),
    "linear complexity M=500": (lambda d, n: linear_complexity(d, n, M=500), 200 * 500),
    "serial psi2 m=8 P1": (lambda d, n: serial_psi2(d, n, m=8, order=1), 1 << 14),
    "serial psi2 m=8 P2": (lambda d, n: serial_psi2(d, n, m=8, order=2), 1 << 14),
    "approximate entropy m=5": (lambda d, n: approximate_entropy(d, n, m=5), 1 << 14),
    "cumulative sums forward": (lambda d, n: cumulative_sums(d, n), 10_000),
    "cumulative sums backward": (lambda d, n: cumulative_sums(d, n, direction="backward"), 10_000),
    "poker m=4": (lambda d, n: poker_symbols(d, n, m=4), 20_000),
}


@pytest.mark.slow
@pytest.mark.parametrize("name", sorted(CASES))
def test_bit_check_calibrated(name):
    func, n = CASES[name]
    seed = 20_240_000 + sorted(CASES).index(name)
    data = pcg64_bytes(seed, R, -(-n // 8))
    p = np.array([func(row, n).p_value for row in data])
    ks = stats.kstest(p, "uniform").pvalue
    assert ks > KS_LEVEL, f"{name}: KS p = {ks:.2e}"


@pytest.mark.slow
def test_random_excursions_calibrated():
    # 2^20 bits per replicate; about 63% of replicates have >= 500 cycles (the standard's rule),
    # the others give no result.  p-values are conditional on J, so uniform among applicable runs.
    data = pcg64_bytes(20_241_000, 340, 1 << 17)
    ex, va = {}, {}
    for row in data:
        for r in random_excursions(row):
            ex.setdefault(r.details["state"], []).append(r.p_value)
        for r in random_excursions_variant(row):
            va.setdefault(r.details["state"], []).append(r.p_value)
    assert len(ex) == 8 and len(va) == 18
    assert min(len(v) for v in ex.values()) >= R
    for label, table in (("excursions", ex), ("variant", va)):
        for x, ps in table.items():
            ks = stats.kstest(ps, "uniform").pvalue
            assert ks > KS_LEVEL, f"random {label} x={x}: KS p = {ks:.2e}"


@pytest.mark.slow
def test_lane_checks_calibrated():
    # lane checks with small blocks so that 200 replicates stay fast; same statistic as the default
    lc, rk = [], []
    words = pcg64_bytes(20_242_000, R, 4 * 8 * 500).view("<u4")
    for row in words:
        lc.append(linear_complexity_lanes(row, M=500, blocks=8).p_value)
    words = pcg64_bytes(20_243_000, R, 4 * 2 * 1024).view("<u4")
    for row in words:
        rk.append(binary_matrix_rank_lanes(row, M=32, Q=32).p_value)
    assert stats.kstest(lc, "uniform").pvalue > KS_LEVEL
    assert stats.kstest(rk, "uniform").pvalue > KS_LEVEL
