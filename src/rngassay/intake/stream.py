"""A decoded, accounted stream: source + format + byte count + SHA-256.

The :class:`Stream` is what the battery reads from. It records exactly how many bytes it took from
the source and their SHA-256, so a report can name the evidence it was computed from (an auditor can
re-hash the same prefix of the supplier's file and get the same digest).
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .formats import Decoder, Format, parse_format
from .sources import RawSource

CHUNK = 1 << 20  # bytes per read from the source


@dataclass
class SourceInfo:
    kind: str
    name: str
    format: str
    bytes_read: int
    sha256: str
    decoded_bytes: int | None = None  # hex input: the bytes its digits decoded to (bytes_read counts the text)

    def to_dict(self) -> dict:
        d = {
            "kind": self.kind,
            "name": self.name,
            "format": self.format,
            "bytes_read": self.bytes_read,
            "sha256": self.sha256,
        }
        if self.decoded_bytes is not None:
            d["decoded_bytes"] = self.decoded_bytes
        return d


class Stream:
    """Values decoded from a source, read in bounded chunks.

    ``read_values(n)`` returns up to ``n`` values (fewer only at the end of the source);
    ``read_bytes(n)`` is the same for the raw bytes of binary formats.
    """

    def __init__(self, source: RawSource, fmt: Format | str | None = None, chunk: int = CHUNK):
        self.source = source
        self.fmt = fmt if isinstance(fmt, Format) else parse_format(fmt)
        self.decoder = Decoder(self.fmt, source.where)
        self._sha = hashlib.sha256()
        self.bytes_read = 0
        self.values_read = 0
        self.ended = False
        self._chunk = chunk
        self._pending: list[np.ndarray] = []
        self._pending_n = 0

    @property
    def unlimited(self) -> bool:
        return self.source.unlimited

    def _pull(self, nbytes: int) -> bytes:
        try:
            b = self.source.read(nbytes)
        except InputError as e:
            # a source that dies mid-read: what it gave before dying was consumed, so it is counted and hashed
            part = getattr(e, "partial_bytes", b"")
            if part:
                self._sha.update(part)
                self.bytes_read += len(part)
                e.partial_bytes = b""  # type: ignore[attr-defined]
            self.ended = True
            raise
        if b:
            self._sha.update(b)
            self.bytes_read += len(b)
        if len(b) < nbytes:
            self.ended = True
        return b

    def read_bytes(self, n: int) -> np.ndarray:
        """Up to ``n`` raw bytes as uint8 (binary formats only)."""
        if self.fmt.kind not in ("bytes", "words"):
            raise TypeError("read_bytes needs a byte or word format")
        if n % self.fmt.itemsize:
            raise ValueError("read_bytes needs a whole number of values")
        return self.read_values(n // self.fmt.itemsize).view(np.uint8)

    def read_values(self, n: int) -> np.ndarray:
        """Up to ``n`` decoded values; fewer only when the source has ended."""
        if self.fmt.is_raw and not self._pending:
            return self._read_binary(n)
        while self._pending_n < n and not self.ended:
            b = self._pull(self._chunk)
            vals = self.decoder.feed(b)
            if self.ended:
                vals = np.concatenate([vals, self.decoder.finish()])
            if vals.size:
                self._pending.append(vals)
                self._pending_n += vals.size
        if self.ended and self._pending_n == 0 and self.values_read == 0:
            raise InputError("empty stream: no values to test", self.source.where, "check the source produces data")
        if not self._pending:
            return np.empty(0, dtype=self.fmt.dtype)
        allv = np.concatenate(self._pending) if len(self._pending) != 1 else self._pending[0]
        out, rest = allv[:n], allv[n:]
        self._pending = [rest] if rest.size else []
        self._pending_n = rest.size
        self.values_read += out.size
        return out

    def _read_binary(self, n: int) -> np.ndarray:
        size = self.fmt.itemsize
        want = n * size
        b = self._pull(want) if want else b""
        vals = self.decoder.feed(b)
        if self.ended:
            if self.bytes_read == 0:
                raise InputError("empty stream: no bytes to test", self.source.where, "check the source produces data")
            tail = self.decoder.finish()
            if tail.size:  # pragma: no cover - binary finish returns nothing or raises
                vals = np.concatenate([vals, tail])
        self.values_read += vals.size
        return vals

    def read_exact(self, n: int, budget_hint: bool = True) -> np.ndarray:
        """Exactly ``n`` values, or an InputError saying how much is needed and available."""
        vals = self.read_values(n)
        if vals.size < n:
            if self.bytes_read == 0 or (vals.size == 0 and self.values_read == 0):
                raise InputError("empty stream: no values to test", self.source.where, "check the source produces data")
            per = self.fmt.itemsize
            if per:
                have = self.bytes_read if self.fmt.is_raw else self.values_read * per  # hex: decoded bytes
                need = f"{n * per} bytes needed, {have} available"
            else:
                need = f"{n} values needed, {self.values_read} available"
            raise InputError(
                f"stream is shorter than the plan needs ({need})",
                self.source.where,
                "give a smaller --budget" if budget_hint else "supply more data",
            )
        return vals

    def info(self) -> SourceInfo:
        decoded = self.decoder.values if self.fmt.encoding is not None else None
        return SourceInfo(self.source.kind, self.source.name, self.fmt.describe(), self.bytes_read, self._sha.hexdigest(),
                          decoded)

    def close(self) -> None:
        self.source.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
