"""Streams over values held in memory: read ahead (to validate and size a finite source before planning),
and streams made from arrays (e.g. the PIT values of ``fit``). They behave like any other stream: the same
bytes give the same report whether they came from a file, a pipe or memory.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from ..signals import armed
from .formats import parse_format
from .sources import RawSource
from .stream import Stream

BUFFER_LIMIT = 256 << 20  # finite sources up to this size are read and validated before planning
DEFAULT_BUDGET = 64 << 20


class MemorySource(RawSource):
    """Values already read into memory, served again before the rest of the source."""

    def __init__(self, inner: Stream, vals: np.ndarray):
        super().__init__(inner.source.name)
        self.kind = inner.source.kind
        self.inner = inner
        self.vals = vals
        self.values_total = int(vals.size)

    @property
    def where(self) -> str:
        return self.inner.source.where


class MemoryStream(Stream):
    """A stream whose first values were read ahead (to validate and size them); the rest follows."""

    def __init__(self, inner: Stream, vals: np.ndarray):
        self.source = MemorySource(inner, vals)
        self.fmt = inner.fmt
        self.values_read = 0
        self._inner = inner
        self._pos = 0

    @property
    def bytes_read(self) -> int:  # type: ignore[override]
        return self._inner.bytes_read

    @property
    def ended(self) -> bool:  # type: ignore[override]
        return self._pos >= self.source.vals.size and self._inner.ended

    @property
    def unlimited(self) -> bool:
        return self._inner.unlimited

    def read_values(self, n: int) -> np.ndarray:
        out = self.source.vals[self._pos : self._pos + n]
        self._pos += out.size
        if out.size < n and not self._inner.ended:
            more = self._inner.read_values(n - out.size)
            out = np.concatenate([out, more]) if out.size else more
        self.values_read += out.size
        return out

    def info(self):
        info = self._inner.info()
        info.format = self.fmt.describe()  # names the grid found when the values were read whole
        return info

    def close(self) -> None:
        self._inner.close()


def read_ahead(size: int | None, explicit: bool, budget_bytes: int, f, plan_only: bool) -> bool:
    """Whether a finite binary source is read into memory before planning (see :func:`rngassay.intake.budget.resolve`): the same
    rule for a pipe, FIFO or device as for a file, so the same bytes give the same report; never more
    than BUFFER_LIMIT (or the default budget when the length is unknown and no budget is given)."""
    if size is None and not explicit:
        return True  # unknown length, no budget: read up to the default budget to learn it
    return budget_bytes <= BUFFER_LIMIT and not plan_only


def buffered(stream: Stream, budget_bytes: int) -> Stream:
    """Read up to ``budget_bytes`` of the stream into memory (whole values) and serve them again.

    Reading is interruptible (a stop signal raises even where signals are otherwise deferred)."""
    with armed():
        return read_into_memory(stream, budget_bytes)


def read_into_memory(stream: Stream, budget_bytes: int) -> Stream:
    chunks = []
    if stream.fmt.is_binary:
        vals = stream.read_values(budget_bytes // stream.fmt.itemsize)
        if stream.ended:
            stream.read_values(1)  # reaches the end: a trailing partial value raises
        chunks.append(vals)
    else:  # text: budget_bytes counts values
        got = 0
        while got < budget_bytes and not stream.ended:
            chunks.append(stream.read_values(min(1 << 20, budget_bytes - got)))
            got += chunks[-1].size
    vals = np.concatenate(chunks) if chunks else np.empty(0, dtype=stream.fmt.dtype)
    if vals.size == 0:
        raise InputError("empty stream: no values to test", stream.source.where, "check the source produces data")
    return MemoryStream(stream, vals)


class BytesSource(RawSource):
    """Bytes already in memory (``bytes`` or a numpy array), served like a file of that content."""

    kind = "derived"

    def __init__(self, name: str, data: bytes | np.ndarray, kind: str | None = None):
        super().__init__(name)
        self._data = np.frombuffer(data, dtype=np.uint8) if isinstance(data, (bytes, bytearray)) else \
            np.ascontiguousarray(data).view(np.uint8).ravel()
        self._pos = 0
        if kind is not None:
            self.kind = kind

    def size_hint(self) -> int | None:
        return int(self._data.size)

    def read(self, n: int) -> bytes:
        out = self._data[self._pos : self._pos + n].tobytes()
        self._pos += len(out)
        return out


def stream_from_array(values: np.ndarray, fmt: str = "<f8", name: str = "array", kind: str = "derived") -> Stream:
    """A finite stream over an in-memory array (e.g. PIT uniforms made from a supplier's variates).

    The array is encoded in ``fmt`` (validated like any input) and read back through the normal intake,
    so the battery treats it exactly as a file with that content.
    """
    raw = BytesSource(name, np.ascontiguousarray(values, dtype=np.dtype(fmt)), kind)
    return Stream(raw, parse_format(fmt))


def value_grid(f, vals: np.ndarray):
    """The grid float values read whole lie on, as a format the views follow, and a line for the report."""
    import dataclasses

    from . import views

    if f.kind == "text-floats":
        d = views.decimal_grid(vals)
        if d is not None and d >= 1:
            return dataclasses.replace(f, decimals=d), (
                f"printed with {d} decimals: every value on the 10^-{d} grid; bit views take the {d} bits "
                f"the digits carry, uniforms are spread over their grid cells (dither seed {views.DITHER_SEED})")
    claimed = views.uniform_resolution_bits(f)
    r = views.fraction_grid_bits(vals, claimed)
    line = (f"every value a multiple of 2^-{r} ({r} fraction bits; the format holds {claimed})"
            + ("; word and bit views take only these bits" if r < claimed else ""))
    return dataclasses.replace(f, grid_bits=r), line
