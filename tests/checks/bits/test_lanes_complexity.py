"""Linear complexity on long blocks of the lowest bit lanes: exact law, null, power, parameters."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from rngassay.battery.plan import display_id
from rngassay.checks.registry import REGISTRY
from rngassay.checks.bits._common import bits_from_string, lanes_u64
from rngassay.checks.bits.lanes_complexity import (
    _lc_long_defaults,
    distance_tail_log2,
    linear_complexity_long_lanes,
)
from rngassay.checks.bits.complexity import _bm_blocks as bm_long_blocks
from rngassay.checks.bits.lanes_spectral import LaneParameterError


def pcg64_words(n: int, seed: int) -> np.ndarray:
    return np.random.PCG64(seed).random_raw((n + 1) // 2).view(np.uint32)[:n].copy()


def additive_lagged_fibonacci(n: int, r: int = 5, s: int = 17, seed: int = 1) -> np.ndarray:
    """x_i = (x_{i-r} + x_{i-s}) mod 2^32 (additive lagged-Fibonacci generator, Knuth, TAOCP Vol. 2,
    3rd ed., §3.2.2; lags (5, 17) from x^17 + x^5 + 1, a primitive trinomial -- from memory), seeded
    with 17 PCG64 words; vectorised r values at a time (x_{i-r} is then already known)."""
    x = np.empty(n + s, dtype=np.uint32)
    x[:s] = pcg64_words(s, seed)
    i = s
    while i < n + s:
        c = min(r, n + s - i)
        x[i:i + c] = x[i - r:i - r + c] + x[i - s:i - s + c]
        i += c
    return x[s:]


def lcg32_words(n: int, seed: int = 12345) -> np.ndarray:
    """x <- (1664525 x + 1013904223) mod 2^32 (Press et al., Numerical Recipes, 2nd ed., §7.1)."""
    a, c, mask = 1664525, 1013904223, (1 << 32) - 1
    out = np.empty(n, dtype=np.uint64)
    x = seed & mask
    m = min(n, 1024)
    for i in range(m):
        x = (a * x + c) & mask
        out[i] = x
    am, cm = 1, 0
    for _ in range(m):
        am, cm = (a * am) & mask, (a * cm + c) & mask
    while m < n:
        k = min(m, n - m)
        out[m:m + k] = (np.uint64(am) * out[:k] + np.uint64(cm)) & np.uint64(mask)
        am, cm = (am * am) & mask, (am * cm + cm) & mask
        m += k
    return out.astype(np.uint32)


# --------------------------------------------------------------------------- exact law


def test_rueppel_law_by_exhaustive_enumeration_through_the_lane_path():
    # All 2^16 sequences of M = 16 bits, one per block of lane 0: the counts of each linear complexity
    # must be Rueppel's (1986, Thm 4.2): N(0) = 1, N(L) = 2^min(2L-1, 2M-2L); and the exact tail
    # P(|L - M/2| >= d) = 2^(1-2d) the check uses.
    M = 16
    i = np.arange(1 << M, dtype=np.uint32)
    lane0 = (i[:, None] >> np.arange(M - 1, -1, -1, dtype=np.uint32)) & 1
    words = (lane0.reshape(-1) | np.uint32(0xFFFF0000)).astype(np.uint32)
    r = linear_complexity_long_lanes(words, log2_block=4, lanes=1)
    Ls = np.array(r.details["L"][0])
    counts = np.bincount(Ls, minlength=M + 1)
    expected = [1] + [2 ** min(2 * L - 1, 2 * M - 2 * L) for L in range(1, M + 1)]
    assert counts.tolist() == expected
    D = np.abs(Ls - M // 2)
    for d in range(1, M // 2 + 1):
        assert int((D >= d).sum()) == 2 ** (M + 1 - 2 * d)
        assert distance_tail_log2(d, M) == 1 - 2 * d
    # the largest distance is 8 (L = 0 and L = 16 occur): p = 1 - (1 - 2^-15)^(2^16)
    assert r.statistic == M // 2
    assert r.p_value == pytest.approx(-math.expm1((1 << M) * math.log1p(-(2.0**-15))), rel=1e-12)


def test_lane_plumbing_on_the_sp800_22_example():
    # NIST SP 800-22 Rev. 1a §2.10.8: 1101011110001 has linear complexity 4 (check-values.md §1);
    # placed in lane 6 of 13 words whose other bits are noise, the lane path must find the same L
    packed, nb = bits_from_string("1101011110001")
    bits = np.unpackbits(packed)[:nb].astype(np.uint32)
    words = (pcg64_words(13, 4) & np.uint32(~(1 << 6) & 0xFFFFFFFF)) | (bits << np.uint32(6))
    assert int(bm_long_blocks(lanes_u64(words, [6])[0], 0, 13, 1)[0]) == 4


def test_kernel_reproduces_the_sp800_22_e_example():
    # NIST SP 800-22 Rev. 1a §2.10.8: first 10^6 bits of e, M = 1000 -> P = 0.845406 (check-values.md §1),
    # with the standard's steps written out here: T_i = (-1)^M (L_i - mu) + 2/9, 7 classes, printed
    # probabilities, chi2(6)
    from bits_testkit import load_reference

    from rngassay.checks.bits._common import to_u64

    M, N = 1000, 1000
    Ls = bm_long_blocks(to_u64(load_reference("e"), M * N), 0, M, N)
    mu = M / 2 + (9 + (-1) ** (M + 1)) / 36 - (M / 3 + 2 / 9) / 2**M
    T = (-1) ** M * (Ls - mu) + 2 / 9
    counts = np.bincount(np.digitize(T, [-2.5, -1.5, -0.5, 0.5, 1.5, 2.5], right=True), minlength=7)
    probs = np.array([0.01047, 0.03125, 0.125, 0.5, 0.25, 0.0625, 0.020833])
    chi2 = float(np.sum((counts - N * probs) ** 2 / (N * probs)))
    assert stats.chi2.sf(chi2, 6) == pytest.approx(0.845406, abs=1e-6)


def test_kernel_agrees_with_plain_berlekamp_massey():
    # the word-parallel kernel against a plain one-bit-per-entry Berlekamp-Massey (Massey 1969): random,
    # sparse and periodic words, odd lengths and bit offsets, several blocks (seed 3)
    from test_bits_kernels import bm_plain  # same folder (pytest puts it on sys.path)

    rng = np.random.default_rng(3)
    for trial in range(30):
        N, start, nb = int(rng.integers(1, 400)), int(rng.integers(0, 200)), int(rng.integers(1, 4))
        nw = (start + N * nb) // 64 + 2
        w = rng.integers(0, 2**64, nw, dtype=np.uint64, endpoint=False)
        if trial % 3 == 1:
            w &= rng.integers(0, 2**64, nw, dtype=np.uint64) & rng.integers(0, 2**64, nw, dtype=np.uint64)
        elif trial % 3 == 2:
            w[:] = w[0]
        w[-1] = 0
        bits = np.unpackbits(w.astype(">u8").view(np.uint8))
        want = [bm_plain(list(map(int, bits[start + i * N: start + (i + 1) * N]))) for i in range(nb)]
        assert bm_long_blocks(w, start, N, nb).tolist() == want, trial


# --------------------------------------------------------------------------- null


def test_null_classes_on_pcg64_lanes():
    # 32 lanes x 64 blocks of M = 1024 bits from PCG64 (seed 77): L - M/2 in the classes
    # <= -2, -1, 0, 1, 2, >= 3 with the exact probabilities 1/24, 1/8, 1/2, 1/4, 1/16, 1/48 (from
    # Rueppel's law; the limits of SP 800-22 §3.10's classes, exact up to 2^-M); chi2(5) at 1e-3
    r = linear_complexity_long_lanes(pcg64_words(1 << 16, 77), log2_block=10, lanes=32)
    d = np.array(r.details["L"]).reshape(-1) - 512
    counts = np.array([(d <= -2).sum(), (d == -1).sum(), (d == 0).sum(),
                       (d == 1).sum(), (d == 2).sum(), (d >= 3).sum()])
    probs = np.array([1 / 24, 1 / 8, 1 / 2, 1 / 4, 1 / 16, 1 / 48])
    assert stats.chisquare(counts, probs * counts.sum()).pvalue > 1e-3
    assert r.kind == "discrete" and r.p_value > 1e-3


def test_pcg64_passes_at_the_planner_block_length():
    r = linear_complexity_long_lanes(pcg64_words(1 << 18, 5))
    assert r.details["M"] == 1 << 18 and r.details["lanes"] == 4
    assert r.statistic <= 12 and r.p_value > 1e-4  # P(D >= 12) = 2^-23 per block


# --------------------------------------------------------------------------- power


def test_additive_lagged_fibonacci_low_lanes():
    # measured linear complexities of lanes 0..3 of x_i = x_{i-5} + x_{i-17}: 17, 170, 4063, 119391.
    # Lane 0 is the shift register of x^17 + x^5 + 1 (L <= 17 by construction); lane 3 (L = 119391)
    # is within reach of a 2^18-bit block only.
    x = additive_lagged_fibonacci(1 << 18)
    r = linear_complexity_long_lanes(x)
    L = [row[0] for row in r.details["L"]]
    assert L[0] <= 17 and L[1] <= 17 + 17 * 16 // 2 + 17
    assert r.details["worst_lane"] == 0 and r.details["direction"] == "low" and r.details["log10_p"] < -10_000
    lane3 = linear_complexity_long_lanes(x >> np.uint32(3), lanes=1)  # lane 3 alone
    assert lane3.details["L"][0][0] < (1 << 17) - 5000 and lane3.details["log10_p"] < -1000
    short = linear_complexity_long_lanes(x[: 1 << 16] >> np.uint32(3), log2_block=16, lanes=1)
    assert short.p_value > 1e-3  # a 2^16-bit block of lane 3 looks random


def test_f2_linear_state_of_100000_bits_is_caught():
    # a shift register s_i = s_{i-39999} XOR s_{i-100000} in lane 0 (any lane would do: every output bit
    # of an F2-linear generator obeys the recurrence of its state), other lanes PCG64
    n, d, a = 1 << 18, 100_000, 39_999
    s = np.empty(n, dtype=np.uint32)
    s[:d] = pcg64_words(d, 21) & 1
    i = d
    while i < n:
        c = min(a, n - i)
        s[i:i + c] = s[i - a:i - a + c] ^ s[i - d:i - d + c]
        i += c
    words = (pcg64_words(n, 22) & np.uint32(0xFFFFFFFE)) | s
    r = linear_complexity_long_lanes(words, lanes=1)
    assert r.details["L"][0][0] <= d
    assert r.details["log10_p"] < -(2 * (n // 2 - d) - 10) * math.log10(2)


def test_mt19937_lanes():
    # Matsumoto & Nishimura (1998): every output bit of MT19937 obeys a recurrence of degree 19937
    bg = np.random.MT19937()
    bg._legacy_seeding(5489)
    w = bg.random_raw(1 << 17).astype(np.uint32)
    r = linear_complexity_long_lanes(w, log2_block=17)
    assert r.details["L"] == [[19937]] * 4 and r.details["log10_p"] < -10_000


def test_lcg32_low_lanes():
    # lane b of a power-of-two LCG with odd increment has period 2^(b+1), so L <= 2^(b+1)
    r = linear_complexity_long_lanes(lcg32_words(1 << 16), log2_block=16)
    assert all(row[0] <= 2 ** (b + 1) for b, row in enumerate(r.details["L"]))
    assert r.details["log10_p"] < -10_000


# --------------------------------------------------------------------------- parameters and registry


@pytest.mark.parametrize("kwargs, message", [
    ({"log2_block": 3}, "log2_block must be an integer in 4..20"),
    ({"log2_block": 21}, "log2_block must be an integer in 4..20"),
    ({"lanes": 0}, "lanes must be an integer in 1..lane_bits=32"),
    ({"lanes": 5, "lane_bits": 4}, "lanes must be an integer in 1..lane_bits=4"),
    ({"lane_bits": 40}, "lane_bits must be an integer in 1..32"),
    ({"log2_block": 12}, "1 block(s) of 2^12 bits per lane need 4096 words, have 1000"),
    ({"log2_block": 8, "blocks": 4}, "4 block(s) of 2^8 bits per lane need 1024 words, have 1000"),
    ({"n_words": 1001}, "n_words=1001 but 1000 words were given"),
    ({"lanes": "four"}, "lanes must be an integer in 1..lane_bits=32, got 'four'"),
    ({"log2_block": None}, "log2_block must be an integer in 4..20, got None"),
    ({"log2_block": 8, "blocks": 1.5}, "blocks must be a positive integer, got 1.5"),
])
def test_bad_parameters_raise_one_line_value_errors(kwargs, message):
    with pytest.raises(ValueError) as e:
        linear_complexity_long_lanes(np.zeros(1000, dtype=np.uint32), **kwargs)
    assert isinstance(e.value, LaneParameterError) and message in str(e.value) and "\n" not in str(e.value)


def test_wrong_dtype_is_a_value_error():
    with pytest.raises(ValueError, match="uint32"):
        linear_complexity_long_lanes(np.zeros(1 << 16, dtype=np.int64))


def test_planner_defaults_and_id():
    assert _lc_long_defaults(524_288) == [{"n_words": 1 << 18, "log2_block": 18, "lanes": 4}]
    assert _lc_long_defaults(200_000) == [{"n_words": 1 << 17, "log2_block": 17, "lanes": 4}]
    assert _lc_long_defaults((1 << 16) - 1) == []
    assert display_id(REGISTRY["linear complexity long lanes"], _lc_long_defaults(524_288)[0]) == \
        ("linear complexity long lanes lanes=4", "log2_block=18")  # the block length is chosen from the data


def test_battery_fails_lcg32_and_passes_pcg64():
    # fixed seeds; lcg32's failure is at p < 1e-300, pcg64's result a chance event at level 1e-3
    from rngassay import api

    bad = api.assay(gen="lcg32", seed=1, budget="8MiB", workers=1, checks=["linear complexity long lanes"])
    assert bad.verdict == "fail" and bad.checks[0].p_value < 1e-10
    good = api.assay(gen="pcg64", seed=3, budget="8MiB", workers=1, checks=["linear complexity long lanes"])
    assert good.verdict == "pass"
