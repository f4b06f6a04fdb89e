"""Stream behaviour of every reference generator: continuity, determinism, seeds, flaws as designed."""

from __future__ import annotations

import numpy as np
import pytest

from rngassay.errors import InputError
from rngassay.generators import (
    BIASED_P_ONE,
    GENERATORS,
    SHORT_PERIOD_BYTES,
    ByteStreamGenerator,
    make_generator,
)

NAMES = list(GENERATORS)


def test_catalogue_names_are_the_cli_contract():
    # names fixed by the CLI contract (design brief)
    assert set(GENERATORS) == {"pcg64", "philox", "sfc64", "shake256", "mt19937", "randu", "minstd",
                               "lcg32", "xorshift32", "biased", "short-period", "lcg48", "lcg48-doubles",
                               "xorshift128-doubles", "mt19937-doubles", "lagfib", "splitmix64"}
    sound = {n for n, info in GENERATORS.items() if info.quality == "sound"}
    assert sound == {"pcg64", "philox", "sfc64", "shake256", "splitmix64"}
    assert GENERATORS["mt19937"].default_seed == 5489
    assert GENERATORS["minstd"].default_seed == 1


@pytest.mark.parametrize("name", NAMES)
def test_catalogue_entry_consistent(name):
    info = GENERATORS[name]
    assert info.name == name
    assert info.summary and "\n" not in info.summary
    assert info.reference
    gen = info.factory(info.default_seed)
    assert isinstance(gen, ByteStreamGenerator)
    assert gen.word_dtype.itemsize == info.word_bytes
    assert info.word_bytes in (1, 4, 8)


@pytest.mark.parametrize("name", NAMES)
def test_continuity_across_reads(name):
    whole = make_generator(name, 3).read(1008)
    gen = make_generator(name, 3)
    parts = np.concatenate([gen.read(3), gen.read(5), gen.read(0), gen.read(1000)])
    assert parts.dtype == np.uint8
    assert np.array_equal(parts, whole)


@pytest.mark.parametrize("name", ["shake256", "biased", "short-period", "mt19937"])
def test_continuity_across_internal_blocks(name):
    # block generators (2^20-byte blocks), short-period's wrap and mt19937's 624-word twist
    total = 2**21 + 77
    whole = make_generator(name, 11).read(total)
    gen = make_generator(name, 11)
    sizes = [2**20 - 5, 3, 7, 2**19 + 1, 2**19 + 1, 1]
    sizes.append(total - sum(sizes))
    parts = np.concatenate([gen.read(n) for n in sizes])
    assert np.array_equal(parts, whole)


@pytest.mark.parametrize("name", NAMES)
def test_deterministic_per_seed_and_seeds_differ(name):
    a = make_generator(name, 2).read(4096)
    assert np.array_equal(a, make_generator(name, 2).read(4096))
    for other in (3, 12345):
        assert not np.array_equal(a, make_generator(name, other).read(4096))
    # default seed is the documented one
    assert np.array_equal(make_generator(name).read(256),
                          make_generator(name, GENERATORS[name].default_seed).read(256))


@pytest.mark.parametrize("name", NAMES)
def test_largest_seed_accepted(name):
    assert make_generator(name, 2**64 - 1).read(16).size == 16


def test_unknown_name_raises_input_error_listing_names():
    with pytest.raises(InputError) as err:
        make_generator("no-such-generator")
    message = str(err.value)
    assert "no-such-generator" in message
    assert all(name in message for name in GENERATORS)
    assert "rngassay catalog" in err.value.hint


@pytest.mark.parametrize("seed", [-1, 2**64, 2**80, 1.5, "7", True, [1]])
def test_bad_seed_raises_input_error(seed):
    with pytest.raises(InputError):
        make_generator("pcg64", seed)


@pytest.mark.parametrize("name", NAMES)
def test_bad_seed_rejected_by_every_generator(name):
    with pytest.raises(InputError):
        make_generator(name, -5)
    with pytest.raises(InputError):
        GENERATORS[name].factory(2**64)


def test_numpy_integer_seed_accepted():
    assert np.array_equal(make_generator("sfc64", np.uint64(9)).read(64),
                          make_generator("sfc64", 9).read(64))


# ---------------------------------------------------------------- short-period

def test_short_period_repeats_exactly_every_2_20_bytes():
    gen = make_generator("short-period", 5)
    data = gen.read(3 * SHORT_PERIOD_BYTES + 1000)
    p = SHORT_PERIOD_BYTES
    assert p == 2**20
    assert np.array_equal(data[:p], data[p:2 * p])
    assert np.array_equal(data[:p + 1000], data[2 * p:])
    # the first period is the pcg64 stream for the same seed (documented definition)
    assert np.array_equal(data[:p], make_generator("pcg64", 5).read(p))
    # minimal period: it divides 2^20, so it is a power of two; it is not 2^19 or less
    # because the two halves of the period differ (exact argument, no statistics)
    assert not np.array_equal(data[:p // 2], data[p // 2:p])
    # and no shorter shift in a simple scan of small lags repeats either
    for lag in (1, 8, 4096, 12345, p - 8):
        assert not np.array_equal(data[:4096], data[lag:lag + 4096])


# ---------------------------------------------------------------- biased

def test_biased_proportion_of_ones():
    # Bits i.i.d. Bernoulli(p), p = 1/2 + 1/1024: over n = 2^26 bits the count of ones is
    # Binomial(n, p) (exact), sd = sqrt(n p (1-p)) ~ 4096, and the bias n/1024 = 65536 ~ 16 sd.
    # Fixed seed. |z| < 5 around p: false failure 5.7e-7 (Q(5) = 2.8665e-7 two-sided,
    # check-values.md §6, Abramowitz & Stegun 26.2). Distance from 1/2 > 10 sd: a false failure
    # needs a 6 sd shortfall, Q(6) ~ 1e-9.
    n = 2**26
    data = make_generator("biased", 20240).read(n // 8)
    ones = int(np.count_nonzero(np.unpackbits(data)))
    assert BIASED_P_ONE == 0.5 + 1 / 1024
    sd = np.sqrt(n * BIASED_P_ONE * (1 - BIASED_P_ONE))
    assert abs(ones - n * BIASED_P_ONE) / sd < 5
    assert (ones - n * 0.5) / np.sqrt(n * 0.25) > 10


def test_biased_bits_pairwise_independent():
    # i.i.d. by construction: disjoint pairs of adjacent bits are both 1 with probability p^2
    # (same bit, and across byte boundaries). Count over 2^25 pairs is Binomial(2^25, p^2);
    # |z| < 5, false failure 5.7e-7 (Abramowitz & Stegun 26.2). Fixed seed.
    data = make_generator("biased", 777).read(2**23)
    bits = np.unpackbits(data)
    p2 = BIASED_P_ONE**2
    for offset in (0, 7):  # pairs inside bytes; pairs shifted by 7, a quarter straddling two bytes
        b = bits[offset:offset + 2 * ((bits.size - offset) // 2)].reshape(-1, 2)
        both = int(np.count_nonzero(b[:, 0] & b[:, 1]))
        m = b.shape[0]
        assert abs(both - m * p2) / np.sqrt(m * p2 * (1 - p2)) < 5
