"""The sweep's statistics and kernels against exact formulas and scipy.stats as reference.

Statistical assertions use fixed seeds; where a sound input must pass, the level is such that a false
failure has probability below 1e-6 (said at each place).
"""

import math

import numpy as np
import pytest
from scipy import stats as sps

from rngassay.seeds import kernels as K
from rngassay.seeds import measures as M


def _rows(seed, n, B):
    return np.random.default_rng(seed).integers(0, 256, (n, B), dtype=np.uint8)


# ------------------------------------------------------------------------------------------ early bytes


def test_early_bytes_chi_square_matches_scipy():
    first = _rows(1, 2000, 4)
    m = M.early_bytes(first)
    # 2000 seeds: cells = 2^floor(log2(2000/5)) = 2^8 = 256 (5 expected per cell, common practice)
    assert m.details["cells"] == 256
    j = m.details["worst_position"]
    ref = sps.chisquare(np.bincount(first[:, j], minlength=256))  # scipy.stats as reference
    assert m.details["worst_position_chi2"] == pytest.approx(ref.statistic, rel=1e-12)
    # both tails, doubled smaller: 2 min(sf, cdf) (common practice)
    p_chi = min(1.0, 2 * min(ref.pvalue, sps.chi2.cdf(ref.statistic, 255)))
    assert m.details["worst_position_p_chi2"] == pytest.approx(p_chi, rel=1e-9)
    # a sound input: p-value above 1e-6 (false failure below 1e-6 at this level; fixed seed)
    assert m.p_value > 1e-6


def test_early_bytes_cells_shrink_with_few_seeds():
    m = M.early_bytes(_rows(2, 100, 8))
    # 100 seeds: b = floor(log2(100/5)) = 4 -> 16 cells of top 4 bits
    assert m.details["cells"] == 16 and m.details["expected_per_cell"] == pytest.approx(100 / 16)
    assert M.early_bytes(_rows(2, 9, 8)) is None


def test_early_bytes_flags_one_favoured_value():
    first = _rows(3, 20000, 4)
    # plant the bias of RC4's second output byte: value 0 with probability 2/256 instead of 1/256
    # (Mantin and Shamir 2001, FSE, LNCS 2355)
    rng = np.random.default_rng(4)
    first[rng.random(20000) < 1 / 256, 1] = 0
    m = M.early_bytes(first)
    assert m.details["worst_position"] == 1 and m.details["worst_cell_values"] == "0..0"
    # the cell count is Binomial(20000, 1/256) under H0 (mean 78, sd 8.8); ~156 observed is ~9 sd out
    k = m.details["worst_cell_count"]
    ref = sps.binomtest(k, 20000, 1 / 256, alternative="greater").pvalue  # scipy.stats as reference
    assert ref < 1e-12 and m.p_value < 1e-8


# ------------------------------------------------------------------------------------------- avalanche


def test_avalanche_edges_form_a_forest():
    a, b, bit, dropped = M.avalanche_edges(np.array([0, 3], np.uint64), 2)
    # base 0: (0,1) bit 0, (0,2) bit 1; base 3: (3,2) bit 0, then (3,1) would close the cycle 0-1-3-2-0
    assert list(zip(a.tolist(), b.tolist(), bit.tolist())) == [(0, 1, 0), (0, 2, 1), (3, 2, 0)] and dropped == 1
    a, b, bit, dropped = M.avalanche_edges(np.arange(128, dtype=np.uint64), 64)
    verts = np.unique(np.concatenate([a, b]))
    # a forest on V vertices with one component has V - 1 edges: flipping bits 0..6 stays inside 0..127
    # (so all 128 bases are connected), flipping bits 7..63 adds a fresh leaf every time
    assert a.size == verts.size - 1 and a.size + dropped == 128 * 64
    assert a.size == 127 + 128 * 57


def test_avalanche_pooled_binomial_matches_scipy():
    rng = np.random.default_rng(5)
    d = rng.binomial(128, 0.5, size=4000)
    bit = np.arange(4000) % 64
    m = M.avalanche(d, bit, 128, 64)
    D, n = int(d.sum()), 4000 * 128
    # for p = 1/2 the doubled smaller tail equals scipy's two-sided binomial test (symmetric law)
    ref = sps.binomtest(D, n, 0.5).pvalue
    assert m.details["p_pooled"] == pytest.approx(ref, rel=1e-9)
    assert m.p_value > 1e-6  # sound input (false failure below 1e-6; fixed seed)
    # a weak mixer: 40 of 128 bits change on average for flips of bit 17
    d2 = d.copy()
    d2[bit == 17] = rng.binomial(128, 40 / 128, size=int((bit == 17).sum()))
    m2 = M.avalanche(d2, bit, 128, 64)
    assert m2.details["worst_seed_bit"] == 17 and m2.p_value < 1e-20


