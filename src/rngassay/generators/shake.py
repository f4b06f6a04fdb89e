"""``shake256``: SHAKE-256 extendable output (FIPS 202) in counter mode, keyed by the seed."""

from __future__ import annotations

import hashlib

import numpy as np

from rngassay.generators._common import BlockByteGenerator, check_seed

#: Domain-separation prefix of every block input.
SHAKE_PREFIX = b"rngassay-shake256"
#: Bytes of output taken from each SHAKE-256 call.
SHAKE_BLOCK_BYTES = 2**20


def shake256_block(seed: int, index: int) -> bytes:
    """Block ``index`` of the ``shake256`` stream for ``seed`` (see :class:`Shake256Stream`)."""
    message = SHAKE_PREFIX + seed.to_bytes(8, "little") + index.to_bytes(8, "little")
    return hashlib.shake_256(message).digest(SHAKE_BLOCK_BYTES)


class Shake256Stream(BlockByteGenerator):
    """``shake256`` (sound): SHAKE-256 output in counter mode, byte-oriented.

    Definition: NIST FIPS 202 (2015), "SHA-3 Standard: Permutation-Based Hash and
    Extendable-Output Functions", SHAKE256. hashlib cannot continue one XOF output
    incrementally, so the stream is the concatenation of blocks ``B_0, B_1, ...`` with

        B_i = SHAKE256(b"rngassay-shake256" || seed as 8 bytes LE || i as 8 bytes LE), first 2**20 bytes.

    Under the usual assumption that SHAKE-256 behaves as a random oracle the stream is
    indistinguishable from independent fair bytes.
    """

    name = "shake256"

    def __init__(self, seed: int) -> None:
        super().__init__()
        self.seed = check_seed(seed, self.name)
        self._index = 0

    def _make_block(self) -> np.ndarray:
        block = np.frombuffer(shake256_block(self.seed, self._index), dtype=np.uint8)
        self._index += 1
        return block
