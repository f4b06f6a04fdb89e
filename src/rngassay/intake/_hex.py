"""The ``hex`` input format: bytes written as hex digits (see :mod:`rngassay.intake.formats`).

Tokens are separated by white space (space, tab, newline, carriage return, vertical tab, form feed); each token
is hex digits of either case, optionally after a ``0x``/``0X`` prefix, and must hold an even number of digits
(two per byte, first digit the high nibble); the bytes of all tokens, in order, are the stream. Nothing else is
accepted: a character that is not a hex digit, white space or the ``x`` of a prefix; an ``x`` anywhere but after
a token's leading ``0``; ``0x`` with no digit after it; a token with an odd number of digits (a lost digit would
shift every later byte by a nibble, so it is refused rather than padded). Each error names its byte offset.

Decoding streams inside tokens: a chunk boundary may fall anywhere (inside a token, inside its prefix), and
at most one unpaired digit is carried to the next chunk, so a token has no length limit and memory stays
bounded -- a file written as one long line of hex is read like any other. Input that never has white space and
is not hex (``/dev/zero``, a binary file given ``--format hex``) is refused at its first byte that is not a hex
digit, so there is nothing to buffer.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError

_WS, _X, _BAD = 16, 17, 18
_LUT = np.full(256, _BAD, dtype=np.uint8)
for _i, _c in enumerate(b"0123456789abcdef"):
    _LUT[_c] = _i
    _LUT[ord(chr(_c).upper())] = _i
for _c in b" \t\n\r\v\f":
    _LUT[_c] = _WS
_LUT[ord("x")] = _LUT[ord("X")] = _X
_ZERO = ord("0")

_HINT = ("hex input is hex digits (0-9, a-f, A-F) in tokens separated by white space, two per byte, each token "
         "optionally 0x-prefixed; for raw bytes use --format u1")


def _shown_byte(c: int) -> str:
    return f"{chr(c)!r} (0x{c:02x})" if 0x21 <= c <= 0x7E else f"byte 0x{c:02x}"


class HexDecoder:
    """Incremental decoder of hex text: :meth:`feed` chunks of any size, then :meth:`finish`."""

    def __init__(self, where: str):
        self.where = where
        self.offset = 0  # input bytes fed so far
        self._pos = 0  # characters of the current token seen so far (0: between tokens)
        self._start = 0  # byte offset of the current token's first character
        self._digits = 0  # hex digits of the current token so far (a 0x prefix excluded)
        self._zero_first = False  # the current token began with '0' (a 0x prefix may follow)
        self._nib = -1  # a digit not yet paired (its byte continues in the next chunk); -1: none

    def _error(self, what: str, offset: int, hint: str = _HINT) -> InputError:
        return InputError(what, f"{self.where} byte offset {offset}", hint)

    def feed(self, chunk: bytes) -> np.ndarray:
        b = np.frombuffer(chunk, dtype=np.uint8)
        n = b.size
        if n == 0:
            return np.empty(0, dtype=np.uint8)
        base = self.offset
        v = _LUT[b]
        ws = v == _WS
        idx = np.arange(n)
        last_ws = np.maximum.accumulate(np.where(ws, idx, -1))  # the last white space at or before i
        carried = last_ws < 0  # bytes of a token that began before this chunk (or at its first byte)
        pos = np.where(carried, idx + self._pos, idx - last_ws - 1)  # position of each byte within its token
        first_zero = np.empty(n, dtype=bool)  # the byte before is the token's first character and a '0'
        first_zero[1:] = b[:-1] == _ZERO
        first_zero[0] = self._pos == 1 and self._zero_first
        is_x = v == _X
        x_ok = is_x & (pos == 1) & first_zero
        if x_ok[0] and self._pos == 1:  # the '0' that ended the last chunk was a prefix, not a digit
            self._nib, self._digits = -1, 0
        dm = v < 16  # digits (a prefix's '0' excluded)
        dm[:-1] &= ~x_ok[1:]
        errors: list[tuple[int, str, str]] = []
        bad = np.flatnonzero(v == _BAD)
        if bad.size:
            i = int(bad[0])
            errors.append((base + i, f"{_shown_byte(int(b[i]))} is not a hex digit", _HINT))
        bad_x = np.flatnonzero(is_x & ~x_ok)
        if bad_x.size:
            i = int(bad_x[0])
            errors.append((base + i, f"{chr(b[i])!r} where a hex digit was expected (x only in a 0x prefix at the "
                                     "start of a token)", _HINT))
        if ws[0] and self._pos > 0 and (self._digits == 0 or self._digits % 2):  # the last chunk ended a token
            errors.append(self._token_error(self._digits, self._start))
        cs = np.cumsum(dm)
        ends = np.flatnonzero(~ws[:-1] & ws[1:])  # the last byte of each token that ends in this chunk
        if errors:  # a token holding a bad character is reported for it, not for its digit count
            ends = ends[ends < min(e[0] for e in errors) - base]
        if ends.size:
            starts = last_ws[ends] + 1
            before = np.where(starts > 0, cs[np.maximum(starts - 1, 0)], 0)
            cont = (starts == 0) & (self._pos > 0)
            digits = cs[ends] - before + np.where(cont, self._digits, 0)
            wrong = np.flatnonzero((digits % 2 == 1) | (digits == 0))
            if wrong.size:
                j = int(wrong[0])
                at = self._start if cont[j] else base + int(starts[j])
                errors.append(self._token_error(int(digits[j]), at))
        if errors:
            at, what, hint = min(errors)
            raise self._error(what, at, hint)
        # the token that runs to the end of the chunk continues in the next one
        if ws[-1]:
            self._pos, self._digits, self._zero_first = 0, 0, False
        elif last_ws[-1] < 0:
            if self._pos == 0:
                self._start, self._zero_first = base, bool(b[0] == _ZERO)
            self._pos += n
            self._digits += int(cs[-1])
        else:
            s = int(last_ws[-1]) + 1
            self._pos, self._start = n - s, base + s
            self._digits = int(cs[-1] - cs[s - 1])
            self._zero_first = bool(b[s] == _ZERO)
        self.offset += n
        nib = v[dm]
        if self._nib >= 0:
            nib = np.concatenate([np.array([self._nib], dtype=np.uint8), nib])
        if nib.size % 2:
            self._nib = int(nib[-1])
            nib = nib[:-1]
        else:
            self._nib = -1
        return (nib[0::2] << 4) | nib[1::2]

    def _token_error(self, digits: int, at: int) -> tuple[int, str, str]:
        if digits == 0:
            return at, "0x with no hex digits after it", _HINT
        return at, f"hex token of {digits} digit{'s' if digits != 1 else ''} (an odd number: each byte takes two)", \
            "check for a lost or extra digit, or write the token with a leading 0"

    def finish(self) -> np.ndarray:
        """End of input: the last token must be complete (even digits, not a bare 0x)."""
        if self._pos > 0 and (self._digits == 0 or self._digits % 2):
            at, what, hint = self._token_error(self._digits, self._start)
            raise self._error(what, at, hint)
        return np.empty(0, dtype=np.uint8)
