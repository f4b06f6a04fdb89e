"""Pooled second level: the replicates' sufficient statistics are added up and tested once.

For each check the pooled statistic is compared with the check run on all the data at once:

- exactly equal (to rounding) where the sum over segments IS the table of the whole: disjoint
  cells, blocks, matrices, hands, symbols; the walk sum and extremes (monobit, cumulative sums);
  gaps when every segment ends on a hit; sum-over-blocks chi-squares against the check with all
  the blocks;
- only approximately equal for circular overlapping tuples (serial tests, approximate entropy):
  each segment's last d - 1 tuples wrap to its own start. The tests make that exact by giving
  every segment the same first d - 1 symbols (then the wrap-round tuples of the summed tables are
  those of the joined data), and bound the difference otherwise;
- not the joined-data statistic but its law (normal sums: spectral, universal, runs): the pooled
  value is checked against the formula (sum z / sqrt(R) for equal sizes).

Plus the issue's power figure (a die loaded 3 % on one face, 300,000 rolls) and a null check
that the pooled p-values are not anti-conservative.
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from scipy import stats as sps

from rngassay import api
from rngassay.battery.grade import second_level
from rngassay.battery.plan import PlannedCheck
from rngassay.battery.run import Outcome
from rngassay.checks.bits import (
    approximate_entropy, binary_matrix_rank, binary_matrix_rank_lanes, block_frequency, cumulative_sums,
    linear_complexity, linear_complexity_lanes, longest_run_of_ones, monobit_frequency,
    non_overlapping_template, overlapping_template, poker_symbols, runs_of_bits, serial_psi2, spectral_dft,
    universal_maurer,
)
from rngassay.checks.bits.runs import runs_moments
from rngassay.checks.classic.categorical import check_categorical_frequency, check_categorical_serial
from rngassay.checks.classic.frequency import check_byte_frequency, check_equidistribution
from rngassay.checks.classic.gap import check_gap
from rngassay.checks.classic.poker import check_poker
from rngassay.checks.classic.serial import check_serial_overlapping
from rngassay.checks.catalog import load_all

REL = 1e-9  # "equal to rounding": sums of the same terms in another order


def pooled_round(key: str, results: list, view: str = "bits"):
    """Second level of ``results`` (one per replicate) through the battery's own grading."""
    spec = load_all()[key]
    pc = PlannedCheck(key, key, spec.family, view, {}, 1, 1, len(results))
    rr = second_level(Outcome(pc, [[r] for r in results]))
    assert rr is not None and "pooled" in rr.second_level, f"{key}: replicates were not pooled"
    return rr, rr.second_level["pooled"]


def assert_same(pooled: dict, whole, both: bool = False) -> None:
    """Pooled second level == the check's first level on all the data at once."""
    assert pooled["statistic"] == pytest.approx(whole.statistic, rel=REL, abs=1e-9)
    assert pooled["p_right"] == pytest.approx(whole.p_value, rel=1e-7)
    if both:
        assert pooled["p_left"] == pytest.approx(whole.p_left, rel=1e-7)
        assert pooled["p_value"] == pytest.approx(min(1.0, 2 * min(whole.p_value, whole.p_left)), rel=1e-7)


def split(a: np.ndarray, sizes: list[int]) -> list[np.ndarray]:
    return np.split(a, np.cumsum(sizes)[:-1])


# --------------------------------------------------------------------------- classic checks (lead's pooled counts)


def test_byte_frequency_pooled_counts_are_the_whole_table():
    data = np.random.default_rng(11).integers(0, 256, 40_000, dtype=np.uint8)
    segs = split(data, [10_000, 7_000, 13_000, 10_000])  # unequal sizes: counts still add up
    _, pooled = pooled_round("byte frequency", [check_byte_frequency(s) for s in segs], "bytes")
    assert_same(pooled, check_byte_frequency(data), both=True)


def test_equidistribution_pooled_counts_are_the_whole_table():
    u = np.random.default_rng(12).random(24_000)
    segs = split(u, [6_000] * 4)
    _, pooled = pooled_round("equidistribution", [check_equidistribution(s, d=16) for s in segs], "uniforms")
    assert_same(pooled, check_equidistribution(u, d=16), both=True)


