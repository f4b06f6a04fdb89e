"""Doubles in [0, 1) made from 32-bit generators by the 53-bit rule: ``xorshift128-doubles``, ``mt19937-doubles``.

The rule is ``genrand_res53`` of the Mersenne Twister reference code (M. Matsumoto, T. Nishimura,
mt19937ar.c, 2002): two consecutive 32-bit outputs a (first) and b give::

    ((a >> 5) * 67108864 + (b >> 6)) / 2**53

i.e. the top 27 bits of a followed by the top 26 bits of b, a multiple of 2**-53 in [0, 1 - 2**-53].
The integer numerator is below 2**53, so the computation is exact in float64. Each double is one
``<f8`` word of the stream, in little-endian byte order.
"""

from __future__ import annotations

import numpy as np
from numba import njit

from rngassay.generators._common import check_seed
from rngassay.generators.base import ByteStreamGenerator
from rngassay.generators.numpy_words import MT19937Stream
from rngassay.generators.splitmix import splitmix64

#: G. Marsaglia (2003), Xorshift RNGs, J. Stat. Softw. 8(14): the default state of xor128 [from memory]
XORSHIFT128_PAPER_STATE = (123456789, 362436069, 521288629, 88675123)


def res53(words: np.ndarray) -> np.ndarray:
    """Combine 32-bit words two at a time (first word high) into float64 by the genrand_res53 rule.

    ``words`` must have even length; the result has half as many values, each k / 2**53 with
    0 <= k < 2**53.
    """
    w = np.ascontiguousarray(words, dtype=np.uint32)
    if w.ndim != 1 or w.size % 2:
        raise ValueError("res53 needs a flat array with an even number of 32-bit words")
    return _res53_kernel(w)


@njit(cache=True)
def _res53_kernel(words: np.ndarray) -> np.ndarray:
    count = words.size // 2
    out = np.empty(count, dtype=np.float64)
    scale = 2.0**-53
    for i in range(count):
        a = np.uint64(words[2 * i]) >> np.uint64(5)
        b = np.uint64(words[2 * i + 1]) >> np.uint64(6)
        out[i] = np.float64((a << np.uint64(26)) | b) * scale  # numerator < 2**53: exact
    return out


@njit(cache=True)
def _xorshift128_kernel(x: np.uint64, y: np.uint64, z: np.uint64, w: np.uint64,
                        count: int) -> tuple[np.ndarray, np.uint64, np.uint64, np.uint64, np.uint64]:
    out = np.empty(count, dtype=np.uint32)
    mask = np.uint64(0xFFFFFFFF)
    for i in range(count):
        t = x ^ ((x << np.uint64(11)) & mask)
        x = y
        y = z
        z = w
        w = w ^ (w >> np.uint64(19)) ^ (t ^ (t >> np.uint64(8)))
        out[i] = np.uint32(w)
    return out, x, y, z, w


def xorshift128(state: tuple[int, int, int, int], count: int) -> tuple[np.ndarray, tuple[int, int, int, int]]:
    """Return the next ``count`` 32-bit outputs (uint32) of Marsaglia's xor128 from ``state`` = (x, y, z, w)."""
    x, y, z, w = (np.uint64(v & 0xFFFFFFFF) for v in state)
    out, x, y, z, w = _xorshift128_kernel(x, y, z, w, int(count))
    return out, (int(x), int(y), int(z), int(w))


class Xorshift128DoublesStream(ByteStreamGenerator):
    """``xorshift128-doubles`` (flawed): Marsaglia's xor128 as 53-bit ``<f8`` doubles (genrand_res53 rule).

    Definition: G. Marsaglia (2003), "Xorshift RNGs", Journal of Statistical Software 8(14), the
    routine xor128 on 32-bit words::

        t = x ^ (x << 11); x = y; y = z; z = w; w = w ^ (w >> 19) ^ (t ^ (t >> 8)); return w

    period 2**128 - 1 over the nonzero states. Every output bit is a GF(2)-linear function of 128
    state bits, so binary matrix rank and linear complexity tests on the bits reject it; the doubles
    carry that structure in their fraction bits. Two outputs per double (module docstring).

    Seeding: seed 0 (the default) is the paper's state x=123456789, y=362436069, z=521288629,
    w=88675123 (from memory). A seed s >= 1 takes two SplitMix64 outputs o1, o2 from state s and
    sets x = o1 mod 2**32, y = o1 >> 32, z = o2 mod 2**32, w = o2 >> 32. The state is never all
    zero: SplitMix64's mixing function is a bijection and its two inputs differ, so o1 and o2 are
    not both 0.
    """

    name = "xorshift128-doubles"
    word_dtype = np.dtype("<f8")

    def __init__(self, seed: int) -> None:
        super().__init__()
        self.seed = check_seed(seed, self.name)
        self.state = self.initial_state(self.seed)

    @staticmethod
    def initial_state(seed: int) -> tuple[int, int, int, int]:
        if seed == 0:
            return XORSHIFT128_PAPER_STATE
        (o1, o2), _ = splitmix64(seed, 2)
        o1, o2 = int(o1), int(o2)
        return (o1 & 0xFFFFFFFF, o1 >> 32, o2 & 0xFFFFFFFF, o2 >> 32)

    def _next_words(self, count: int) -> np.ndarray:
        words, self.state = xorshift128(self.state, 2 * count)
        return _res53_kernel(words)


class MT19937DoublesStream(ByteStreamGenerator):
    """``mt19937-doubles`` (flawed): the 32-bit Mersenne Twister as 53-bit ``<f8`` doubles (genrand_res53).

    Definition: M. Matsumoto, T. Nishimura (1998), "Mersenne Twister: a 623-dimensionally
    equidistributed uniform pseudo-random number generator", ACM TOMACS 8(1), 3-30; doubles by
    genrand_res53 of the reference code mt19937ar.c (module docstring). Flawed for the same reason as
    ``mt19937``: its bits obey a GF(2)-linear recurrence of degree 19937.

    Seeding: the words are those of the ``mt19937`` generator for the same seed: a seed below
    2**32 is ``init_genrand(seed)``, a larger one ``init_by_array([seed mod 2**32, seed >> 32])``.
    For seeds below 2**32 the stream equals numpy's legacy
    ``numpy.random.RandomState(seed).random_sample()`` (common practice; checked in the tests).
    Default seed 5489, the reference code's default.
    """

    name = "mt19937-doubles"
    word_dtype = np.dtype("<f8")

    def __init__(self, seed: int) -> None:
        super().__init__()
        self.seed = check_seed(seed, self.name)
        self._words = MT19937Stream(self.seed)

    def _next_words(self, count: int) -> np.ndarray:
        # the word source is used directly (not through its read()), so its own byte buffer stays empty
        return _res53_kernel(self._words._next_words(2 * count))
