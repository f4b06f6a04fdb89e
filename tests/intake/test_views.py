"""View conventions, checked against independent definitions (numpy's own conventions where they exist)."""

import numpy as np
import pytest

from rngassay.intake import views
from rngassay.intake.formats import parse_format


def raw(seed, n):
    return np.random.Generator(np.random.PCG64(seed)).bytes(n)


def test_uniforms_from_bytes_match_numpy_random():
    # numpy's Generator.random(): (next_uint64 >> 11) * 2**-53 (numpy docs, "random" / source convention)
    bg = np.random.PCG64(7)
    words = bg.random_raw(1000)
    u = views.as_uniforms(np.frombuffer(words.astype("<u8").tobytes(), np.uint8), parse_format("u1"))
    ref = np.random.Generator(np.random.PCG64(7)).random(1000)
    assert np.array_equal(u, ref)


def test_words32_little_endian_from_bytes():
    b = np.frombuffer(bytes([1, 2, 3, 4, 5, 6, 7, 8]), np.uint8)
    w = views.as_words32(b, parse_format("u1"))
    assert w.tolist() == [0x04030201, 0x08070605]


def test_words_respect_declared_byte_order():
    data = bytes([0x12, 0x34, 0x56, 0x78])
    be = np.frombuffer(data, ">u4")
    le = np.frombuffer(data, "<u4")
    assert views.as_words32(be, parse_format(">u4")).tolist() == [0x12345678]
    assert views.as_words32(le, parse_format("<u4")).tolist() == [0x78563412]


def test_bits_of_words_are_msb_first_whatever_the_byte_order():
    w = np.array([0x80000001], dtype=np.uint32)
    for name in ("<u4", ">u4"):
        packed, n = views.as_bits(w.astype(name), parse_format(name))
        bits = np.unpackbits(packed)[:n]
        assert n == 32 and bits[0] == 1 and bits[-1] == 1 and bits[1:-1].sum() == 0


def test_bits_of_bytes_msb_first():
    packed, n = views.as_bits(np.array([0b10100000], np.uint8), parse_format("u1"))
    assert np.unpackbits(packed).tolist() == [1, 0, 1, 0, 0, 0, 0, 0] and n == 8


def test_words64_from_words32_low_first():
    w = np.array([1, 2], dtype="<u4")
    assert views.as_words64(w, parse_format("<u4")).tolist() == [1 | (2 << 32)]
    assert views.as_words32(np.array([1 | (2 << 32)], "<u8"), parse_format("<u8")).tolist() == [1, 2]


def test_uniform_resolution_of_u4_words():
    w = np.array([0, 2**31, 2**32 - 1], dtype="<u4")
    u = views.as_uniforms(w, parse_format("<u4"))
    assert u.tolist() == [0.0, 0.5, (2**32 - 1) / 2**32]


@pytest.mark.parametrize("k", [2, 6, 7, 59, 256, 1000, 2**20])
def test_integers_unbiased_and_in_range(k):
    b = np.frombuffer(raw(3, 4 * 200_000), np.uint8)
    x, kk = views.as_integers(b, parse_format("u1"), k)
    assert kk == k and x.min() >= 0 and x.max() < k
    # sanity only: a chi-square at this size cannot see modulo bias (~k/2^32); the exact rejection zone
    # is tested in test_rejection_drops_exactly_the_biased_zone (fixed seed; bound 1e-6: no false failure)
    if k <= 1000:
        from scipy import stats

        counts = np.bincount(x, minlength=k)
        assert stats.chisquare(counts).pvalue > 1e-6


def test_rejection_drops_exactly_the_biased_zone():
    k = 3
    w = np.array([0, 1, 2, 2**32 - 1, 2**32 - 2, 2**32 - 3, 2**32 - 4], dtype="<u4")
    x, _ = views.as_integers(w, parse_format("<u4"), k)
    # limit = 3 * floor(2**32 / 3) = 2**32 - 1: only 2**32 - 1 is rejected
    assert x.tolist() == [0, 1, 2, (2**32 - 2) % 3, (2**32 - 3) % 3, (2**32 - 4) % 3]


def test_text_integers_view_uses_declared_range():
    f = parse_format("text", "1:6")
    x, k = views.as_integers(np.array([1, 6, 3]), f)
    assert k == 6 and x.tolist() == [0, 5, 2]
    assert views.available_views(f) == ("integers",)
