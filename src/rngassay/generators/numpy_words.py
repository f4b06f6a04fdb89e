"""Word generators taken from numpy's BitGenerators: pcg64, philox, sfc64 (sound) and mt19937 (flawed).

Each emits the BitGenerator's ``random_raw()`` words in little-endian byte order, so reading the
stream as ``<u8`` (``<u4`` for mt19937) recovers them in the order they were generated. The
BitGenerator object keeps the state between reads, so the stream is endless and continuable.
"""

from __future__ import annotations

import numpy as np

from rngassay.generators._common import check_seed
from rngassay.generators.base import ByteStreamGenerator


class _NumpyRawWords(ByteStreamGenerator):
    """Little-endian ``random_raw()`` words of a numpy BitGenerator."""

    word_dtype = np.dtype("<u8")
    name = ""

    def __init__(self, seed: int) -> None:
        super().__init__()
        self.seed = check_seed(seed, self.name)
        self._bitgen = self._make_bitgen(self.seed)

    def _make_bitgen(self, seed: int) -> np.random.BitGenerator:  # pragma: no cover - abstract
        raise NotImplementedError

    def _next_words(self, count: int) -> np.ndarray:
        return self._bitgen.random_raw(count).astype(self.word_dtype, copy=False)


class PCG64Stream(_NumpyRawWords):
    """``pcg64`` (sound): numpy's PCG64 (PCG XSL-RR 128/64), 64-bit words.

    Definition: M. E. O'Neill (2014), "PCG: A Family of Simple Fast Space-Efficient Statistically
    Good Algorithms for Random Number Generation", Harvey Mudd College HMC-CS-2014-0905;
    implementation ``numpy.random.PCG64``. Seeding: ``numpy.random.PCG64(seed)`` (via SeedSequence).
    """

    name = "pcg64"

    def _make_bitgen(self, seed: int) -> np.random.BitGenerator:
        return np.random.PCG64(seed)


class PhiloxStream(_NumpyRawWords):
    """``philox`` (sound): numpy's Philox-4x64-10 counter-based generator, 64-bit words.

    Definition: J. K. Salmon, M. A. Moraes, R. O. Dror, D. E. Shaw (2011), "Parallel random
    numbers: as easy as 1, 2, 3", Proc. SC'11; implementation ``numpy.random.Philox``.
    Seeding: ``numpy.random.Philox(seed)`` (via SeedSequence).
    """

    name = "philox"

    def _make_bitgen(self, seed: int) -> np.random.BitGenerator:
        return np.random.Philox(seed)


class SFC64Stream(_NumpyRawWords):
    """``sfc64`` (sound): numpy's SFC64, the 64-bit Small Fast Chaotic generator, 64-bit words.

    Definition: C. Doty-Humphrey's SFC64, as specified and implemented by ``numpy.random.SFC64``
    (numpy documentation, "SFC64 Small Fast Chaotic PRNG"). Seeding: ``numpy.random.SFC64(seed)``.
    """

    name = "sfc64"

    def _make_bitgen(self, seed: int) -> np.random.BitGenerator:
        return np.random.SFC64(seed)


class MT19937Stream(_NumpyRawWords):
    """``mt19937`` (flawed): the 32-bit Mersenne Twister with its standard seeding, 32-bit words.

    Definition: M. Matsumoto, T. Nishimura (1998), "Mersenne Twister: a 623-dimensionally
    equidistributed uniform pseudo-random number generator", ACM TOMACS 8(1), 3-30; the engine
    ``std::mt19937`` of ISO/IEC 14882 [rand.predef]. Its output bits obey a linear recurrence over
    GF(2) of degree 19937, which a linear-complexity test detects once its blocks are longer than
    about 2 x 19937 bits; shorter statistical tests usually pass it.

    Seeding: a seed ``N < 2**32`` is the reference ``init_genrand(N)`` (mt19937ar.c, 2002), the
    same as ``std::mt19937(N)``; seed 5489 gives first output 3499211612. A seed ``N >= 2**32``
    uses the reference ``init_by_array`` with the key ``[N mod 2**32, N >> 32]``.
    Both are what ``numpy.random.RandomState`` does with an int or an array seed; the state is
    copied from there into an ``MT19937`` BitGenerator through the public ``state`` attribute.
    """

    name = "mt19937"
    word_dtype = np.dtype("<u4")

    def _make_bitgen(self, seed: int) -> np.random.BitGenerator:
        key: int | list[int] = seed if seed < 2**32 else [seed & 0xFFFFFFFF, seed >> 32]
        bitgen = np.random.MT19937()
        bitgen.state = np.random.RandomState(key).get_state(legacy=False)
        return bitgen
