"""Wave-2 reference generators: lcg48, lcg48-doubles, xorshift128-doubles, mt19937-doubles, lagfib, splitmix64.

Each is checked against figures or implementations from outside the project (named beside the
check) and against a plain-Python transcription of its published definition.
"""

from __future__ import annotations

import ctypes
import ctypes.util

import numpy as np
import pytest

from genref_plain import MT19937
from rngassay.errors import InputError
from rngassay.generators import GENERATORS, make_generator
from rngassay.generators.doubles import XORSHIFT128_PAPER_STATE, res53, xorshift128
from rngassay.generators.lagfib import LagFibStream
from rngassay.generators.splitmix import splitmix64

M32 = 0xFFFFFFFF
M48 = 2**48 - 1
M64 = 2**64 - 1
NEW = ["lcg48", "lcg48-doubles", "xorshift128-doubles", "mt19937-doubles", "lagfib", "splitmix64"]
DOUBLES = ["lcg48-doubles", "xorshift128-doubles", "mt19937-doubles"]


def values(name: str, seed: int | None, count: int, dtype: str) -> np.ndarray:
    return make_generator(name, seed).read(count * np.dtype(dtype).itemsize).view(dtype)


# ---------------------------------------------------------------- plain-Python transcriptions

def plain_lcg48(x: int, count: int) -> list[int]:
    # POSIX drand48 family: X <- (0x5DEECE66D X + 0xB) mod 2**48; returns the new states
    out = []
    for _ in range(count):
        x = (0x5DEECE66D * x + 0xB) & M48
        out.append(x)
    return out


def plain_splitmix64(s: int, count: int) -> list[int]:
    # Steele, Lea, Flood (2014), OOPSLA: state += gamma; mix with (30, 27, 31) and the two odd constants
    out = []
    for _ in range(count):
        s = (s + 0x9E3779B97F4A7C15) & M64
        z = s
        z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & M64
        z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & M64
        out.append(z ^ (z >> 31))
    return out


def plain_xor128(x: int, y: int, z: int, w: int, count: int) -> list[int]:
    # Marsaglia (2003), Xorshift RNGs, J. Stat. Softw. 8(14), routine xor128
    out = []
    for _ in range(count):
        t = (x ^ (x << 11)) & M32
        x, y, z = y, z, w
        w = (w ^ (w >> 19)) ^ (t ^ (t >> 8))
        out.append(w)
    return out


def plain_res53(words: list[int]) -> list[float]:
    # mt19937ar.c (Matsumoto & Nishimura, 2002), genrand_res53, in the reference code's float arithmetic
    out = []
    for i in range(0, len(words), 2):
        a, b = words[i] >> 5, words[i + 1] >> 6
        out.append((a * 67108864.0 + b) * (1.0 / 9007199254740992.0))
    return out


def _libc():
    name = ctypes.util.find_library("c")
    if name is None:
        return None
    try:
        lib = ctypes.CDLL(name)
        lib.drand48.restype = ctypes.c_double
        lib.mrand48.restype = ctypes.c_long
        lib.srand48.argtypes = [ctypes.c_long]
        lib.seed48.restype = ctypes.POINTER(ctypes.c_ushort)
        lib.seed48.argtypes = [ctypes.POINTER(ctypes.c_ushort)]
    except (OSError, AttributeError):
        return None
    return lib


LIBC = _libc()
needs_libc48 = pytest.mark.skipif(LIBC is None, reason="C library with the POSIX drand48 family not found")


# ---------------------------------------------------------------- lcg48

@pytest.mark.parametrize("seed, first", [(0, -1155484576), (42, -1170105035)])
def test_lcg48_first_int_java_util_random_from_memory(seed, first):
    # from memory: java.util.Random(seed).nextInt() (Java SE API specification: setSeed scrambles
    # with 0x5DEECE66D, next(32) returns state bits 47..16) is -1155484576 for seed 0 and
    # -1170105035 for seed 42
    assert values("lcg48", seed, 1, "<i4")[0] == first


@pytest.mark.parametrize("seed", [0, 1, 42, 2**48 - 1, 2**48, 2**64 - 1])
def test_lcg48_matches_plain_python_posix_definition(seed):
    states = plain_lcg48((seed ^ 0x5DEECE66D) & M48, 2000)
    assert values("lcg48", seed, 2000, "<u4").tolist() == [s >> 16 for s in states]


