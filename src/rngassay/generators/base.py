"""Common shape of the reference generators.

Every reference generator is an endless byte stream: ``read(n)`` returns the next
``n`` bytes as a ``uint8`` array.  Generators that produce words emit them in
little-endian byte order, so reading the stream with ``--format <u4`` (or ``<u8``)
recovers the words in the order they were generated.
"""

from __future__ import annotations

import numpy as np


class ByteStreamGenerator:
    """Base class: subclasses implement ``_next_words(count) -> ndarray`` of ``word_dtype``.

    The base class handles byte requests that are not whole words by keeping the
    unused tail of the last word for the next call, so ``read(3); read(5)`` gives
    exactly the same bytes as ``read(8)``.
    """

    word_dtype: np.dtype = np.dtype("<u4")

    def __init__(self) -> None:
        self._leftover = np.empty(0, dtype=np.uint8)

    def _next_words(self, count: int) -> np.ndarray:  # pragma: no cover - abstract
        raise NotImplementedError

    def read(self, n: int) -> np.ndarray:
        """Return the next ``n`` bytes of the stream as a uint8 array."""
        if n < 0:
            raise ValueError("n must be >= 0")
        take = min(n, self._leftover.size)
        head = self._leftover[:take]
        self._leftover = self._leftover[take:]
        need = n - take
        if need == 0:
            return head.copy()
        wb = self.word_dtype.itemsize
        count = -(-need // wb)
        words = np.ascontiguousarray(self._next_words(count), dtype=self.word_dtype)
        raw = words.view(np.uint8)
        self._leftover = raw[need:].copy()
        if take:
            return np.concatenate([head, raw[:need]])
        return raw[:need].copy() if raw.size != need else raw