def test_gap_pooled_counts_equal_whole_when_segments_end_on_a_hit():
    # A gap that spans a segment end is cut in two by the replicates, so in general the pooled table
    # differs from the whole one by at most one gap per segment end. Cutting each segment just after a
    # value in [a, b) makes the tables identical (the next gap starts fresh there in both).
    u = np.random.default_rng(13).random(40_000)
    hits = np.flatnonzero(u < 0.5)
    cuts = [int(hits[np.searchsorted(hits, c)]) + 1 for c in (9_000, 21_000, 30_000)]
    segs = np.split(u, cuts)
    _, pooled = pooled_round("gap", [check_gap(s, 0.0, 0.5, 16) for s in segs], "uniforms")
    assert_same(pooled, check_gap(u, 0.0, 0.5, 16), both=True)


def test_poker_pooled_counts_are_the_whole_table():
    u = np.random.default_rng(14).random(50_000)
    segs = split(u, [12_500] * 4)  # multiples of the hand size 5: the same hands
    _, pooled = pooled_round("poker", [check_poker(s, d=8, k=5) for s in segs], "uniforms")
    assert_same(pooled, check_poker(u, d=8, k=5), both=True)


def _same_start(segs: list[np.ndarray], k: int) -> list[np.ndarray]:
    """Give every segment the first k values of the first one (a circular tuple that wraps round a
    segment then reads the same symbols as the one running on into the next segment)."""
    out = [s.copy() for s in segs]
    for s in out[1:]:
        s[:k] = out[0][:k]
    return out


@pytest.mark.parametrize("d", [2, 3])
def test_serial_overlapping_pooled_equals_whole_with_equal_segment_starts(d):
    rng = np.random.default_rng(15 + d)
    segs = _same_start(split(rng.random(32_000), [8_000] * 4), d - 1)
    whole = np.concatenate(segs)
    _, pooled = pooled_round("serial overlapping", [check_serial_overlapping(s, d=d, v=8) for s in segs], "uniforms")
    assert_same(pooled, check_serial_overlapping(whole, d=d, v=8), both=True)


def test_serial_overlapping_pooled_table_differs_from_whole_only_by_wrapped_tuples():
    # general case (segments with their own starts): only the d - 1 wrap-round tuples per segment
    # differ, so the summed table is within 2 (d - 1) R counts (L1) of the joined data's table
    d, v, R = 3, 8, 4
    segs = split(np.random.default_rng(17).random(32_000), [8_000] * R)
    reps = [check_serial_overlapping(s, d=d, v=v) for s in segs]
    summed = np.sum([r.pooled["counts"] for r in reps], axis=0)
    whole = check_serial_overlapping(np.concatenate(segs), d=d, v=v).pooled["counts"]
    assert summed.sum() == whole.sum()
    assert 0 < np.abs(summed - whole).sum() <= 2 * (d - 1) * R
    _, pooled = pooled_round("serial overlapping", reps, "uniforms")
    whole_stat = check_serial_overlapping(np.concatenate(segs), d=d, v=v).statistic
    # close on the scale of the null law: within a quarter of chi2(v^d - v^(d-1))'s standard deviation
    assert abs(pooled["statistic"] - whole_stat) < 0.25 * math.sqrt(2 * (v**d - v ** (d - 1)))


@pytest.mark.parametrize("per_segment", [20, 3_000])
def test_categorical_frequency_pooled_counts_are_the_whole_table(per_segment):
    # 20 outcomes per segment: the check's exact multinomial path; 3,000: its chi-square path
    x = np.random.default_rng(18).integers(0, 6, 4 * per_segment)
    segs = split(x, [per_segment] * 4)
    _, pooled = pooled_round("categorical frequency", [check_categorical_frequency(s, k=6) for s in segs], "integers")
    whole = check_categorical_frequency(x, k=6)
    assert pooled["statistic"] == pytest.approx(whole.statistic, rel=REL)
    if whole.kind == "continuous":  # whole data in the chi-square regime: same p-values
        assert_same(pooled, whole, both=True)


@pytest.mark.parametrize("d", [2, 3])
def test_categorical_serial_pooled_equals_whole_with_equal_segment_starts(d):
    x = np.random.default_rng(19 + d).integers(0, 6, 8_000)
    segs = _same_start(split(x, [2_000] * 4), d - 1)
    reps = [check_categorical_serial(s, k=6, d=d) for s in segs]
    whole = check_categorical_serial(np.concatenate(segs), k=6, d=d)
    assert reps[0].details["groups"] == whole.details["groups"]  # the same cells for segment and whole
    _, pooled = pooled_round("categorical serial", reps, "integers")
    assert_same(pooled, whole, both=True)


