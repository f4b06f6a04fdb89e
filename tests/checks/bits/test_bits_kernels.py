"""The word-parallel kernels agree with plain one-bit-per-byte implementations (written here from
the method definitions of NIST SP 800-22 Rev. 1a, section 2) on random inputs of awkward lengths."""

from __future__ import annotations

import hashlib
import math
import re

import numpy as np
import pytest

from rngassay.checks.bits import (
    approximate_entropy, binary_matrix_rank_lanes, block_frequency, cumulative_sums,
    linear_complexity_lanes, linear_complexity_profile_bits, longest_run_of_ones, monobit_frequency,
    non_overlapping_template, overlapping_template, random_excursions, random_excursions_variant,
    runs_of_bits, serial_psi2,
)
from rngassay.checks.bits._common import lanes_u64, to_u64
from rngassay.checks.bits.complexity import _bm, _bm_blocks, _bm_short, bm_jobs, bm_split
from rngassay.checks.bits.rank import matrix_ranks
from rngassay.checks.bits.runs import _longest_runs
from rngassay.checks.bits.serial import pattern_counts
from rngassay.checks.catalog import load_all
from rngassay.errors import InputError

from bits_testkit import REFERENCE_DIR

LENGTHS = (1, 7, 63, 64, 65, 127, 129, 1000, 4099)


def _random_bits(n, seed, p=0.5):
    return (np.random.default_rng(seed).random(n) < p).astype(np.uint8)


def _packed(bits):
    return np.packbits(bits), bits.size


def bm_plain(s):
    """Berlekamp-Massey over GF(2), one bit per list entry (Massey 1969)."""
    n = len(s)
    c, b = [1] + [0] * n, [1] + [0] * n
    L, m = 0, -1
    for i in range(n):
        d = s[i]
        for j in range(1, L + 1):
            d ^= c[j] & s[i - j]
        if d:
            t = c[:]
            for j in range(0, n + 1 - (i - m)):
                c[j + i - m] ^= b[j]
            if 2 * L <= i:
                L, m, b = i + 1 - L, i, t
    return L


def gf2_rank_plain(a):
    a = a.copy()
    r = 0
    for col in range(a.shape[1]):
        rows = [i for i in range(r, a.shape[0]) if a[i, col]]
        if not rows:
            continue
        a[[r, rows[0]]] = a[[rows[0], r]]
        for i in range(a.shape[0]):
            if i != r and a[i, col]:
                a[i] ^= a[r]
        r += 1
    return r


@pytest.mark.parametrize("n", LENGTHS)
def test_frequency_runs_cusum_match_plain(n):
    bits = _random_bits(n, n)
    packed, _ = _packed(bits)
    # garbage beyond n_bits must be ignored
    junk = packed.copy()
    if n % 8:
        junk[-1] |= np.uint8((1 << (8 - n % 8)) - 1)
    x = 2 * bits.astype(np.int64) - 1
    s = np.cumsum(x)
    assert monobit_frequency(junk, n).details["sum"] == int(s[-1])
    fz = int(np.max(np.abs(s)))
    bz = int(np.max(np.abs(np.cumsum(x[::-1]))))
    assert cumulative_sums(junk, n).details["z"] == fz
    assert cumulative_sums(junk, n, direction="backward").details["z"] == bz
    if n >= 2:
        r = runs_of_bits(junk, n)
        if not r.details.get("prerequisite_failed"):
            assert r.details["runs"] == 1 + int(np.sum(bits[1:] != bits[:-1]))


@pytest.mark.parametrize("M", [1, 3, 8, 13, 64, 100, 128])
def test_block_kernels_match_plain(M):
    bits = _random_bits(4099, M, p=0.7)
    packed, n = _packed(bits)
    N = n // M
    blocks = bits[: N * M].reshape(N, M)
    pi = blocks.mean(axis=1)
    assert block_frequency(packed, n, M=M).statistic == pytest.approx(4 * M * np.sum((pi - 0.5) ** 2))
    runs = _longest_runs(to_u64(packed, N * M), M, N)
    for row, got in zip(blocks, runs):
        want = max((len(r) for r in "".join(map(str, row)).split("0")), default=0)
        assert got == want