@needs_libc48
@pytest.mark.parametrize("seed", [0, 42, 2**47 + 12345])
def test_lcg48_matches_c_library_mrand48(seed):
    # outside implementation: the C library's POSIX mrand48 (signed bits 47..16 of the new state),
    # started from the same 48-bit state through seed48 (three 16-bit parts, low first)
    state = (seed ^ 0x5DEECE66D) & M48
    arg = (ctypes.c_ushort * 3)(state & 0xFFFF, (state >> 16) & 0xFFFF, state >> 32)
    LIBC.seed48(arg)
    expected = [LIBC.mrand48() for _ in range(1000)]
    assert values("lcg48", seed, 1000, "<i4").tolist() == expected


def test_lcg48_low_output_bit_has_period_2_17():
    # the designed flaw (Knuth TAOCP vol. 2, 3.2.1.1: bit j of a power-of-two LCG has period 2**(j+1));
    # output bit 0 is state bit 16: period exactly 2**17 (it repeats; half of it does not)
    bits = values("lcg48", 7, 2**18, "<u4") & 1
    p = 2**17
    assert np.array_equal(bits[:p], bits[p:])
    assert not np.array_equal(bits[:p // 2], bits[p // 2:p])


# ---------------------------------------------------------------- lcg48-doubles

@needs_libc48
@pytest.mark.parametrize("seed", [0, 1, 12345, 2**31 - 1, 2**32 - 1])
def test_lcg48_doubles_matches_c_library_srand48_drand48(seed):
    # outside implementation: the C library's POSIX srand48(seed); drand48() ...
    LIBC.srand48(seed)
    expected = np.array([LIBC.drand48() for _ in range(1000)])
    assert np.array_equal(values("lcg48-doubles", seed, 1000, "<f8"), expected)


@pytest.mark.parametrize("seed", [0, 7, 2**32 - 1, 2**40 + 7, 2**64 - 1])
def test_lcg48_doubles_matches_plain_python_posix_definition(seed):
    # POSIX srand48: state = (low 32 bits of the seed) << 16 | 0x330E; drand48 = new state / 2**48
    states = plain_lcg48(((seed & M32) << 16) | 0x330E, 2000)
    assert values("lcg48-doubles", seed, 2000, "<f8").tolist() == [s / 2**48 for s in states]


def test_lcg48_doubles_seeds_alias_on_low_32_bits():
    # documented srand48 convention: only the low 32 bits of the seed matter
    assert np.array_equal(values("lcg48-doubles", 5, 100, "<f8"), values("lcg48-doubles", 2**32 + 5, 100, "<f8"))


def test_lcg48_doubles_on_48_bit_grid_and_not_finer():
    v = values("lcg48-doubles", 3, 100_000, "<f8")
    k = v * 2**48
    assert np.all((v >= 0) & (v < 1))
    assert np.all(k == np.floor(k))
    # the grid is not coarser than 2**-48: odd numerators occur (the state's lowest bit alternates)
    assert np.any(k.astype(np.uint64) & np.uint64(1))


# ---------------------------------------------------------------- xorshift128-doubles

def test_xor128_core_paper_outputs_from_memory():
    # Marsaglia (2003), J. Stat. Softw. 8(14), xor128 from x=123456789, y=362436069, z=521288629,
    # w=88675123: first outputs 3701687786, 458299110, 2500872618 (from memory)
    assert XORSHIFT128_PAPER_STATE == (123456789, 362436069, 521288629, 88675123)
    out, _ = xorshift128(XORSHIFT128_PAPER_STATE, 3)
    assert out.tolist() == [3701687786, 458299110, 2500872618]


def test_xor128_core_matches_plain_python_and_continues():
    state = (1, 2, 3, 0xDEADBEEF)
    a, s = xorshift128(state, 700)
    b, _ = xorshift128(s, 300)
    assert np.concatenate([a, b]).tolist() == plain_xor128(*state, 1000)


def test_xorshift128_doubles_default_is_paper_state_by_res53():
    # seed 0 (default) = the paper's state; doubles by genrand_res53 (mt19937ar.c) of output pairs
    words = plain_xor128(*XORSHIFT128_PAPER_STATE, 2000)
    assert values("xorshift128-doubles", None, 1000, "<f8").tolist() == plain_res53(words)
    assert np.array_equal(values("xorshift128-doubles", 0, 10, "<f8"), values("xorshift128-doubles", None, 10, "<f8"))


@pytest.mark.parametrize("seed", [1, 99, 2**64 - 1])
def test_xorshift128_doubles_seeding_by_splitmix64(seed):
    # documented: x, y = low, high half of the first SplitMix64 output from state seed; z, w of the second
    o1, o2 = plain_splitmix64(seed, 2)
    words = plain_xor128(o1 & M32, o1 >> 32, o2 & M32, o2 >> 32, 1000)
    assert values("xorshift128-doubles", seed, 500, "<f8").tolist() == plain_res53(words)


def test_res53_matches_reference_float_arithmetic_at_extremes():
    # mt19937ar.c genrand_res53 on extreme words: 0 -> 0.0; all ones -> 1 - 2**-53 (largest double < 1)
    words = np.array([0, 0, M32, M32, 0x80000000, 0, 31, 63, 32, 64], dtype=np.uint32)
    got = res53(words)
    assert got.tolist() == plain_res53(words.tolist())
    assert got[0] == 0.0 and got[1] == 1 - 2**-53 and got[1] < 1.0 and got[2] == 0.5
    assert got[3] == 0.0 and got[4] == 2.0**-27 + 2.0**-53  # bits below the cut are dropped
    with pytest.raises(ValueError):
        res53(words[:3])


# ---------------------------------------------------------------- mt19937-doubles

@pytest.mark.parametrize("seed", [0, 1, 5489, 12345, 2**32 - 1])
def test_mt19937_doubles_equal_numpy_legacy_random_sample(seed):
    # common practice: numpy's legacy RandomState(seed).random_sample uses init_genrand + genrand_res53;
    # 1000 doubles use 2000 words, crossing three twists of 624 words
    expected = np.random.RandomState(seed).random_sample(1000)
    assert np.array_equal(values("mt19937-doubles", seed, 1000, "<f8"), expected)


def test_mt19937_doubles_large_seed_uses_init_by_array():
    # documented: seeds >= 2**32 use init_by_array([low, high]), as numpy's RandomState([low, high])
    seed = 0x0123456789ABCDEF
    expected = np.random.RandomState([seed & M32, seed >> 32]).random_sample(700)
    assert np.array_equal(values("mt19937-doubles", seed, 700, "<f8"), expected)


def test_mt19937_doubles_match_plain_python_reference_code():
    # independent of numpy: plain transcription of mt19937ar.c (init_genrand, genrand_int32, genrand_res53)
    ref = MT19937()
    ref.init_genrand(5489)
    words = [ref.genrand_int32() for _ in range(1400)]
    assert values("mt19937-doubles", None, 700, "<f8").tolist() == plain_res53(words)


# ---------------------------------------------------------------- lagfib

def test_lagfib_recurrence_holds_on_emitted_words():
    # definition: x_n = (x_{n-5} + x_{n-17}) mod 2**32 (Knuth TAOCP vol. 2, 3.2.2, additive lagged Fibonacci)
    x = values("lagfib", 2024, 100_000, "<u4").astype(np.uint64)
    assert np.all((x[:-17] + x[12:-5]) % 2**32 == x[17:])
    # the relation is specific: a sound generator's words do not satisfy it
    y = values("splitmix64", 2024, 1000, "<u8").astype(np.uint64) & np.uint64(M32)
    assert not np.all((y[:-17] + y[12:-5]) % 2**32 == y[17:])


@pytest.mark.parametrize("seed", [0, 1, 2**64 - 1])
def test_lagfib_matches_plain_python_from_documented_seeding(seed):
    # x_0..x_16: halves (low first) of the first nine SplitMix64 outputs from state seed; x_17 is emitted first
    halves = []
    for o in plain_splitmix64(seed, 9):
        halves += [o & M32, o >> 32]
    x = halves[:17]
    if all(v % 2 == 0 for v in x):
        x[0] |= 1
    for n in range(17, 17 + 3000):
        x.append((x[n - 5] + x[n - 17]) & M32)
    assert values("lagfib", seed, 3000, "<u4").tolist() == x[17:]


def test_lagfib_all_even_seed_words_forced_odd(monkeypatch):
    # the documented rule, exercised by making the seeding source return even words only
    import rngassay.generators.lagfib as lagfib_module

    def even_splitmix(state: int, count: int):
        return np.arange(2, 2 * count + 2, 2, dtype=np.uint64) << np.uint64(1), 0

    monkeypatch.setattr(lagfib_module, "splitmix64", even_splitmix)
    history = LagFibStream.initial_history(0)
    assert history[0] % 2 == 1 and np.all(history[1:] % 2 == 0)
    assert np.any(LagFibStream(0).read(4 * 1000).view("<u4") & 1)


def test_lagfib_low_bit_period_is_2_17_minus_1():
    # low bits follow b_n = b_{n-5} xor b_{n-17}: period divides 2**17 - 1 (a prime) iff x^17 + x^12 + 1
    # is irreducible over GF(2); the period is then exactly 2**17 - 1 unless the bit sequence is constant
    p = 2**17 - 1
    bits = values("lagfib", 5, p + 1000, "<u4") & 1
    assert np.array_equal(bits[:1000], bits[p:p + 1000])
    assert 0 < bits[:p].sum() < p
    assert bits[:p].sum() == 2**16  # an m-sequence of length 2**17 - 1 has 2**16 ones (Golomb)


# ---------------------------------------------------------------- splitmix64

def test_splitmix64_state_zero_outputs_from_memory():
    # from memory: SplitMix64 (Steele, Lea, Flood 2014; fixed-gamma form) from state 0 gives
    # 0xE220A8397B1DCDAF, then 0x6E789E6AA1B965F4, 0x06C45D188009454F
    assert values("splitmix64", 0, 3, "<u8").tolist() == [0xE220A8397B1DCDAF, 0x6E789E6AA1B965F4,
                                                           0x06C45D188009454F]


@pytest.mark.parametrize("seed", [1, 2**63, 2**64 - 1])
def test_splitmix64_matches_plain_python(seed):
    assert values("splitmix64", seed, 1000, "<u8").tolist() == plain_splitmix64(seed, 1000)
    words, state = splitmix64(seed, 1000)
    assert state == (seed + 1000 * 0x9E3779B97F4A7C15) % 2**64


# ---------------------------------------------------------------- common behaviour

@pytest.mark.parametrize("name", NEW)
def test_deterministic_per_seed(name):
    assert np.array_equal(make_generator(name, 77).read(5000), make_generator(name, 77).read(5000))
    assert not np.array_equal(make_generator(name, 77).read(5000), make_generator(name, 78).read(5000))


@pytest.mark.parametrize("name", NEW)
def test_chunked_reads_equal_one_read(name):
    whole = make_generator(name, 9).read(8 + 40_003)
    gen = make_generator(name, 9)
    assert np.array_equal(np.concatenate([gen.read(3), gen.read(5)]), whole[:8])
    gen = make_generator(name, 9)
    parts = [gen.read(n) for n in (3, 5, 1, 7, 13, 39_982)]  # ends crossing word and kernel-call boundaries
    assert np.array_equal(np.concatenate(parts), whole)


@pytest.mark.parametrize("name", ["xorshift128-doubles", "mt19937-doubles"])
def test_53_bit_doubles_in_unit_interval_on_grid(name):
    v = values(name, 4, 100_000, "<f8")
    k = v * 2**53
    assert np.all((v >= 0) & (v < 1))
    assert np.all(k == np.floor(k))
    # not coarser than 2**-53: odd numerators occur (half of them, for a uniform source)
    assert np.any(k.astype(np.uint64) & np.uint64(1))


@pytest.mark.parametrize("name", NEW)
@pytest.mark.parametrize("seed", [-1, 2**64, 1.5, "7", True, [1]])
def test_bad_seed_rejected(name, seed):
    with pytest.raises(InputError):
        make_generator(name, seed)
    with pytest.raises(InputError):
        GENERATORS[name].factory(seed)


@pytest.mark.parametrize("name", NEW)
def test_catalogue_entries(name):
    info = GENERATORS[name]
    assert info.quality == ("sound" if name == "splitmix64" else "flawed")
    assert info.default_format == ("<f8" if name in DOUBLES else None)
    assert info.factory(info.default_seed).word_dtype.itemsize == info.word_bytes
    if info.default_format is not None:
        assert np.dtype(info.default_format).itemsize == info.word_bytes


def test_older_entries_keep_no_default_format():
    assert all(GENERATORS[n].default_format is None for n in GENERATORS if n not in DOUBLES)


def test_catalog_command_lists_the_new_generators(run_cli):
    r = run_cli("catalog")
    assert r.code == 0
    listed = {line.split()[0] for line in r.out.splitlines() if line.startswith("  ") and line.split()}
    assert set(NEW) <= listed
