"""``short-period``: a sound PCG64 stream that repeats exactly every 2**20 bytes."""

from __future__ import annotations

import numpy as np

from rngassay.generators._common import check_seed
from rngassay.generators.base import ByteStreamGenerator

#: Period of the ``short-period`` stream in bytes.
SHORT_PERIOD_BYTES = 2**20
_PERIOD_WORDS = SHORT_PERIOD_BYTES // 8


class ShortPeriodStream(ByteStreamGenerator):
    """``short-period`` (flawed): the first 2**20 bytes of ``pcg64`` with the same seed, repeated forever.

    Definition (this module): byte j of the stream is byte (j mod 2**20) of the ``pcg64`` stream
    (numpy PCG64, M. E. O'Neill 2014) for the same seed. Any 1 MiB window looks sound; the flaw
    is that the stream's period is 2**20 bytes, which a test comparing distant segments or a
    large birthday/overlap test finds once it reads more than 1 MiB. The period is exactly 2**20
    bytes (not a divisor of it) unless the 1 MiB block happens to equal two copies of its first
    half, which for a sound generator has probability 2**-4194304.
    """

    name = "short-period"
    word_dtype = np.dtype("<u8")

    def __init__(self, seed: int) -> None:
        super().__init__()
        self.seed = check_seed(seed, self.name)
        self._cycle = np.random.PCG64(self.seed).random_raw(_PERIOD_WORDS).astype("<u8", copy=False)
        self._pos = 0  # index of the next word within the cycle

    def _next_words(self, count: int) -> np.ndarray:
        index = (self._pos + np.arange(count, dtype=np.int64)) % _PERIOD_WORDS
        self._pos = (self._pos + count) % _PERIOD_WORDS
        return self._cycle[index]
