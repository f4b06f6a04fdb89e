"""Classic flawed word generators: ``randu``, ``minstd``, ``lcg32``, ``xorshift32``.

Each emits one 32-bit little-endian word per step: the new state after the step (the seed
itself is not emitted). The numba kernels take the state and return the new one, so reads
continue the sequence. All arithmetic is done in int64, where none of the products overflow.
"""

from __future__ import annotations

import numpy as np
from numba import njit

from rngassay.generators._common import check_seed
from rngassay.generators.base import ByteStreamGenerator

RANDU_A = 65539
RANDU_M = 2**31
MINSTD_A = 16807
MINSTD_M = 2**31 - 1
LCG32_A = 1664525
LCG32_C = 1013904223
XORSHIFT32_DEFAULT_STATE = 2463534242  # Marsaglia (2003), the example xor32() seed [from memory]


@njit(cache=True)
def _randu_kernel(state: int, count: int) -> tuple[np.ndarray, int]:
    out = np.empty(count, dtype=np.uint32)
    x = np.int64(state)
    for i in range(count):
        x = (np.int64(65539) * x) & np.int64(0x7FFFFFFF)  # < 2**48 before the mask
        out[i] = x
    return out, x


@njit(cache=True)
def _minstd_kernel(state: int, count: int) -> tuple[np.ndarray, int]:
    out = np.empty(count, dtype=np.uint32)
    x = np.int64(state)
    for i in range(count):
        x = (np.int64(16807) * x) % np.int64(2147483647)  # < 2**46 before the reduction
        out[i] = x
    return out, x


@njit(cache=True)
def _lcg32_kernel(state: int, count: int) -> tuple[np.ndarray, int]:
    out = np.empty(count, dtype=np.uint32)
    x = np.int64(state)
    for i in range(count):
        x = (np.int64(1664525) * x + np.int64(1013904223)) & np.int64(0xFFFFFFFF)  # < 2**53
        out[i] = x
    return out, x


@njit(cache=True)
def _xorshift32_kernel(state: int, count: int) -> tuple[np.ndarray, int]:
    out = np.empty(count, dtype=np.uint32)
    y = np.int64(state)
    mask = np.int64(0xFFFFFFFF)
    for i in range(count):
        y ^= (y << 13) & mask
        y ^= y >> 17
        y ^= (y << 5) & mask
        out[i] = y
    return out, y


class _KernelWords(ByteStreamGenerator):
    """32-bit words from a numba kernel ``(state, count) -> (words, state)``."""

    word_dtype = np.dtype("<u4")
    name = ""

    def __init__(self, seed: int) -> None:
        super().__init__()
        self.seed = check_seed(seed, self.name)
        self.state = self.initial_state(self.seed)

    @staticmethod
    def initial_state(seed: int) -> int:  # pragma: no cover - abstract
        raise NotImplementedError

    @staticmethod
    def _kernel(state: int, count: int) -> tuple[np.ndarray, int]:  # pragma: no cover - abstract
        raise NotImplementedError

    def _next_words(self, count: int) -> np.ndarray:
        words, state = type(self)._kernel(self.state, count)
        self.state = int(state)
        return words.astype(self.word_dtype, copy=False)


class RanduStream(_KernelWords):
    """``randu`` (flawed): IBM's RANDU, x <- 65539 x mod 2**31, each x emitted as a 32-bit word.

    Definition: IBM System/360 Scientific Subroutine Package (1968), subroutine RANDU; analysed in
    D. E. Knuth, TAOCP vol. 2, 3rd ed., section 3.3.4: since 65539 = 2**16 + 3, successive outputs
    satisfy x_{k+2} = 6 x_{k+1} - 9 x_k (mod 2**31), so overlapping triples lie on 15 planes.
    Outputs are odd and below 2**31 (the top bit of every word is 0, the bottom bit 1).

    Seeding: the state must be odd; seed s gives x_0 = (2 s + 1) mod 2**31, so every seed is
    valid, seeds 0 .. 2**30 - 1 give the 2**30 distinct odd states, and the default seed 0
    starts from x_0 = 1 (first output 65539).
    """

    name = "randu"

    @staticmethod
    def initial_state(seed: int) -> int:
        return (2 * seed + 1) % RANDU_M

    _kernel = staticmethod(_randu_kernel)


class MinstdStream(_KernelWords):
    """``minstd`` (flawed): the Park-Miller minimal standard, x <- 16807 x mod (2**31 - 1).

    Definition: S. K. Park, K. W. Miller (1988), "Random number generators: good ones are hard to
    find", Comm. ACM 31(10), 1192-1201; the engine ``std::minstd_rand0`` of ISO/IEC 14882
    [rand.predef]. Each x (in 1 .. 2**31 - 2) is emitted as a 32-bit word; the top bit is always 0.

    Seeding as ISO/IEC 14882 [rand.eng.lcong] does: x_0 = seed mod (2**31 - 1), and a result of 0
    (which would stick at 0) is replaced by 1. So seed 0 gives the same stream as the default seed 1.
    """

    name = "minstd"

    @staticmethod
    def initial_state(seed: int) -> int:
        return seed % MINSTD_M or 1

    _kernel = staticmethod(_minstd_kernel)


class Lcg32Stream(_KernelWords):
    """``lcg32`` (flawed): full-period LCG x <- (1664525 x + 1013904223) mod 2**32, all 32 bits emitted.

    Definition: W. H. Press, S. A. Teukolsky, W. T. Vetterling, B. P. Flannery, Numerical Recipes
    in C, 2nd ed. (1992), section 7.1 (its "quick and dirty" 32-bit generator). Low bits have short periods: bit j of the output has period 2**(j+1), so the
    lowest bit alternates.

    Seeding: x_0 = seed mod 2**32 (every state is valid); seeds differing by a multiple of
    2**32 give the same stream.
    """

    name = "lcg32"

    @staticmethod
    def initial_state(seed: int) -> int:
        return seed % 2**32

    _kernel = staticmethod(_lcg32_kernel)


class Xorshift32Stream(_KernelWords):
    """``xorshift32`` (flawed): Marsaglia's 32-bit xorshift, shifts (13, 17, 5).

    Definition: G. Marsaglia (2003), "Xorshift RNGs", Journal of Statistical Software 8(14):
    y ^= y << 13; y ^= y >> 17; y ^= y << 5 (on 32 bits), each new y emitted as a 32-bit word.
    Period 2**32 - 1 over the nonzero states; the output is linear over GF(2) with only 32 bits of
    state, so binary matrix rank and linear complexity tests reject it quickly.

    Seeding: y_0 = seed mod 2**32; the forbidden state 0 is replaced by Marsaglia's example
    seed 2463534242, which is also the default seed (so seed 0 gives the default stream).
    """

    name = "xorshift32"

    @staticmethod
    def initial_state(seed: int) -> int:
        return seed % 2**32 or XORSHIFT32_DEFAULT_STATE

    _kernel = staticmethod(_xorshift32_kernel)
