"""The 48-bit linear congruential generator of the POSIX drand48 family: ``lcg48``, ``lcg48-doubles``.

Definition: The Open Group Base Specifications (POSIX.1-2017), ``drand48`` family: the sequence
X_{n+1} = (a X_n + c) mod m with a = 0x5DEECE66D, c = 0xB, m = 2**48. Because the modulus is a power
of two, bit j of the state has period 2**(j+1) (D. E. Knuth, TAOCP vol. 2, 3rd ed., section
3.2.1.1), so the low bits of the state are far from random, and successive outputs lie on a lattice
(section 3.3.4).

All arithmetic runs in uint64: the product a X (up to 2**83) wraps mod 2**64, and since 2**48
divides 2**64 the result mod 2**48 is exact.
"""

from __future__ import annotations

import numpy as np
from numba import njit

from rngassay.generators.classic import _KernelWords  # seed check, state, numba kernel -> words

LCG48_A = 0x5DEECE66D
LCG48_C = 0xB
LCG48_MASK = 2**48 - 1
SRAND48_LOW = 0x330E  # POSIX srand48: the low-order 16 bits of the state


@njit(cache=True)
def _lcg48_words_kernel(state: np.uint64, count: int) -> tuple[np.ndarray, np.uint64]:
    out = np.empty(count, dtype=np.uint32)
    x = np.uint64(state)
    a = np.uint64(0x5DEECE66D)
    c = np.uint64(0xB)
    mask = np.uint64(0xFFFFFFFFFFFF)
    for i in range(count):
        x = (a * x + c) & mask
        out[i] = np.uint32(x >> np.uint64(16))
    return out, x


@njit(cache=True)
def _lcg48_doubles_kernel(state: np.uint64, count: int) -> tuple[np.ndarray, np.uint64]:
    out = np.empty(count, dtype=np.float64)
    x = np.uint64(state)
    a = np.uint64(0x5DEECE66D)
    c = np.uint64(0xB)
    mask = np.uint64(0xFFFFFFFFFFFF)
    scale = 2.0**-48
    for i in range(count):
        x = (a * x + c) & mask
        out[i] = np.float64(x) * scale  # x < 2**48: exact in a double, and so is the product
    return out, x


class Lcg48Stream(_KernelWords):
    """``lcg48`` (flawed): the drand48 LCG emitting bits 47..16 of each new state as a ``<u4`` word.

    Definition: POSIX ``drand48`` family (The Open Group Base Specifications), a = 0x5DEECE66D,
    c = 0xB, m = 2**48; the output word is what ``mrand48``/``jrand48`` return (as unsigned).
    The lowest output bit is state bit 16, of period 2**17; output bit j has period 2**(17+j).

    Seeding: state = (seed XOR 0x5DEECE66D) mod 2**48, the scrambling of ``java.util.Random``'s
    ``setSeed`` (Java SE API specification), so that the words read as signed 32-bit integers are
    that class's ``nextInt()`` values. Only the low 48 bits of the seed matter. Default seed 0.
    """

    name = "lcg48"
    word_dtype = np.dtype("<u4")

    @staticmethod
    def initial_state(seed: int) -> int:
        return (seed ^ LCG48_A) & LCG48_MASK

    _kernel = staticmethod(_lcg48_words_kernel)


class Lcg48DoublesStream(_KernelWords):
    """``lcg48-doubles`` (flawed): the drand48 LCG emitting X_{n+1} / 2**48 as ``<f8`` doubles in [0, 1).

    Definition: POSIX ``drand48``, which returns the new 48-bit state divided by 2**48. Every value
    lies on the grid k / 2**48, so the low bits of each double's 52-bit fraction are zero or
    follow the short-period low bits of the state.

    Seeding as POSIX ``srand48(seed)``: the high 32 bits of the state are the low 32 bits of the
    seed and the low 16 bits are 0x330E, state = ((seed mod 2**32) << 16) | 0x330E. So
    ``lcg48-doubles --seed s`` is the sequence ``srand48(s); drand48(); drand48(); ...`` for
    0 <= s < 2**32, and seeds that agree in their low 32 bits give the same stream. Default seed 0.
    """

    name = "lcg48-doubles"
    word_dtype = np.dtype("<f8")

    @staticmethod
    def initial_state(seed: int) -> int:
        return ((seed & 0xFFFFFFFF) << 16) | SRAND48_LOW

    _kernel = staticmethod(_lcg48_doubles_kernel)
