"""``splitmix64`` (sound): the SplitMix64 generator, also the seeding tool of other reference generators.

Definition: G. L. Steele Jr., D. Lea, C. H. Flood (2014), "Fast splittable pseudorandom number
generators", Proc. OOPSLA 2014 (ACM SIGPLAN Notices 49(10), 453-472): a 64-bit counter advanced
by the odd constant gamma = 0x9E3779B97F4A7C15 and a bijective mixing function applied to it::

    state += 0x9E3779B97F4A7C15
    z = state
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9
    z = (z ^ (z >> 27)) * 0x94D049BB133111EB
    return z ^ (z >> 31)                       (all arithmetic mod 2**64)

This fixed-gamma form with these mixing constants is the widely used one (common practice);
with state 0 its first output is 0xE220A8397B1DCDAF (from memory, checked in the tests).

Every step of the mixing function is invertible (an xor with a right shift of itself, a product
with an odd constant), so the outputs of ``n <= 2**64`` consecutive states are all distinct;
``xorshift128-doubles`` and ``lagfib`` rely on this when they draw their states from it.
"""

from __future__ import annotations

import numpy as np
from numba import njit

from rngassay.generators._common import check_seed
from rngassay.generators.base import ByteStreamGenerator

SPLITMIX64_GAMMA = 0x9E3779B97F4A7C15


@njit(cache=True)
def _splitmix64_kernel(state: np.uint64, count: int) -> tuple[np.ndarray, np.uint64]:
    out = np.empty(count, dtype=np.uint64)
    s = np.uint64(state)
    gamma = np.uint64(0x9E3779B97F4A7C15)
    m1 = np.uint64(0xBF58476D1CE4E5B9)
    m2 = np.uint64(0x94D049BB133111EB)
    for i in range(count):
        s = s + gamma
        z = s
        z = (z ^ (z >> np.uint64(30))) * m1
        z = (z ^ (z >> np.uint64(27))) * m2
        out[i] = z ^ (z >> np.uint64(31))
    return out, s


def splitmix64(state: int, count: int) -> tuple[np.ndarray, int]:
    """Return the next ``count`` SplitMix64 outputs (uint64) from ``state``, and the new state."""
    words, new_state = _splitmix64_kernel(np.uint64(state % 2**64), int(count))
    return words, int(new_state)


class SplitMix64Stream(ByteStreamGenerator):
    """``splitmix64`` (sound): SplitMix64 outputs as 64-bit little-endian words.

    Definition and constants: see the module docstring (Steele, Lea, Flood 2014).
    Seeding: the state is the seed itself (every 64-bit value is valid); the first word
    emitted is the mix of ``seed + gamma``. Period 2**64.
    """

    name = "splitmix64"
    word_dtype = np.dtype("<u8")

    def __init__(self, seed: int) -> None:
        super().__init__()
        self.seed = check_seed(seed, self.name)
        self.state = self.seed

    def _next_words(self, count: int) -> np.ndarray:
        words, self.state = splitmix64(self.state, count)
        return words.astype(self.word_dtype, copy=False)
