"""Reading a supplier's variates for ``rngassay fit``: any finite reals or outcome labels, not uniforms.

The battery's decoders (:mod:`.formats`) read values that claim to be uniform (floats in [0, 1), or
integers in a declared range) and refuse anything else.  A supplier's variates are any finite reals
(normal, gamma, Poisson draws, ...) or the outcome labels of an odds table.  They are read through the
same machinery -- a source from :func:`.sources.open_source` and a :class:`.stream.Stream` (chunked
reads, the byte count and the one SHA-256 of what was read) -- with decoders of their own:

- ``text``: tokens separated by white space, any number per line; numbers (ASCII digits, '.', 'e' and a
  sign only) or labels matched exactly; an error names the line;
- ``<f8``, ``<f4``, ``>f8``, ``>f4``: binary floats; an error names the byte offset.

NaN and infinities are refused; a ``validate(values_chunk)`` callback may refuse a value by returning
``(index, what, hint)``.  Values handed over in memory (:func:`variates_from_array`) are not read from a
source: their digest is the SHA-256 of the array's bytes.
"""

from __future__ import annotations

import hashlib
import os
import re
from dataclasses import dataclass
from typing import Any, Callable

import numpy as np

from ..errors import InputError
from .formats import MAX_TOKEN_BYTES, Format, parse_format
from .sources import RawSource, open_source
from .stream import CHUNK, Stream

#: Most values read from a source (the rest is left unread and the report says so).
MAX_VALUES = 1 << 25
#: Formats of variates.
FORMATS = ("text", "<f8", "<f4", ">f8", ">f4")

#: bytes that never belong to a number token (in numeric mode): '_' and anything outside printable ASCII
_NOT_A_NUMBER_BYTE = re.compile(rb"[_\x80-\xff]")
_SPACES = (b" ", b"\n", b"\t", b"\r", b"\f", b"\v")


@dataclass
class Variates:
    values: np.ndarray  # float64 (continuous), int64 (discrete integers or outcome indices)
    source: dict[str, Any]  # kind, name, format, bytes_read, sha256, values
    truncated: bool = False


Validator = Callable[["np.ndarray"], "tuple[int, str, str] | None"]


class _TextDecoder:
    """Incremental tokenizer of white-space separated numbers or labels, with line numbers for errors
    (the interface of :class:`.formats.Decoder`: ``feed`` chunks, then ``finish``)."""

    def __init__(self, where: str, mode: str, labels: dict[bytes, int] | None, validate: Validator | None):
        self.where, self.mode, self.labels, self.validate = where, mode, labels, validate
        self.carry = b""
        self.line = 1
        self._dtype = np.dtype(np.int64) if mode == "labels" else np.dtype(np.float64)  # outcome indices or numbers

    def feed(self, chunk: bytes) -> np.ndarray:
        if not chunk:
            return np.empty(0, dtype=self._dtype)
        buf = self.carry + chunk if self.carry else chunk
        cut = max(buf.rfind(c) for c in _SPACES)
        if cut < 0:
            if len(buf) > MAX_TOKEN_BYTES:  # e.g. /dev/zero: refused, not buffered without end
                raise InputError(f"no white space in {len(buf)} bytes of text: no value is that long",
                                 f"{self.where} line {self.line}",
                                 "values must be separated by white space or newlines; check --format")
            self.carry = bytes(buf)
            return np.empty(0, dtype=self._dtype)
        body, self.carry = buf[: cut + 1], bytes(buf[cut + 1:])
        return self._parse_lines(body)

    def finish(self) -> np.ndarray:
        body, self.carry = self.carry, b""
        return self._parse_lines(body)

    def _parse_lines(self, body: bytes) -> np.ndarray:
        out = self._parse(body)
        self.line += body.count(b"\n")
        return out

    def _line_of(self, body: bytes, index: int) -> int:
        for j, m in enumerate(re.finditer(rb"\S+", body)):
            if j == index:
                return self.line + body.count(b"\n", 0, m.start())
        return self.line  # pragma: no cover

    def _parse(self, body: bytes) -> np.ndarray:
        tokens = body.split()
        if not tokens:
            return np.empty(0, dtype=self._dtype)
        vals = self._labels(body, tokens) if self.mode == "labels" else self._numbers(body, tokens)
        if self.validate is not None:
            res = self.validate(vals)
            if res is not None:
                i, what, hint = res
                raise InputError(what, f"{self.where} line {self._line_of(body, i)}", hint)
        return vals

    def _labels(self, body: bytes, tokens: list[bytes]) -> np.ndarray:
        assert self.labels is not None
        uniq, inv = np.unique(np.array(tokens), return_inverse=True)  # fixed-width bytes: sorted in C
        codes = np.empty(uniq.size, dtype=np.int64)
        for j, tok in enumerate(uniq.tolist()):  # loop over distinct labels, not over values
            c = self.labels.get(tok)
            if c is None:
                i = int(np.flatnonzero(inv == j)[0])
                shown = tok[:40].decode("utf-8", "replace")
                raise InputError(f"outcome {shown!r} is not in the odds declaration",
                                 f"{self.where} line {self._line_of(body, i)}",
                                 "every outcome in the data must be declared (labels are matched exactly)")
            codes[j] = c
        return codes[inv.ravel()]

    def _numbers(self, body: bytes, tokens: list[bytes]) -> np.ndarray:
        odd = _NOT_A_NUMBER_BYTE.search(body)
        if odd:  # float() also takes '_' between digits and non-ASCII digits; a sampler writes neither
            i = next(j for j, m in enumerate(re.finditer(rb"\S+", body)) if m.end() > odd.start())
            shown = tokens[i][:40].decode("utf-8", "replace")
            raise InputError(f"cannot read {shown!r} as a number: only ASCII digits, '.', 'e' and a sign are read",
                             f"{self.where} line {self._line_of(body, i)}", "write plain decimal numbers")
        try:
            vals = np.array(tokens, dtype=np.float64)
        except (ValueError, OverflowError):
            for i, tok in enumerate(tokens):  # only on error: find the bad token
                try:
                    float(tok)
                except ValueError:
                    shown = tok[:40].decode("utf-8", "replace")
                    raise InputError(f"cannot read {shown!r} as a number", f"{self.where} line {self._line_of(body, i)}",
                                     "the data must be numbers separated by white space") from None
            raise InputError("unreadable text", f"{self.where} line {self.line}") from None
        bad = ~np.isfinite(vals)
        if bad.any():
            i = int(np.argmax(bad))
            shown = tokens[i][:40].decode("utf-8", "replace")
            raise InputError(f"{'NaN' if np.isnan(vals[i]) else 'infinite value'} ({shown!r}) in the data",
                             f"{self.where} line {self._line_of(body, i)}",
                             "remove it: a sampler must produce finite numbers")
        return vals


