"""``biased``: independent bits with P(1) = 1/2 + 1/1024."""

from __future__ import annotations

import math

import numpy as np

from rngassay.generators._common import BlockByteGenerator, check_seed

#: Probability of a 1 in the ``biased`` stream.
BIASED_P_ONE = 0.5 + 1.0 / 1024.0
_Z_P = 1.0 / 512.0  # P(Z = 1)
_BLOCK_BYTES = 2**20
_BLOCK_BITS = 8 * _BLOCK_BYTES


class BiasedBitsStream(BlockByteGenerator):
    """``biased`` (flawed): independent bits, each 1 with probability exactly 1/2 + 1/1024.

    Definition (this module): bit = X OR Z with X a fair bit and Z ~ Bernoulli(1/512) independent
    of X, so P(1) = 1 - (1/2)(1 - 1/512) = 1/2 + 1/1024 and the bits are independent. The bias is
    the only flaw: a frequency (monobit) test (NIST SP 800-22 Rev. 1a section 2.1) needs about
    (z * 1024)**2 bits to see it at z standard deviations, i.e. about 2**23 bits for z = 3.

    Construction, block by block (2**20 bytes, so the bytes do not depend on the read sizes):
    from ``SeedSequence(seed).spawn(2)`` one PCG64 stream gives the X bytes (``random_raw`` words,
    little-endian) and the other the positions of the Z ones, as a Bernoulli process with gaps
    drawn by inversion, gap = 1 + floor(ln U / ln(1 - 1/512)) with U = (k + 1) / 2**53 from the top
    53 bits k of a raw word (the inversion method: L. Devroye (1986), Non-Uniform Random
    Variate Generation, ch. 2). The process restarts at each block
    boundary, which is exact because the geometric distribution is memoryless.
    Bit order within a byte does not matter since all bits are i.i.d.
    """

    name = "biased"

    def __init__(self, seed: int) -> None:
        super().__init__()
        self.seed = check_seed(seed, self.name)
        seq_x, seq_z = np.random.SeedSequence(self.seed).spawn(2)
        self._x = np.random.PCG64(seq_x)
        self._z = np.random.PCG64(seq_z)
        self._log_q = math.log1p(-_Z_P)

    def _gaps(self, count: int) -> np.ndarray:
        raw = self._z.random_raw(count)
        u = ((raw >> np.uint64(11)).astype(np.float64) + 1.0) * 2.0**-53  # in (0, 1]
        return 1 + np.floor(np.log(u) / self._log_q).astype(np.int64)

    def _make_block(self) -> np.ndarray:
        block = self._x.random_raw(_BLOCK_BYTES // 8).astype("<u8", copy=False).view(np.uint8)
        mean = _BLOCK_BITS * _Z_P
        draw = int(mean + 12.0 * math.sqrt(mean)) + 64
        positions = np.cumsum(self._gaps(draw)) - 1
        while positions[-1] < _BLOCK_BITS:  # rare (> 12 sigma): extend the process
            positions = np.concatenate([positions, positions[-1] + np.cumsum(self._gaps(draw))])
        positions = positions[positions < _BLOCK_BITS]
        np.bitwise_or.at(block, positions >> 3, (1 << (positions & 7)).astype(np.uint8))
        return block
