"""``lagfib`` (flawed): an additive lagged-Fibonacci generator with small lags (5, 17) on 32-bit words.

Definition: x_n = (x_{n-5} + x_{n-17}) mod 2**32. Additive lagged-Fibonacci generators
x_n = (x_{n-l} + x_{n-k}) mod m are described in D. E. Knuth, The Art of Computer Programming,
vol. 2, 3rd ed., section 3.2.2, where the lags (24, 55) are credited to G. J. Mitchell and
D. P. Moore (unpublished, 1958) (from memory). The lags here are deliberately small, which makes
the three-term relation between outputs 5 and 17 apart easy to detect (birthday-spacings and
serial-type tests, and the lowest bit, which is a 17-bit linear feedback shift register over GF(2)).
"""

from __future__ import annotations

import numpy as np
from numba import njit

from rngassay.generators._common import check_seed
from rngassay.generators.base import ByteStreamGenerator
from rngassay.generators.splitmix import splitmix64

LAGFIB_SHORT = 5
LAGFIB_LONG = 17


@njit(cache=True)
def _lagfib_kernel(history: np.ndarray, count: int) -> tuple[np.ndarray, np.ndarray]:
    # history: the last 17 values x_{n-17} .. x_{n-1} (oldest first), as uint64 below 2**32
    buf = np.empty(17 + count, dtype=np.uint64)
    buf[:17] = history
    mask = np.uint64(0xFFFFFFFF)
    for n in range(17, 17 + count):
        buf[n] = (buf[n - 5] + buf[n - 17]) & mask
    return buf[17:].astype(np.uint32), buf[count:].copy()


class LagFibStream(ByteStreamGenerator):
    """``lagfib`` (flawed): x_n = (x_{n-5} + x_{n-17}) mod 2**32, each new x_n emitted as a ``<u4`` word.

    Definition: see the module docstring (Knuth, TAOCP vol. 2, section 3.2.2).

    Seeding: x_0 .. x_16 are the 32-bit halves (low half first) of the first nine SplitMix64
    outputs from state ``seed`` (the 18th half is dropped); the first word emitted is x_17.
    If all 17 are even, x_0 gets its lowest bit set. Why: the lowest bits follow
    b_n = b_{n-5} XOR b_{n-17}, so if every initial word is even every later word is even too,
    the lowest bit is stuck at 0 and the generator degenerates to a 31-bit one. With at least one
    odd word the low bit runs through the full period 2**17 - 1 (the characteristic polynomial
    x^17 + x^12 + 1 is primitive over GF(2): 2**17 - 1 is prime, so irreducible is enough; the
    tests check the period on the emitted words), and the words have period 2**31 (2**17 - 1)
    (Knuth, section 3.2.2, the period of an additive lagged-Fibonacci generator mod 2**e).
    """

    name = "lagfib"
    word_dtype = np.dtype("<u4")

    def __init__(self, seed: int) -> None:
        super().__init__()
        self.seed = check_seed(seed, self.name)
        self.history = self.initial_history(self.seed)

    @staticmethod
    def initial_history(seed: int) -> np.ndarray:
        """x_0 .. x_16 for ``seed`` as uint64 values below 2**32 (oldest first)."""
        outputs, _ = splitmix64(seed, 9)
        halves = np.empty(18, dtype=np.uint64)
        halves[0::2] = outputs & np.uint64(0xFFFFFFFF)
        halves[1::2] = outputs >> np.uint64(32)
        history = halves[:17].copy()
        if not np.any(history & np.uint64(1)):
            history[0] |= np.uint64(1)
        return history

    def _next_words(self, count: int) -> np.ndarray:
        words, self.history = _lagfib_kernel(self.history, int(count))
        return words.astype(self.word_dtype, copy=False)