# --------------------------------------------------------------------------- bit checks


def _bytes(seed: int, n: int) -> np.ndarray:
    return np.random.default_rng(seed).integers(0, 256, n, dtype=np.uint8)


def test_monobit_pooled_walk_sum_is_the_whole_statistic():
    data = _bytes(31, 50_000)
    segs = split(data, [12_000, 9_000, 17_000, 12_000])
    reps = [monobit_frequency(s) for s in segs]
    _, pooled = pooled_round("monobit frequency", reps)
    assert_same(pooled, monobit_frequency(data))
    # for equal sizes the pooled statistic is |sum z| / sqrt(R) (the linear-statistic rule)
    eq = [monobit_frequency(s) for s in split(data, [12_500] * 4)]
    _, p_eq = pooled_round("monobit frequency", eq)
    assert p_eq["statistic"] == pytest.approx(abs(sum(r.pooled["z"] for r in eq)) / 2.0, rel=REL)


def test_monobit_pooling_sees_a_deficit_of_ones_too():
    # two-sided like the check itself: a steady excess of zeros must give a small pooled p
    rng = np.random.default_rng(32)
    bits = (rng.random(4 * 80_000) < 0.497).astype(np.uint8)
    segs = split(np.packbits(bits), [10_000] * 4)
    _, pooled = pooled_round("monobit frequency", [monobit_frequency(s) for s in segs])
    whole = monobit_frequency(np.packbits(bits))
    assert pooled["p_value"] == pytest.approx(whole.p_value, rel=1e-7)
    assert pooled["p_value"] < 1e-3  # 0.3 % deficit over 320,000 bits: z about -3.4


@pytest.mark.parametrize("direction", ["forward", "backward"])
def test_cumulative_sums_pooled_extremes_are_the_joined_walk(direction):
    data = _bytes(33, 40_000)
    segs = split(data, [10_000, 6_000, 14_000, 10_000])
    _, pooled = pooled_round("cumulative sums", [cumulative_sums(s, direction=direction) for s in segs])
    assert_same(pooled, cumulative_sums(data, direction=direction))