def test_hamming_and_sidak():
    a = np.array([[0b10110000, 0xFF]], np.uint8)
    b = np.array([[0b00110001, 0x0F]], np.uint8)
    assert K.hamming(a, b).tolist() == [2 + 4]
    # Sidak: 1 - (1 - p)^m, exact formula (Sidak 1967)
    assert M.sidak(0.01, 10) == pytest.approx(1 - 0.99**10, rel=1e-12)
    assert M.sidak(1e-20, 1000) == pytest.approx(1e-17, rel=1e-9)


# ------------------------------------------------------------------------------------ cross-correlation


def test_cross_z_formula_and_null_law():
    mat = _rows(6, 3, 8 * 4096)
    z = K.cross_z(mat, 3)
    u = K.uniforms(mat) - 0.5
    n = u.shape[1]
    # lag +2 of pair (0, 1): 12 sum a[t+2] b[t] / sqrt(n-2); Var(U) = 1/12 (uniform law), so the
    # products have variance 1/144 and z has variance 1
    assert z[0, 3 + 2] == pytest.approx(12 * np.dot(u[0, 2:], u[1, : n - 2]) / math.sqrt(n - 2), rel=1e-10)
    assert z[1, 3 - 1] == pytest.approx(12 * np.dot(u[1, : n - 1], u[2, 1:]) / math.sqrt(n - 1), rel=1e-10)
    # many independent pairs: the z's follow N(0, 1) (Kolmogorov-Smirnov against scipy's normal; fixed
    # seed; rejected below 1e-6 only)
    big = K.cross_z(_rows(7, 301, 8 * 1024), 4).ravel()
    assert sps.kstest(big, "norm").pvalue > 1e-6
    m = M.cross_correlation(K.cross_z(_rows(8, 200, 8 * 1024), 4), 4)
    assert m.p_value > 1e-6


def test_cross_correlation_sees_a_shift_by_one_word():
    base = _rows(9, 1, 8 * 1025)[0]
    mat = np.stack([base[:-8], base[8:]])  # stream 2 = stream 1 shifted by one 8-byte word
    z = K.cross_z(mat, 2)
    # lag +1: a[t+1] = b[t]: z = 12 sum (u - 1/2)^2 / sqrt(n - 1) ~ sqrt(n - 1) = 32 (sd of the sum ~ 0.9 in z)
    assert 28 < z[0, 2 + 1] < 36
    m = M.cross_correlation(z, 2, np.array([[10, 11]], np.uint64))
    assert m.details["max_z_lag"] == 1 and m.details["max_z_pair"] == [10, 11] and m.p_value < 1e-100


# ------------------------------------------------------------------------------------- overlaps/merging


def _overlap_result(mat, spacing=64):
    rows, pos, hi, lo = K.anchors(mat, spacing, 4 * mat.shape[1] // spacing + 16)
    seeds = np.arange(mat.shape[0], dtype=np.uint64) + 100
    return M.overlaps(seeds, K.digests(mat), rows, pos, hi, lo, spacing, mat.shape[1])


def test_overlaps_find_shifts_and_duplicates_only():
    mat = _rows(10, 40, 4096)
    clean = _overlap_result(mat)
    assert clean.p_value == 1.0 and clean.statistic == 0
    long = _rows(11, 1, 4096 + 777)[0]
    mat[5] = long[:4096]
    mat[17] = long[777:]  # stream of seed 117 = stream of seed 105 from byte 777
    mat[30] = mat[3]  # identical streams
    m = _overlap_result(mat)
    d = m.details
    assert d["duplicate_streams"] == 1 and d["duplicates"] == [[103, 130]]
    assert {"seed_a": 105, "seed_b": 117, "shift_bytes": 777} in d["overlaps"]
    # birthday bound: C(N, 2) spacing 2^-128 <= 2^(2 log2 N - 1 + log2 spacing - 128) (union bound)
    N = d["windows_compared"]
    assert m.p_value <= 2.0 ** (2 * math.log2(N) - 1 + 6 - 128) * 1.01 and m.p_value < 1e-20


def test_anchor_windows_are_content_defined():
    s = _rows(12, 1, 8192)[0]
    r1 = K.anchors(s[None, :], 64, 10_000)
    r2 = K.anchors(s[None, 333:], 64, 10_000)
    w1 = {(int(h), int(l)): int(p) for p, h, l in zip(r1[1], r1[2], r1[3])}
    w2 = {(int(h), int(l)): int(p) for p, h, l in zip(r2[1], r2[2], r2[3])}
    common = set(w1) & set(w2)
    # every window kept in the shifted copy (except its forced position-0 window) is kept in the original
    assert len(common) >= len(w2) - 1 and all(w1[c] - w2[c] == 333 for c in common)
    # about (8192 - 15) / 64 windows kept by content (binomial; very loose bounds)
    assert 80 < len(w1) < 180
    assert int(r1[1][0]) == 0  # position 0 always kept


def test_interleave_order():
    a = np.arange(32, dtype=np.uint8).reshape(2, 16)
    out = K.interleave(a)
    assert out.tolist() == list(range(0, 8)) + list(range(16, 24)) + list(range(8, 16)) + list(range(24, 32))
