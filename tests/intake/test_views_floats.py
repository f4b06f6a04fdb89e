"""Word, bit and window views of float inputs (wave 2a), against their definitions and numpy's conventions."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from rngassay.checks.transform.resolution import check_fraction_grid, pool_fraction_grid
from rngassay.intake import views
from rngassay.intake.formats import parse_format

F8 = parse_format("<f8")
F4 = parse_format("<f4")


def test_words32_of_doubles_are_the_top_fraction_bits_of_numpy_random():
    # numpy's Generator.random() is (next64 >> 11) * 2**-53 (numpy documentation, common practice), so
    # floor(u * 2**32) -- the words32 view -- must be the top 32 bits of the raw 64-bit outputs
    raw = np.random.PCG64(7).random_raw(4096)
    u = np.random.Generator(np.random.PCG64(7)).random(4096)
    w = views.as_words32(u, F8)
    assert w.dtype == np.uint32
    assert np.array_equal(w, (raw >> np.uint64(32)).astype(np.uint32))
    # and the low 21 fraction bits are the fraction-tail lanes
    tail, lanes = views.as_window(u, F8, "words32", "fraction-tail")
    assert lanes == 21
    assert np.array_equal(tail, ((raw >> np.uint64(11)) & np.uint64((1 << 21) - 1)).astype(np.uint32))


def test_bits_of_doubles_are_the_words_most_significant_first():
    u = np.random.Generator(np.random.PCG64(3)).random(64)
    packed, nbits = views.as_bits(u, F8)
    assert nbits == 64 * 32
    expect = np.unpackbits(views.as_words32(u, F8).astype(">u4").view(np.uint8))
    assert np.array_equal(np.unpackbits(packed), expect)


def test_float32_views_take_only_24_bits():
    u = np.random.Generator(np.random.PCG64(5)).random(1000, dtype=np.float32)
    packed, nbits = views.as_bits(u, F4)
    assert nbits == 1000 * 24
    m = (u.astype(np.float64) * 2**24).astype(np.int64)  # exact: float32 has 24 significant bits
    bits = np.unpackbits(packed)[:nbits].reshape(1000, 24)
    again = bits.astype(np.int64) @ (1 << np.arange(23, -1, -1))
    assert np.array_equal(again, m)
    w = views.as_words32(u, F4)
    assert w.size == 1000 * 24 // 32
    assert "fraction-tail" not in views.available_windows(F4, "words32")


@pytest.mark.parametrize("n, r", [(1, 31), (5, 6), (7, 25), (9, 30), (33, 1), (3, 24)])
def test_words32_of_short_fields_hold_no_padding_bit(n, r):
    """Fields of r < 32 bits: the words32 view holds the whole words of the n r-bit sequence only (the padding bits
    of the last packed byte are not data: before, n = 1, r = 31 gave one word ending in a padding 0)."""
    fmt = dataclasses.replace(F8, grid_bits=r)
    m = np.random.default_rng(n * 100 + r).integers(0, 2**r, n)
    u = m * 2.0**-r
    seq = "".join(format(int(v), f"0{r}b") for v in m)
    w = views.as_words32(u, fmt)
    assert w.tolist() == [int(seq[32 * i : 32 * i + 32], 2) for i in range(len(seq) // 32)]


def test_six_printed_decimals_carry_exactly_six_fair_bits():
    # u = k / 10^6: floor(u * 2^6) = floor(k / 5^6), and each of the 64 results takes exactly 5^6 grid
    # points (exact arithmetic over the whole grid)
    fmt = dataclasses.replace(parse_format("text"), decimals=6)
    k = np.arange(10**6)
    u = k / 1e6
    packed, nbits = views.as_bits(u, fmt)
    assert nbits == 6 * 10**6
    fields = np.unpackbits(packed)[:nbits].reshape(-1, 6) @ (1 << np.arange(5, -1, -1))
    assert np.array_equal(fields, k // 5**6)
    assert np.all(np.bincount(fields, minlength=64) == 5**6)


def test_dithered_text_floats_are_uniform_and_reproducible():
    from scipy import stats

    u = np.round(np.random.Generator(np.random.PCG64(9)).random(200_000), 3)
    u[u >= 1.0] = 0.0
    a = views.dithered_uniforms(u, 3, segment=0)
    b = views.dithered_uniforms(u, 3, segment=0)
    c = views.dithered_uniforms(u, 3, segment=1)
    assert np.array_equal(a, b) and not np.array_equal(a, c)
    assert np.all((a >= 0) & (a < 1))
    assert np.array_equal(np.floor(a * 1000), np.rint(u * 1000))  # each value stays in its own cell
    # scipy.stats.kstest as the reference; a false failure at 1e-6 is negligible (fixed seed anyway)
    assert stats.kstest(a, "uniform").pvalue > 1e-6


@given(st.lists(st.integers(0, 2**32 - 1), min_size=1, max_size=50))
@settings(max_examples=50, deadline=None)
def test_reverse32_matches_string_reversal_and_is_an_involution(ws):
    w = np.array(ws, dtype=np.uint32)
    r = views.reverse32(w)
    assert [int(x) for x in r] == [int(f"{v:032b}"[::-1], 2) for v in ws]
    assert np.array_equal(views.reverse32(r), w)


def test_reversed_window_of_words_and_doubles():
    fmt = parse_format("<u4")
    w = np.array([1, 2, 0x80000000], dtype=np.uint32)
    assert list(views.as_window(w, fmt, "words32", "reversed")) == [0x80000000, 0x40000000, 1]
    u = views.as_window(w, fmt, "uniforms", "reversed")
    assert list(u) == [0.5, 0.25, 2.0**-32]
    # doubles on a 48-bit grid: the window is the lowest 32 of the 48 bits the values carry
    x = np.array([3, 5], dtype=np.float64) * 2.0**-48
    f48 = dataclasses.replace(F8, grid_bits=48)
    assert list(views.as_window(x, f48, "words32", "reversed")) == [0xC0000000, 0xA0000000]


@pytest.mark.parametrize("bits", [53, 52, 48, 32, 24])
def test_fraction_grid_bits_finds_the_grid(bits):
    rng = np.random.Generator(np.random.PCG64(bits))
    u = (rng.integers(0, 2**bits, size=5000, dtype=np.uint64) | np.uint64(1)).astype(np.float64) * 2.0**-bits
    assert views.fraction_grid_bits(u, 53) == bits


def test_fraction_grid_check_fails_a_48_bit_grid_and_names_52_bits():
    # exact law: P(n values on the 2^-53 grid all lie on the 2^-r grid) = 2^(-n (53 - r)); the check
    # tolerates one bit (t = 52), so for r = 48 and n = 100 it reports 2^(-400)
    rng = np.random.Generator(np.random.PCG64(1))
    u48 = (rng.integers(0, 2**48, size=100, dtype=np.uint64) | np.uint64(1)).astype(np.float64) * 2.0**-48
    r = check_fraction_grid(u48, 53)
    assert r.statistic == 48 and r.p_value == pytest.approx(2.0**-400, rel=1e-12)
    assert "2^-48" in r.details["note"]
    u52 = (rng.integers(0, 2**52, size=100, dtype=np.uint64) | np.uint64(1)).astype(np.float64) * 2.0**-52
    r52 = check_fraction_grid(u52, 53)
    assert r52.p_value == 1.0 and "52-bit" in r52.details["note"]
    assert "note" not in check_fraction_grid(np.random.Generator(np.random.PCG64(2)).random(1000), 53).details
    honest = rng.random(100_000)
    assert check_fraction_grid(honest, 53).p_value == 1.0
    # pooled over replicates: all values at once
    pooled = pool_fraction_grid([r.pooled, check_fraction_grid(u48[:50], 53).pooled])
    assert pooled.statistic == 48 and pooled.p_value == pytest.approx(2.0**-600, rel=1e-12)


def test_float_formats_offer_word_and_bit_views():
    for fmt in (F8, F4, parse_format("text")):
        assert {"words32", "bits", "uniforms"} <= set(views.available_views(fmt))
    assert views.input_bytes_per_value(F8, "words32") == 8.0
    assert views.input_bytes_per_value(F8, "bits") == 0.25
    assert views.input_bytes_per_value(F4, "bits") == pytest.approx(4 / 24)


@settings(max_examples=60, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), size=st.integers(1, 3000), grid=st.integers(0, 53),
       claimed=st.sampled_from([8, 16, 24, 32, 53]), special_values=st.lists(st.sampled_from([0.0, 1.0, 0.5]),
                                                                                max_size=3))
def test_fraction_grid_kernel_equals_the_plain_numpy_rule(seed, size, grid, claimed, special_values):
    """The one-pass kernel against the rule it implements: OR of floor(u 2^claimed), trailing zeros."""
    u = np.floor(np.random.default_rng(seed).random(size) * 2.0**grid) / 2.0**grid
    u = np.concatenate([u, special_values])
    m = np.floor(u * 2.0**claimed).astype(np.uint64)
    acc = int(np.bitwise_or.reduce(m))
    want = 0 if acc == 0 else claimed - ((acc & -acc).bit_length() - 1)
    assert views.fraction_grid_bits(u, claimed) == want


@settings(max_examples=30, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), size=st.integers(0, 5000))
def test_uniforms_of_64_bit_words_equal_the_numpy_rule(seed, size):
    """The one-pass kernel against numpy's (w >> 11) * 2^-53, the top 53 bits of each word (common practice)."""
    w = np.random.default_rng(seed).integers(0, 2**64 - 1, size, dtype=np.uint64, endpoint=True)
    w[:3] = np.array([0, 2**64 - 1, 2**11 - 1], dtype=np.uint64)[: min(3, size)]
    want = (w >> np.uint64(11)).astype(np.float64) * 2.0**-53
    for name in ("u1", "<u8"):
        fmt = parse_format(name)
        vals = w.view(np.uint8) if name == "u1" else w
        got = views.as_uniforms(vals, fmt)
        assert got.dtype == np.float64 and np.array_equal(got, want)