class _BinaryDecoder:
    """Incremental decoder of binary floats (any finite value), with byte offsets for errors. A partial
    value left at the end stays in ``carry``: the reader decides whether it is an error or a cut."""

    def __init__(self, where: str, fmt: str, validate: Validator | None):
        self.where, self.dtype, self.validate = where, np.dtype(fmt), validate
        self.carry = b""
        self.offset = 0  # bytes fed so far

    def feed(self, chunk: bytes) -> np.ndarray:
        if not chunk:
            return np.empty(0)
        size = self.dtype.itemsize
        start = self.offset - len(self.carry)  # byte offset of the first byte of buf
        self.offset += len(chunk)
        buf = self.carry + chunk if self.carry else chunk
        whole = len(buf) - len(buf) % size
        self.carry = bytes(buf[whole:])
        v = np.frombuffer(buf, dtype=self.dtype, count=whole // size).astype(np.float64)
        bad = ~np.isfinite(v)
        if bad.any():
            i = int(np.argmax(bad))
            raise InputError(f"{'NaN' if np.isnan(v[i]) else 'infinite value'} in the data",
                             f"{self.where} byte offset {start + i * size}",
                             "remove it: a sampler must produce finite numbers")
        if self.validate is not None and v.size:
            res = self.validate(v)
            if res is not None:
                i, what, hint = res
                raise InputError(what, f"{self.where} byte offset {start + i * size}", hint)
        return v

    def finish(self) -> np.ndarray:
        return np.empty(0)


class _VariateStream(Stream):
    """A :class:`Stream` (reads, byte count, SHA-256) whose decoder reads variates instead of uniforms."""

    def __init__(self, source: RawSource, fmt: str, decoder: _TextDecoder | _BinaryDecoder):
        f = parse_format("text") if fmt == "text" else Format(fmt, np.dtype(np.float64), np.dtype(fmt).itemsize,
                                                              "floats")
        super().__init__(source, f)
        self.decoder = decoder  # type: ignore[assignment]


def read_variates(
    source: Any = None,
    *,
    fmt: str = "text",
    mode: str = "numbers",
    labels: list[str] | None = None,
    validate: Validator | None = None,
    command: str | None = None,
    shell: bool = False,
    limit: int | None = None,
    exact: bool = False,
) -> Variates:
    """Read a supplier's values from a file path, ``"-"`` (standard input), a :class:`RawSource` or ``command``.

    ``fmt``: ``text`` (numbers or labels separated by white space, any number per line), or
    ``<f8``/``<f4`` (``>f8``/``>f4``) binary floats.  ``mode``: ``numbers`` (finite floats),
    ``labels`` (tokens matched exactly against ``labels``; text only).  NaN and infinities are
    rejected with file:line (text) or byte offset (binary); ``validate(values_chunk)`` may reject a
    value by returning ``(index, what, hint)``.  At most ``limit`` values (default and ceiling
    :data:`MAX_VALUES`) are read. ``exact``: read no more than ``limit`` values (a budget: what is read is
    exactly what is examined), instead of one more to learn whether the source had more.
    """
    if fmt not in FORMATS:
        raise InputError(f"unknown format {fmt!r} for fit", "", "use text, <f8 or <f4")
    if mode == "labels" and fmt != "text":
        raise InputError("outcome labels need --format text", "", "write one label per value, separated by white space")
    if limit is not None and limit < 1:
        raise InputError(f"--limit must be at least 1, got {limit}", "", "e.g. --limit 100000")
    cap = min(limit, MAX_VALUES) if limit is not None else MAX_VALUES
    raw = source if isinstance(source, RawSource) else open_source(
        None if source is None else os.fspath(source), command=command, shell=shell)
    if fmt == "text":
        lab = {s.encode("utf-8"): i for i, s in enumerate(labels)} if labels is not None else None
        decoder: _TextDecoder | _BinaryDecoder = _TextDecoder(raw.where, mode, lab, validate)
    else:
        decoder = _BinaryDecoder(raw.where, fmt, validate)
    with _VariateStream(raw, fmt, decoder) as stream:
        try:
            # one value more than the cap: did the source have more? (not for an exact budget)
            values = _read_upto(stream, decoder, cap if exact else cap + 1)
        except InputError as e:
            if stream.values_read == 0 and e.what.startswith("empty stream"):  # the stream's words for nothing read
                raise InputError("no values in the data", raw.where, "check the source and --format") from None
            raise
    truncated = values.size > cap
    if isinstance(decoder, _BinaryDecoder) and decoder.carry:
        if values.size < cap:
            nbytes = stream.bytes_read
            raise InputError(f"stream length {nbytes} bytes is not a whole number of {decoder.dtype.itemsize}-byte "
                             "values", f"{raw.where} byte offset {nbytes - len(decoder.carry)}",
                             "check --format, or trim the stream to whole values")
        truncated = True  # the cap was reached: a partial value after it is data left unread, not an error
    values = values[:cap]
    if values.size == 0:
        raise InputError("no values in the data", raw.where, "check the source and --format")
    info = {**stream.info().to_dict(), "values": int(values.size)}
    return Variates(values, info, truncated)


def _read_upto(stream: Stream, decoder: _TextDecoder | _BinaryDecoder, n: int) -> np.ndarray:
    """Up to ``n`` values; fewer only at the end of the source. Binary formats are read in chunks of at most
    :data:`.stream.CHUNK` bytes and never more than ``n`` values; text in chunks until ``n`` are decoded."""
    if isinstance(decoder, _TextDecoder):
        return stream.read_values(n)
    per_chunk = max(1, CHUNK // decoder.dtype.itemsize)
    parts: list[np.ndarray] = []
    have = 0
    while have < n and not stream.ended:
        v = stream.read_values(min(per_chunk, n - have))
        if v.size:
            parts.append(v)
            have += v.size
    return np.concatenate(parts) if parts else np.empty(0)


def variates_from_array(values: Any, *, labels: list[str] | None = None,
                        validate: Validator | None = None) -> Variates:
    """Values handed over in memory (a numpy array, list or tuple).

    With ``labels`` (an odds table's outcomes) the values are labels, or integer indices into ``labels``;
    they become outcome indices.  Otherwise they must be finite numbers, and ``validate`` may refuse one
    (see :func:`read_variates`); errors name the array index.
    """
    if labels is not None:
        arr = np.asarray(values)
        lab = {s: i for i, s in enumerate(labels)}
        if arr.dtype.kind in "iu":
            idx = arr.astype(np.int64)
            if idx.size and (idx.min() < 0 or idx.max() >= len(labels)):
                raise InputError("outcome index outside the declared outcomes", "array")
        else:
            uniq, inv = np.unique(arr.astype(str), return_inverse=True)
            codes = np.empty(uniq.size, dtype=np.int64)
            for j, s in enumerate(uniq.tolist()):  # distinct labels only
                if s not in lab:
                    raise InputError(f"outcome {s!r} is not in the odds declaration", "array")
                codes[j] = lab[s]
            idx = codes[inv.ravel()]
        vals = idx
    else:
        vals = np.asarray(values, dtype=np.float64).ravel()
        bad = ~np.isfinite(vals)
        if bad.any():
            raise InputError("NaN or infinite value in the data", f"array index {int(np.argmax(bad))}")
        if validate is not None:
            res = validate(vals)
            if res is not None:
                raise InputError(res[1], f"array index {res[0]}", res[2])
    raw = np.ascontiguousarray(vals).tobytes()
    if vals.size == 0:
        raise InputError("no values in the data", "array")
    info = {"kind": "python", "name": "array", "format": "array", "bytes_read": len(raw),
            "sha256": hashlib.sha256(raw).hexdigest(), "values": int(vals.size)}
    return Variates(vals, info)
