"""Helpers shared by the reference generators: seed validation and fixed-block streams."""

from __future__ import annotations

import operator

import numpy as np

from rngassay.errors import InputError
from rngassay.generators.base import ByteStreamGenerator

#: Every reference generator accepts seeds in ``[0, MAX_SEED]``.
MAX_SEED = 2**64 - 1


def check_seed(seed: object, name: str) -> int:
    """Return ``seed`` as a Python int in ``[0, MAX_SEED]`` or raise :class:`InputError`."""
    if isinstance(seed, bool):
        raise InputError(f"seed must be an integer, not {seed!r}", where=f"generator {name!r}",
                         hint="give a non-negative integer seed below 2**64")
    try:
        value = operator.index(seed)  # type: ignore[arg-type]
    except TypeError:
        raise InputError(f"seed must be an integer, not {seed!r}", where=f"generator {name!r}",
                         hint="give a non-negative integer seed below 2**64") from None
    if value < 0:
        raise InputError(f"negative seed {value}", where=f"generator {name!r}",
                         hint="give a non-negative integer seed below 2**64")
    if value > MAX_SEED:
        raise InputError(f"seed {value} is too large (the maximum is 2**64 - 1)",
                         where=f"generator {name!r}", hint="give a non-negative integer seed below 2**64")
    return int(value)


class BlockByteGenerator(ByteStreamGenerator):
    """A byte stream built from fixed-size blocks ``block(0), block(1), ...``.

    Subclasses implement ``_make_block() -> uint8 array`` which returns the next block.
    Because the blocks do not depend on how the caller slices its reads, the bytes of the
    stream do not either: ``read(3) + read(5)`` equals ``read(8)``.
    """

    word_dtype = np.dtype("u1")

    def __init__(self) -> None:
        super().__init__()
        self._block = np.empty(0, dtype=np.uint8)
        self._offset = 0

    def _make_block(self) -> np.ndarray:  # pragma: no cover - abstract
        raise NotImplementedError

    def _next_words(self, count: int) -> np.ndarray:
        out = np.empty(count, dtype=np.uint8)
        filled = 0
        while filled < count:  # loop over blocks, not over data values
            if self._offset == self._block.size:
                self._block = self._make_block()
                self._offset = 0
            take = min(count - filled, self._block.size - self._offset)
            out[filled:filled + take] = self._block[self._offset:self._offset + take]
            self._offset += take
            filled += take
        return out