def test_longest_run_long_runs_across_words():
    bits = np.zeros(10_000, dtype=np.uint8)
    bits[70:300] = 1  # a run of 230 ones spanning several words
    bits[9990:] = 1
    r = _longest_runs(to_u64(np.packbits(bits), 10_000), 10_000, 1)
    assert r[0] == 230
    assert longest_run_of_ones(np.packbits(bits), M=10_000).details["counts"] == [0, 0, 0, 0, 0, 0, 1]


@pytest.mark.parametrize("template", ["001", "000000001", "11", "101", "1", "0110", "111111111"])
def test_template_counts_match_plain(template):
    bits = _random_bits(5003, len(template), p=0.6)
    packed, n = _packed(bits)
    s = "".join(map(str, bits))
    m = len(template)
    N = 7
    M = n // N
    r = non_overlapping_template(packed, n, template=template, blocks=N)
    want = []
    for b in range(N):
        blk, i, cnt = s[b * M:(b + 1) * M], 0, 0
        while i <= M - m:  # SP 800-22 §2.7.4 step (2): skip m bits after a match, else 1
            if blk[i:i + m] == template:
                cnt, i = cnt + 1, i + m
            else:
                i += 1
        want.append(cnt)
    assert r.details["counts"] == want
    Mo = 100
    ro = overlapping_template(packed, n, template=template, M=Mo, probabilities="exact")
    ov = [sum(s[b * Mo + i: b * Mo + i + m] == template for i in range(Mo - m + 1)) for b in range(n // Mo)]
    assert ro.details["counts"] == np.bincount(np.minimum(ov, 5), minlength=6).tolist()


@pytest.mark.parametrize("n", [1, 2, 5, 64, 65, 300, 777])
def test_berlekamp_massey_matches_plain(n):
    rng = np.random.default_rng(n)
    seqs = [_random_bits(n, n + 1), np.zeros(n, np.uint8), np.ones(n, np.uint8)]
    lfsr = list(rng.integers(0, 2, 17))
    while len(lfsr) < n:
        lfsr.append(lfsr[-17] ^ lfsr[-5] ^ lfsr[-2])
    seqs.append(np.array(lfsr[:n], dtype=np.uint8))
    one = np.zeros(n, np.uint8)
    one[-1] = 1  # L = n
    seqs.append(one)
    for bits in seqs:
        assert linear_complexity_profile_bits(*_packed(bits)) == bm_plain(list(map(int, bits)))


@pytest.mark.parametrize("M, start", [(500, 0), (640, 7), (8191, 3), (9000, 0), (12_345, 61)])
def test_both_berlekamp_massey_kernels_agree(M, start):
    """_bm_short (indexed loops, short blocks) and _bm (vectorised views, long blocks) are the same algorithm;
    the plain reference above pins the short form, and the long one must agree with it on any block."""
    rng = np.random.default_rng(M)
    bits = _random_bits(start + 3 * M + 64, M)
    lfsr = list(rng.integers(0, 2, 100))
    while len(lfsr) < M:
        lfsr.append(lfsr[-100] ^ lfsr[-37])  # L <= 100: the update branch is rarely taken late in the block
    bits[start + M: start + 2 * M] = lfsr[:M]
    w = to_u64(np.packbits(bits), bits.size)
    W = (M + 63) // 64
    out = []
    for kernel in (_bm_short, _bm):
        scratch = [np.empty(W + 2, np.uint64) for _ in range(4)]
        RS = np.empty((64, W + 2), np.uint64)
        out.append([kernel(w, start + b * M, M, scratch[0], RS, *scratch[1:]) for b in range(3)])
    assert out[0] == out[1]
    assert out[0][1] <= 100 and abs(out[0][0] - M / 2) < 40


@pytest.mark.parametrize("N", [1, 2, 7, 101])
def test_blocks_shared_over_threads_give_the_single_thread_result(N):
    w = to_u64(np.packbits(_random_bits(N * 500 + 64, N)), N * 500)
    assert bm_split(w, 500, N).tolist() == _bm_blocks(w, 0, 500, N).tolist()
    jobs = [(w, 3 * i, 500, N - 1) for i in range(5)] if N > 1 else [(w, 0, 500, 1)]
    assert [a.tolist() for a in bm_jobs(jobs)] == [_bm_blocks(*j).tolist() for j in jobs]


def test_berlekamp_massey_blocks_at_unaligned_offsets():
    bits = _random_bits(6000, 3)
    w = to_u64(np.packbits(bits), 6000)
    got = _bm_blocks(w, 5, 333, 17)
    assert got.tolist() == [bm_plain(list(map(int, bits[5 + 333 * i: 5 + 333 * (i + 1)]))) for i in range(17)]


@pytest.mark.parametrize("M, Q", [(3, 3), (5, 7), (32, 32), (70, 3), (65, 130)])
def test_matrix_ranks_match_plain(M, Q):
    bits = _random_bits(M * Q * 12 + 5, M + Q, p=0.35)
    got = matrix_ranks(np.packbits(bits), bits.size, M, Q)
    want = [gf2_rank_plain(bits[k * M * Q:(k + 1) * M * Q].reshape(M, Q)) for k in range(12)]
    assert got.tolist() == want


def test_pattern_counts_are_cyclic():
    for n in (10, 67, 130):
        bits = _random_bits(n, n)
        for m in (1, 3, 9):
            ext = np.concatenate([bits, bits[: m - 1]])
            vals = [int("".join(map(str, ext[i:i + m])), 2) for i in range(n)]
            assert pattern_counts(np.packbits(bits), n, m).tolist() == np.bincount(vals, minlength=2**m).tolist()


def test_lanes_are_bit_positions_of_words():
    words = np.random.default_rng(9).integers(0, 2**32, 200, dtype=np.uint64).astype(np.uint32)
    lanes = lanes_u64(words)
    for k in (0, 5, 31):
        want = ((words >> np.uint32(k)) & 1).astype(np.uint8)
        got = np.unpackbits(lanes[k].astype(">u8").view(np.uint8))[:200]
        assert got.tolist() == want.tolist()


def test_excursion_cycles_match_plain():
    bits = _random_bits(20_000, 4)
    s = np.cumsum(2 * bits.astype(np.int64) - 1)
    res = random_excursions(np.packbits(bits), min_cycles=0)
    zeros = np.flatnonzero(s == 0)
    J = zeros.size + (s[-1] != 0)
    assert res[0].details["cycles"] == J
    bounds = np.concatenate([[-1], zeros, [s.size - 1] if s[-1] != 0 else []]).astype(int)
    for r in res:
        x = r.details["state"]
        per_cycle = [int(np.sum(s[a + 1:b + 1] == x)) for a, b in zip(bounds[:-1], bounds[1:])]
        assert r.details["counts"] == np.bincount(np.minimum(per_cycle, 5), minlength=6).tolist()
    for r in random_excursions_variant(np.packbits(bits), min_cycles=0):
        assert r.details["visits"] == int(np.sum(s == r.details["state"]))


def test_excursions_not_applicable_below_500_cycles():
    bits = np.ones(2000, dtype=np.uint8)
    bits[::2] = 0  # 1000 returns to zero: applicable
    assert len(random_excursions(np.packbits(bits))) == 8
    assert len(random_excursions_variant(np.packbits(bits))) == 18
    assert random_excursions(np.packbits(bits[:998]), 998) == []  # 499 cycles


def test_bad_input_raises_input_error():
    with pytest.raises(InputError):
        monobit_frequency(np.zeros(4, dtype=np.int64))
    with pytest.raises(InputError):
        monobit_frequency(np.zeros(1, dtype=np.uint8), n_bits=9)
    with pytest.raises(InputError):
        serial_psi2(np.zeros(4, dtype=np.uint8), m=1)
    with pytest.raises(InputError):
        approximate_entropy(np.zeros(4, dtype=np.uint8), m=40)
    with pytest.raises(InputError):
        linear_complexity_lanes(np.zeros(10, dtype=np.uint32), M=500)
    with pytest.raises(InputError):
        binary_matrix_rank_lanes(np.zeros(100, dtype=np.uint32), lanes=[32])


def test_p_values_never_zero():
    bits = np.zeros(100_000, dtype=np.uint8)
    packed = np.packbits(bits)
    for r in (monobit_frequency(packed), block_frequency(packed, M=1000),
              serial_psi2(packed, m=8), approximate_entropy(packed, m=5),
              non_overlapping_template(packed, template="00000000")):
        assert r.p_value == np.finfo(float).tiny


def test_registry_entries():
    reg = {k: v for k, v in load_all().items() if v.family == "bits"}
    expected = {"monobit frequency", "block frequency", "runs of bits", "longest run of ones",
                "binary matrix rank", "spectral dft", "non-overlapping template", "overlapping template",
                "universal maurer", "linear complexity", "serial psi2", "approximate entropy",
                "cumulative sums", "random excursions", "random excursions variant", "poker bit symbols",
                "linear complexity lanes", "binary matrix rank lanes", "linear complexity lanes minimum",
                "hamming weight dependency", "spectral dft lanes", "linear complexity long lanes"}
    assert set(reg) == expected
    for key, spec in reg.items():
        assert spec.view in ("bits", "words32", "words64")
        size_key = "n_bits" if spec.view == "bits" else "n_words"
        for n in (10**5, 10**6, 3 * 10**7):
            for params in spec.default_params(n):
                assert 0 < spec.values_needed(params) <= n
                assert params[size_key] == spec.values_needed(params)
        assert spec.default_params(10) == []


def test_reference_streams_match_readme():
    # reference_streams/README.md lists the SHA-256 of each file
    readme = (REFERENCE_DIR / "README.md").read_text(encoding="utf-8")
    for name in ("e", "pi", "sqrt2", "sqrt3"):
        data = (REFERENCE_DIR / f"{name}.bin").read_bytes()
        assert len(data) == 125_000
        digest = hashlib.sha256(data).hexdigest()
        assert re.search(rf"`{name}\.bin`.*`{digest}`", readme)
    # integer parts: e = 10.1..., pi = 11.0..., sqrt2 = 1.01..., sqrt3 = 1.10... (check-values.md §2)
    assert (REFERENCE_DIR / "e.bin").read_bytes()[0] >> 5 == 0b101
    assert (REFERENCE_DIR / "pi.bin").read_bytes()[0] >> 5 == 0b110
    assert (REFERENCE_DIR / "sqrt2.bin").read_bytes()[0] >> 5 == 0b101
    assert (REFERENCE_DIR / "sqrt3.bin").read_bytes()[0] >> 5 == 0b110


@pytest.mark.parametrize("m, n", [(4, 4000), (4, 4004), (4, 4003), (8, 4000), (3, 3001), (5, 999)])
def test_poker_counts_match_plain(m, n):
    from rngassay.checks.bits import poker_symbols

    bits = _random_bits(n, m * n, p=0.4)
    k = n // m
    vals = bits[: k * m].reshape(k, m) @ (1 << np.arange(m - 1, -1, -1))
    r = poker_symbols(np.packbits(bits), n, m=m)
    assert r.details["counts"] == np.bincount(vals, minlength=2**m).tolist()