def test_block_frequency_sum_over_blocks_is_the_whole_with_all_blocks():
    M, N, R = 256, 40, 4
    data = _bytes(34, R * N * M // 8)
    segs = split(data, [N * M // 8] * R)
    _, pooled = pooled_round("block frequency", [block_frequency(s, M=M) for s in segs])
    whole = block_frequency(data, M=M)  # R N blocks of M bits
    assert_same(pooled, whole)
    assert pooled["law"] == f"chi2(df={R * N:g})"


@pytest.mark.parametrize("tmpl", ["000000001", "111111110"])
def test_non_overlapping_template_sum_over_blocks_is_the_whole_with_all_blocks(tmpl):
    R, N, M = 4, 8, 32_768  # mu = (M - 8) / 512 = 64 matches per block: pooled (>= 50)
    data = _bytes(35, R * N * M // 8)
    segs = split(data, [N * M // 8] * R)
    _, pooled = pooled_round("non-overlapping template",
                             [non_overlapping_template(s, template=tmpl, blocks=N) for s in segs])
    assert_same(pooled, non_overlapping_template(data, template=tmpl, blocks=R * N))


def test_non_overlapping_template_small_blocks_are_not_pooled():
    r = non_overlapping_template(_bytes(36, 2_000), blocks=8)  # M = 2000 bits: mu about 3.9
    assert r.pooled is None


def test_rank_pooled_counts_are_the_whole_table():
    data = _bytes(37, 4 * 64 * 128)  # 64 matrices of 32 x 32 (128 bytes) per segment
    segs = split(data, [64 * 128] * 4)
    _, pooled = pooled_round("binary matrix rank", [binary_matrix_rank(s) for s in segs])
    assert_same(pooled, binary_matrix_rank(data))


def test_rank_lanes_pooled_counts_are_the_whole_table():
    words = np.random.default_rng(38).integers(0, 2**32, 3 * 2 * 64 * 64, dtype=np.uint32)
    segs = split(words, [2 * 64 * 64] * 3)
    _, pooled = pooled_round("binary matrix rank lanes", [binary_matrix_rank_lanes(s) for s in segs], "words32")
    assert_same(pooled, binary_matrix_rank_lanes(words))


@pytest.mark.parametrize("M", [8, 128])
def test_longest_run_pooled_counts_are_the_whole_table(M):
    data = _bytes(39 + M, 4 * 2_048)
    segs = split(data, [2_048] * 4)  # whole M-bit blocks per segment
    _, pooled = pooled_round("longest run of ones", [longest_run_of_ones(s, M=M) for s in segs])
    # the pooled table is tested against the exact class probabilities (the printed 4-decimal table's
    # rounding would grow with the pooled blocks): the check on all the data with probabilities="exact"
    assert_same(pooled, longest_run_of_ones(data, M=M, probabilities="exact"))


def test_overlapping_template_pooled_counts_are_the_whole_table():
    data = _bytes(40, 4 * 129 * 120)  # 120 blocks of M = 1032 bits = 129 bytes per segment
    segs = split(data, [129 * 120] * 4)
    _, pooled = pooled_round("overlapping template", [overlapping_template(s) for s in segs])
    assert_same(pooled, overlapping_template(data))


def test_poker_bit_symbols_pooled_counts_are_the_whole_table():
    data = _bytes(41, 4 * 3_000)
    segs = split(data, [3_000] * 4)
    for m in (4, 8):
        _, pooled = pooled_round("poker bit symbols", [poker_symbols(s, m=m) for s in segs])
        assert_same(pooled, poker_symbols(data, m=m), both=True)


def test_linear_complexity_pooled_counts_are_the_whole_table():
    data = _bytes(42, 4 * 500 * 10)  # 80 blocks of 500 bits per segment (500 bytes = 8 blocks)
    segs = split(data, [5_000] * 4)
    _, pooled = pooled_round("linear complexity", [linear_complexity(s) for s in segs])
    assert_same(pooled, linear_complexity(data, probabilities="exact"))  # pooled: exact law, not the printed table
    # with explicit probabilities the pooled test keeps them: the check's own statistic on all the blocks
    reps = [linear_complexity(s, probabilities="limit") for s in segs]
    _, pooled = pooled_round("linear complexity", reps)
    assert_same(pooled, linear_complexity(data, probabilities="limit"))


def test_linear_complexity_lanes_pooled_counts_are_the_whole_table():
    words = np.random.default_rng(43).integers(0, 2**32, 2 * 2 * 600, dtype=np.uint32)
    segs = split(words, [1_200] * 2)
    reps = [linear_complexity_lanes(s, M=600) for s in segs]
    _, pooled = pooled_round("linear complexity lanes", reps, "words32")
    assert_same(pooled, linear_complexity_lanes(words, M=600, probabilities="exact"))


def _same_start_bytes(segs: list[np.ndarray], nbytes: int) -> list[np.ndarray]:
    return _same_start(segs, nbytes)


@pytest.mark.parametrize("order", [1, 2])
def test_serial_psi2_pooled_equals_whole_with_equal_segment_starts(order):
    m = 10
    segs = _same_start_bytes(split(_bytes(44, 4 * 4_096), [4_096] * 4), 2)  # first 16 >= m - 1 bits equal
    reps = [serial_psi2(s, m=m, order=order) for s in segs]
    _, pooled = pooled_round("serial psi2", reps)
    assert_same(pooled, serial_psi2(np.concatenate(segs), m=m, order=order))


def test_serial_psi2_pooled_table_differs_from_whole_only_by_wrapped_windows():
    m, R = 10, 4
    segs = split(_bytes(45, R * 4_096), [4_096] * R)
    reps = [serial_psi2(s, m=m) for s in segs]
    summed = np.sum([np.asarray(r.pooled["counts"], dtype=np.int64) for r in reps], axis=0)
    whole = serial_psi2(np.concatenate(segs), m=m)
    assert 0 < np.abs(summed - whole.pooled["counts"].astype(np.int64)).sum() <= 2 * (m - 1) * R
    _, pooled = pooled_round("serial psi2", reps)
    # close on the scale of the null law: within a quarter of chi2(2^(m-1))'s standard deviation
    assert abs(pooled["statistic"] - whole.statistic) < 0.25 * math.sqrt(2 * 2 ** (m - 1))


def test_approximate_entropy_pooled_equals_whole_with_equal_segment_starts():
    m = 6
    segs = _same_start_bytes(split(_bytes(46, 4 * 2_000), [2_000] * 4), 1)  # first 8 >= m bits equal
    _, pooled = pooled_round("approximate entropy", [approximate_entropy(s, m=m) for s in segs])
    assert_same(pooled, approximate_entropy(np.concatenate(segs), m=m))


def test_spectral_pooled_peak_count_and_length():
    data = _bytes(47, 4 * 1_024)
    segs = split(data, [1_024] * 4)
    reps = [spectral_dft(s) for s in segs]
    _, pooled = pooled_round("spectral dft", reps)
    n = 4 * 8 * 1_024
    n1 = sum(r.details["below_threshold"] for r in reps)
    d = (n1 - 0.95 * n / 2) / math.sqrt(n * 0.95 * 0.05 / 4)  # SP 800-22 Rev. 1a §2.6 mean and variance
    assert pooled["statistic"] == pytest.approx(d, rel=REL)
    assert pooled["statistic"] == pytest.approx(sum(r.statistic for r in reps) / 2.0, rel=REL)  # equal n
    assert pooled["p_value"] == pytest.approx(math.erfc(abs(d) / math.sqrt(2)), rel=1e-7)


def test_universal_pooled_z_is_sum_over_sqrt_r_for_equal_sizes():
    data = _bytes(48, 4 * 20_000)
    segs = split(data, [20_000] * 4)
    reps = [universal_maurer(s, L=6) for s in segs]
    rr, pooled = pooled_round("universal maurer", reps)
    z = sum(r.details["z"] for r in reps) / 2.0
    assert pooled["p_value"] == pytest.approx(math.erfc(abs(z) / math.sqrt(2)), rel=1e-7)
    K = sum(r.details["K"] for r in reps)
    assert pooled["statistic"] == pytest.approx(sum(r.statistic * r.details["K"] for r in reps) / K, rel=REL)


def test_runs_moments_against_complete_enumeration():
    # Wald & Wolfowitz (1940) exact moments, checked by listing every arrangement (exact)
    n = 12
    for k in (1, 4, 6, 9):
        runs = []
        for ones in itertools.combinations(range(n), k):
            x = np.zeros(n, dtype=int)
            x[list(ones)] = 1
            runs.append(1 + int(np.count_nonzero(np.diff(x))))
        mean, var = runs_moments(k, n)
        assert mean == pytest.approx(np.mean(runs), rel=1e-12)
        assert var == pytest.approx(np.var(runs), rel=1e-12)


def test_runs_pooled_z_from_exact_moments():
    data = _bytes(49, 4 * 5_000)
    segs = split(data, [5_000] * 4)
    reps = [runs_of_bits(s) for s in segs]
    _, pooled = pooled_round("runs of bits", reps)
    mom = [runs_moments(r.details["ones"], r.n) for r in reps]
    z = (sum(r.details["runs"] for r in reps) - sum(e for e, _ in mom)) / math.sqrt(sum(v for _, v in mom))
    assert pooled["p_value"] == pytest.approx(math.erfc(abs(z) / math.sqrt(2)), rel=1e-7)
    # close to the runs statistic of the joined bits (which also counts the 3 pairs across segment ends)
    whole = runs_of_bits(data)
    assert abs(z) == pytest.approx(whole.details["z"], abs=0.05)


def test_runs_replicate_failing_the_prerequisite_keeps_the_replicate_p_values():
    # SP 800-22 §2.3 prerequisite |pi - 1/2| < 2 / sqrt(n): when a replicate fails it, its p-value is the
    # monobit one and the round is graded on the replicate p-values (no pooled runs sums)
    rng = np.random.default_rng(56)
    biased = np.packbits((rng.random(80_000) < 0.52).astype(np.uint8))
    reps = [runs_of_bits(s) for s in [_bytes(57, 10_000), biased, _bytes(58, 10_000)]]
    assert reps[1].pooled is None and reps[1].details["prerequisite_failed"]
    pc = PlannedCheck("runs of bits", "runs of bits", "bits", "bits", {}, 1, 1, 3)
    rr = second_level(Outcome(pc, [[r] for r in reps]))
    assert "pooled" not in rr.second_level and "uniformity" in rr.second_level


def test_pool_of_one_replicate_reproduces_each_check():
    """Every bit check with a pool function gives back its own statistic and p-value from one replicate."""
    data = _bytes(50, 40_000)
    words = np.random.default_rng(51).integers(0, 2**32, 2 * 64 * 64, dtype=np.uint32)
    cases = {
        "monobit frequency": monobit_frequency(data),
        "cumulative sums": cumulative_sums(data, direction="backward"),
        "poker bit symbols": poker_symbols(data, m=4),
        "binary matrix rank": binary_matrix_rank(data),
        "binary matrix rank lanes": binary_matrix_rank_lanes(words),
        "longest run of ones": longest_run_of_ones(data, M=128, probabilities="exact"),
        "overlapping template": overlapping_template(data),
        "linear complexity": linear_complexity(data, probabilities="exact"),
        "linear complexity lanes": linear_complexity_lanes(words, M=256, probabilities="limit"),
        "serial psi2": serial_psi2(data, m=9, order=2),
        "approximate entropy": approximate_entropy(data, m=5),
        "spectral dft": spectral_dft(data[:4_000]),
        "universal maurer": universal_maurer(data, L=5),
    }
    reg = load_all()
    for key, r in cases.items():
        one = reg[key].pool([r.pooled])
        assert one.statistic == pytest.approx(r.statistic, rel=REL, abs=1e-12), key
        assert one.p_value == pytest.approx(r.p_value, rel=1e-7), key
        if r.p_left is not None:
            assert one.p_left == pytest.approx(r.p_left, rel=1e-7), key


def test_printed_tables_are_replaced_by_the_exact_law_for_pooled_tables():
    # SP 800-22 §3.4 prints the M = 10^4 longest-run classes to 4 decimals, up to 1.6e-3 off the exact
    # recursion; a pooled table of R replicates would carry that bias R times over, so the pooled dict
    # holds the exact probabilities (the first-level statistic still uses the printed table)
    from rngassay.checks.bits.runs import LONGEST_RUN_TABLES, longest_run_class_probs

    r = longest_run_of_ones(_bytes(55, 10_000 * 80 // 8), M=10_000)
    v_lo, ncls, _, table = LONGEST_RUN_TABLES[10_000]
    e_table, e_exact = 80 * np.array(table), 80 * longest_run_class_probs(10_000, v_lo, ncls)
    counts = np.asarray(r.details["counts"])
    assert r.statistic == pytest.approx(float(np.sum((counts - e_table) ** 2 / e_table)), rel=REL)
    one = load_all()["longest run of ones"].pool([r.pooled])
    assert one.statistic == pytest.approx(float(np.sum((counts - e_exact) ** 2 / e_exact)), rel=REL)
    assert one.statistic != pytest.approx(r.statistic, rel=1e-6)


def test_replicates_with_different_shapes_are_not_pooled():
    a = longest_run_of_ones(_bytes(52, 2_048), M=8)
    b = longest_run_of_ones(_bytes(53, 2_048), M=128)
    spec = load_all()["longest run of ones"]
    with pytest.raises(ValueError):
        spec.pool([a.pooled, b.pooled])
    pc = PlannedCheck("x", "longest run of ones", "bits", "bits", {}, 1, 1, 2)
    rr = second_level(Outcome(pc, [[a], [b]]))
    assert "pooled" not in rr.second_level  # falls back to the replicate p-values


def test_pooling_through_the_battery_on_a_small_stream(tmp_path):
    # a finite file is cut into consecutive segments; monobit and cumulative sums read whole segments,
    # so their pooled statistics are the checks' statistics on the whole file
    data = _bytes(54, 4 * 16_384)
    path = tmp_path / "stream.bin"
    data.tofile(path)
    rep = api.assay(str(path), fmt="u1", checks=["monobit frequency", "cumulative sums", "byte frequency"])
    got = {c.id: c for c in rep.checks}
    mono = got["monobit frequency"]
    assert mono.replicates >= 2 and mono.rounds[0].bytes == data.size
    assert mono.second_level["pooled"]["statistic"] == pytest.approx(monobit_frequency(data).statistic, rel=REL)
    fwd = got["cumulative sums direction=forward"]
    assert fwd.second_level["pooled"]["statistic"] == cumulative_sums(data).statistic
    byt = got["byte frequency"]
    assert byt.second_level["pooled"]["statistic"] == pytest.approx(check_byte_frequency(data).statistic, rel=REL)


# --------------------------------------------------------------------------- power: the loaded die


def test_loaded_die_pooled_counts_beat_summed_chi_squares(tmp_path):
    # A die whose six comes up with probability 1.03 / 6 (3 % loaded), the other faces equally likely,
    # 300,000 rolls (numpy default_rng, fixed seed). Pooled counts over the replicates are one
    # chi-square(5) on all the rolls; the alternative, summing the replicates' chi-squares, is
    # chi-square(5 R) (reference: scipy.stats.chisquare and scipy.stats.chi2).
    rng = np.random.default_rng(20240607)
    probs = np.full(6, (1.0 - 1.03 / 6) / 5)
    probs[5] = 1.03 / 6
    rolls = rng.choice(6, size=300_000, p=probs) + 1
    path = tmp_path / "die.txt"
    path.write_text("\n".join(map(str, rolls.tolist())) + "\n")
    rep = api.assay(str(path), fmt="text", value_range="1:6", checks=["categorical frequency"])
    (chk,) = [c for c in rep.checks if c.key == "categorical frequency"]
    R = chk.replicates
    assert R >= 4
    pooled = chk.second_level["pooled"]
    whole = sps.chisquare(np.bincount(rolls - 1, minlength=6))
    assert pooled["statistic"] == pytest.approx(whole.statistic, rel=REL)
    assert pooled["p_right"] == pytest.approx(whole.pvalue, rel=1e-6)
    assert 1e-12 < pooled["p_right"] < 1e-9  # the figure: about 1e-10 (1.1e-10 with this seed)
    # the replicates are the plan's consecutive segments: recompute their chi-squares
    per = len(rolls) // R
    segs = [rolls[i * per:(i + 1) * per] - 1 for i in range(R)]
    seg_stats = [sps.chisquare(np.bincount(s, minlength=6)) for s in segs]
    assert [min(1.0, 2 * min(r.pvalue, sps.chi2.cdf(r.statistic, 5))) for r in seg_stats] == pytest.approx(
        chk.rounds[0].replicate_p, rel=1e-6)
    p_sum = sps.chi2.sf(sum(r.statistic for r in seg_stats), 5 * R)
    assert pooled["p_right"] < p_sum / 100  # e.g. 1.1e-10 against 3.5e-7 for R = 4
    assert chk.grade == "fail"


# --------------------------------------------------------------------------- null: not anti-conservative

RUNS = 200
SEGMENTS = 4
SEG_BYTES = 32_768  # 2^18 bits per replicate


def _null_cases():
    """(key, view, check on one segment) for the pooled checks, default parameters of a 2^18-bit segment."""
    nb = 8 * SEG_BYTES
    return [
        ("monobit frequency", "bits", lambda b, w, u, x: monobit_frequency(b)),
        ("block frequency", "bits", lambda b, w, u, x: block_frequency(b, M=2_648)),
        ("cumulative sums", "bits", lambda b, w, u, x: cumulative_sums(b)),
        ("runs of bits", "bits", lambda b, w, u, x: runs_of_bits(b)),
        ("longest run of ones", "bits", lambda b, w, u, x: longest_run_of_ones(b, M=128)),
        ("binary matrix rank", "bits", lambda b, w, u, x: binary_matrix_rank(b)),
        ("spectral dft", "bits", lambda b, w, u, x: spectral_dft(b)),
        ("non-overlapping template", "bits", lambda b, w, u, x: non_overlapping_template(b)),
        ("overlapping template", "bits", lambda b, w, u, x: overlapping_template(b)),
        ("universal maurer", "bits", lambda b, w, u, x: universal_maurer(b, L=5)),
        ("linear complexity", "bits", lambda b, w, u, x: linear_complexity(b, n_bits=nb // 2)),
        ("serial psi2", "bits", lambda b, w, u, x: serial_psi2(b, m=14, order=1)),
        ("approximate entropy", "bits", lambda b, w, u, x: approximate_entropy(b, m=10)),
        ("poker bit symbols", "bits", lambda b, w, u, x: poker_symbols(b, m=8)),
        ("binary matrix rank lanes", "words32", lambda b, w, u, x: binary_matrix_rank_lanes(w[:4 * 4096])),
        ("byte frequency", "bytes", lambda b, w, u, x: check_byte_frequency(b)),
        ("equidistribution", "uniforms", lambda b, w, u, x: check_equidistribution(u, d=64)),
        ("gap", "uniforms", lambda b, w, u, x: check_gap(u, 0.0, 0.5, 16)),
        ("poker", "uniforms", lambda b, w, u, x: check_poker(u, d=8, k=5)),
        ("serial overlapping", "uniforms", lambda b, w, u, x: check_serial_overlapping(u, d=2, v=16)),
        ("categorical frequency", "integers", lambda b, w, u, x: check_categorical_frequency(x, k=6)),
        ("categorical serial", "integers", lambda b, w, u, x: check_categorical_serial(x, k=6, d=2)),
    ]


@pytest.mark.slow
def test_pooled_p_values_are_not_anti_conservative():
    """200 runs of a sound stream (numpy PCG64, seeds 0..199), 4 replicates of 2^18 bits each.

    Under H0 the share of pooled p-values below 0.01 (and below 0.05) is binomial(200, level) at most
    (exactly, if the pooled laws were exact). A check fails when the count's exact binomial right tail
    is below 1e-6: for a correctly calibrated check that happens with probability <= 1e-6 per check and
    level, about 4.4e-5 over the 22 checks and 2 levels (Bonferroni) -- negligible; a check whose pooled
    law is 2.5 times too liberal at 0.01 (5 expected, 12+ counted) is caught with good chance.
    """
    cases = _null_cases()
    ps: dict[str, list[float]] = {k: [] for k, _, _ in cases}
    for seed in range(RUNS):
        rng = np.random.default_rng(seed)
        reps: dict[str, list] = {k: [] for k, _, _ in cases}
        for _ in range(SEGMENTS):
            b = rng.integers(0, 256, SEG_BYTES, dtype=np.uint8)
            w = b.view(np.uint32)
            u = rng.random(SEG_BYTES // 4)
            x = rng.integers(0, 6, SEG_BYTES // 4)
            for key, _, f in cases:
                reps[key].append(f(b, w, u, x))
        for key, view, _ in cases:
            _, pooled = pooled_round(key, reps[key], view)
            ps[key].append(pooled["p_value"])
    bad = []
    for key, p in ps.items():
        p = np.asarray(p)
        for level in (0.01, 0.05):
            k = int(np.count_nonzero(p < level))
            tail = sps.binom.sf(k - 1, RUNS, level)  # P(X >= k), exact (scipy.stats reference)
            if tail < 1e-6:
                bad.append((key, level, k))
    assert not bad, bad


def test_replicates_with_different_tables_are_not_pooled():
    # review finding: a fallback table of the same size but other cell probabilities must not be summed in
    from rngassay.battery.grade import pool_sufficient
    from rngassay.checks.catalog import load_all
    from rngassay.checks.result import CheckResult

    spec = load_all()["gap"]
    a = CheckResult("gap", 1.0, 0.5, "x", pooled={"counts": np.array([10, 10, 10]), "probs": np.array([.5, .25, .25])})
    b = CheckResult("gap", 1.0, 0.5, "x", pooled={"counts": np.array([10, 10, 10]), "probs": np.array([1 / 3] * 3)})
    assert pool_sufficient(spec, [a, b]) is None
    assert pool_sufficient(spec, [a, a]) is not None


def test_collision_replicates_pool_to_the_exact_law_of_all_samples():
    # the pooled total of four replicates equals one check on all their data (same samples, same law)
    from rngassay.checks.classic.collision import check_collision, pool_collisions

    u = np.random.Generator(np.random.PCG64(9)).random(4 * 2 * 16384 * 2)  # 4 parts of 2 samples (t = 2)
    whole = check_collision(u, d=1024, t=2, balls=16384)
    parts = [check_collision(q, d=1024, t=2, balls=16384) for q in np.split(u, 4)]
    pooled = pool_collisions([r.pooled for r in parts])
    assert pooled.statistic == whole.statistic
    assert pooled.p_value == pytest.approx(whole.p_value, rel=1e-12)
