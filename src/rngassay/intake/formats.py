"""Input formats: decoding and validation of a byte stream into values.

Format names follow numpy's dtype vocabulary:

- ``u1``                      raw bytes (the default)
- ``<u2 >u2 <u4 >u4 <u8 >u8`` unsigned words, little- or big-endian
- ``<f4 <f8``                 IEEE floats that claim to be uniform on [0, 1)
- ``text``                    numbers separated by white space (spaces, tabs, newlines): floats in
                              [0, 1), or, with ``--range LO:HI``, integers in that inclusive range
- ``<u2 ... >u8`` with ``--range LO:HI``: words whose values all lie in LO..HI (a 31-bit generator's
                              outputs, or 1..2^31-2 of a multiplicative one); views in
                              :mod:`rngassay.intake.views` ("ranged words"); a word outside the range is
                              refused with its byte offset
- ``hex``                     bytes written as hex digits: white-space-separated tokens, either case,
                              optional ``0x`` prefix, two digits per byte (:mod:`rngassay.intake._hex`);
                              the decoded bytes are assayed exactly like ``u1``

Decoders are incremental: :meth:`Decoder.feed` takes chunks of any size (a value may be split across
chunk boundaries anywhere) and returns the values completed so far; :meth:`Decoder.finish` checks
that nothing is left over. Every value is validated; a bad one raises
:class:`rngassay.errors.InputError` naming the byte offset (binary) or line (text).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ._hex import HexDecoder

BINARY_FORMATS = ("u1", "<u2", ">u2", "<u4", ">u4", "<u8", ">u8", "<f4", "<f8")
WORD_FORMATS = ("<u2", ">u2", "<u4", ">u4", "<u8", ">u8")  # these also take --range LO:HI ("ranged words")
ENCODED_FORMATS = ("hex",)  # bytes written as text: decoded, then assayed like u1
FORMATS = BINARY_FORMATS + ("text",) + ENCODED_FORMATS

#: Longest text token accepted (bytes): far beyond any printed number; a stream with no white space in
#: this many bytes is not text of numbers (e.g. /dev/zero), and is refused instead of buffered without end.
MAX_TOKEN_BYTES = 4096

#: "1." followed by 1 to 15 zeros: the printed rounding of a uniform float just below 1 (see _parse_text)
_ROUNDED_ONE = re.compile(rb"1\.0{1,15}")


def _shown(tok: bytes, limit: int = 40) -> str:
    """A token as an error line shows it: at most ``limit`` characters, the rest elided."""
    t = tok[:limit].decode("ascii", "replace")
    return t + f"... ({len(tok)} bytes)" if len(tok) > limit else t


_FLOAT_HINT = "uniform floats must lie in [0, 1); check the producer's scaling or use another --format"


@dataclass(frozen=True)
class Format:
    """A parsed input format.

    name      -- one of FORMATS
    dtype     -- numpy dtype of a decoded value (float64 or int64 for text)
    itemsize  -- bytes per value in the stream (0 for text)
    kind      -- "bytes", "words", "ranged-words", "floats", "text-floats" or "text-integers"
    lo, hi    -- inclusive range of text integers ("text-integers") or of words ("ranged-words")
    decimals  -- text floats: the printed grid 10^-decimals every value lies on, when read whole and found
    grid_bits -- floats: the fraction bits every value carries (all values are multiples of 2^-grid_bits),
                 when read whole before planning; None = not known in advance (judged per segment)
    encoding  -- "hex" when the values (bytes) are written as text and decoded: itemsize, budgets and
                 views count decoded bytes, while the stream's byte count and SHA-256 cover the input
    """

    name: str
    dtype: np.dtype
    itemsize: int
    kind: str
    lo: int | None = None
    hi: int | None = None
    decimals: int | None = None
    grid_bits: int | None = None
    encoding: str | None = None

    @property
    def is_binary(self) -> bool:
        return self.itemsize > 0

    @property
    def is_raw(self) -> bool:
        """Binary and read as is: every value is ``itemsize`` input bytes (not text, not hex)."""
        return self.itemsize > 0 and self.encoding is None

    @property
    def is_float(self) -> bool:
        return self.kind in ("floats", "text-floats")

    @property
    def range_size(self) -> int | None:
        """R = HI - LO + 1 for a declared range, else None."""
        return None if self.lo is None or self.hi is None else self.hi - self.lo + 1

    @property
    def range_bits(self) -> int | None:
        """b when the declared range holds exactly 2^b values, else None."""
        r = self.range_size
        return r.bit_length() - 1 if r is not None and r & (r - 1) == 0 else None

    def describe(self) -> str:
        if self.kind == "ranged-words":
            r, b = self.range_size, self.range_bits
            if b is not None:
                return f"{self.name} values {self.lo}..{self.hi} (2^{b} values; views: uniforms, {b}-bit fields as bits)"
            return (f"{self.name} values {self.lo}..{self.hi} ({r} values, not a power of two; views: uniforms "
                    "only, no bit views)")
        if self.kind == "text-integers":
            return f"text integers {self.lo}..{self.hi}"
        if self.kind == "text-floats" and self.decimals is not None:
            return f"text floats on a 10^-{self.decimals} grid"
        if self.kind in ("floats", "text-floats") and self.grid_bits is not None:
            return f"{self.name}, values on a 2^-{self.grid_bits} grid"
        return self.name


def parse_range(spec: str, max_width: int = 2**62) -> tuple[int, int]:
    """Parse ``LO:HI`` (inclusive, integers, LO < HI, HI - LO < max_width)."""
    m = re.fullmatch(r"\s*([+-]?\d+)\s*:\s*([+-]?\d+)\s*", spec or "")
    if not m:
        raise InputError(
            f"bad --range {spec!r}", "", "write it as LO:HI with integers, e.g. --range 1:6 for a die"
        )
    lo, hi = int(m.group(1)), int(m.group(2))
    if hi <= lo:
        raise InputError(f"bad --range {spec!r}: HI must be greater than LO", "", "e.g. --range 1:59")
    if hi - lo >= max_width:
        raise InputError(f"bad --range {spec!r}: too wide", "", "use a binary word format for wide ranges")
    return lo, hi


def parse_format(name: str | None, value_range: str | tuple[int, int] | None = None) -> Format:
    """Turn a ``--format`` name (and an optional ``--range``) into a :class:`Format`."""
    name = name or "u1"
    if name not in FORMATS:
        raise InputError(
            f"unknown format {name!r}",
            "",
            "use one of " + ", ".join(FORMATS) + " (see `rngassay catalog`)",
        )
    wide = 2**64 if name in WORD_FORMATS else 2**62
    rng = parse_range(value_range, wide) if isinstance(value_range, str) else value_range
    if name == "text":
        if rng is not None:
            return Format("text", np.dtype(np.int64), 0, "text-integers", rng[0], rng[1])
        return Format("text", np.dtype(np.float64), 0, "text-floats")
    if name == "hex":
        if rng is not None:
            raise InputError("--range does not apply to --format hex (its values are bytes)", "", "drop --range")
        return Format("hex", np.dtype(np.uint8), 1, "bytes", encoding="hex")
    dt = np.dtype(name)
    if rng is not None:
        if name not in WORD_FORMATS:
            raise InputError(f"--range applies to --format text and to word formats ({' '.join(WORD_FORMATS)}), "
                             f"not {name!r}", "", "drop --range, or give the word format the values are written in")
        return Format(name, dt, dt.itemsize, "ranged-words", *_word_range(name, dt, rng))
    if name == "u1":
        kind = "bytes"
    elif dt.kind == "f":
        kind = "floats"
    else:
        kind = "words"
    return Format(name, dt, dt.itemsize, kind)


#: Smallest declared range of words: a power of two from 2^16 (a grid as fine as <u2 words'), any other size
#: from 2^28 (see rngassay.intake.views: the uniforms (x - LO)/R lie on a grid of R points, and a check that cuts
#: [0, 1) into d cells sees cell probabilities off by up to d/R of their size when R is not a power of two).
MIN_RANGE_POW2, MIN_RANGE = 2**16, 2**28


def _word_range(name: str, dt: np.dtype, rng: tuple[int, int]) -> tuple[int, int]:
    lo, hi = int(rng[0]), int(rng[1])
    top = 2 ** (8 * dt.itemsize) - 1
    spec = f"--range {lo}:{hi}"
    if lo < 0 or hi > top:
        raise InputError(f"{spec} does not fit {name} words (0..{top})", "", "give the range the words' values lie in")
    r = hi - lo + 1
    pow2 = r & (r - 1) == 0
    if r < (MIN_RANGE_POW2 if pow2 else MIN_RANGE):
        raise InputError(
            f"{spec} holds {r} values; a range of words must hold at least 2^28 values (2^16 if a power of two)",
            "", "for a small set of outcomes write them as text and use --format text --range LO:HI")
    if r > 2**53 and not pow2:
        raise InputError(f"{spec} holds {r} values, more than 2^53 and not a power of two", "",
                         "(x - LO)/R would not be exact in a 64-bit float: declare the power-of-two range the values fill")
    return lo, hi


# Text numbers: tokens may use only printable ASCII; '_' (which Python's float() and int() accept as a digit
# separator) is refused, as are non-ASCII digits (which they accept too): neither is how generators write numbers,
# and both hide damage. A float token that reads as 0 must be a plain zero ('0', '0.0', '0e5'): '-0.0' (a sign
# bug) and '1e-400' (underflow) are refused.
_NOT_NUMBER_CHAR = re.compile(rb"[^\x21-\x7e\s]|_")
_ZERO_TOKEN = re.compile(rb"\+?(?:0+\.?0*|\.0+)(?:[eE][+-]?[0-9]+)?")
_INT_TOKEN = re.compile(rb"[+-]?[0-9]+")
_BIG_NEG_EXPONENT = re.compile(rb"[eE]-0*[0-9]{3,}")  # e-100 and below: where float64 underflow starts to matter


class Decoder:
    """Incremental decoder for one format. ``where`` names the source in error messages."""

    def __init__(self, fmt: Format, where: str):
        self.fmt = fmt
        self.where = where
        self.offset = 0  # bytes fed so far
        self._carry = b""
        self._line = 1  # text: line number at the start of the carry
        self.wrapped_ones = 0  # text floats printed as 1.000...0 (rounded from just below 1), read as 0.0
        self.values = 0  # values produced so far
        self._hex = HexDecoder(where) if fmt.encoding == "hex" else None

    # -- binary ---------------------------------------------------------------------------------
    def _feed_binary(self, chunk: bytes) -> np.ndarray:
        size = self.fmt.itemsize
        start_offset = self.offset - len(self._carry)  # byte offset of the first byte in buf
        buf = self._carry + chunk if self._carry else chunk
        whole = len(buf) - len(buf) % size
        self._carry = bytes(buf[whole:]) if whole < len(buf) else b""
        if whole == 0:
            return np.empty(0, dtype=self.fmt.dtype)
        vals = np.frombuffer(buf, dtype=self.fmt.dtype, count=whole // size)
        if self.fmt.kind == "ranged-words":
            self._validate_range(vals, start_offset)
        elif self.fmt.kind == "floats":
            self._validate_floats(vals, start_offset)
            vals = vals.astype(np.float64)
        return vals

    def _validate_range(self, vals: np.ndarray, start_offset: int) -> None:
        lo, hi = self.fmt.lo, self.fmt.hi
        bad = (vals < lo) if lo else np.zeros(vals.size, dtype=bool)
        if hi < 2 ** (8 * self.fmt.itemsize) - 1:
            bad |= vals > hi
        if bad.any():
            i = int(np.argmax(bad))
            raise InputError(f"word {int(vals[i])} outside --range {lo}:{hi}",
                             f"{self.where} byte offset {start_offset + i * self.fmt.itemsize}",
                             "check --range (and the byte order of --format) against the generator's outputs")

    def _validate_floats(self, vals: np.ndarray, start_offset: int) -> None:
        ok = (vals >= 0) & (vals < 1)  # NaN compares False, so it fails here too
        if ok.all():
            return
        i = int(np.argmin(ok))
        v = vals[i]
        at = f"{self.where} byte offset {start_offset + i * self.fmt.itemsize}"
        if np.isnan(v):
            raise InputError("NaN where a uniform float was expected", at, _FLOAT_HINT)
        if np.isinf(v):
            raise InputError(f"infinity ({v}) where a uniform float was expected", at, _FLOAT_HINT)
        raise InputError(f"float outside [0, 1): {float(v)!r}", at, _FLOAT_HINT)

    # -- text -------------------------------------------------------------------------------------
    def _feed_text(self, chunk: bytes) -> np.ndarray:
        buf = self._carry + chunk if self._carry else chunk
        # the last token may continue in the next chunk: keep everything after the last white space
        cut = max(buf.rfind(c) for c in (b" ", b"\n", b"\t", b"\r", b"\f", b"\v"))
        if cut < 0:
            if len(buf) > MAX_TOKEN_BYTES:
                raise InputError(
                    f"no white space in {len(buf)} bytes of text: no number is that long",
                    f"{self.where} line {self._line}",
                    "text input must hold numbers separated by white space or newlines; check --format",
                )
            self._carry = bytes(buf)
            return np.empty(0, dtype=self.fmt.dtype)
        body, self._carry = buf[: cut + 1], bytes(buf[cut + 1 :])
        vals = self._parse_text(body, self._line)
        self._line += body.count(b"\n")
        return vals

    def _parse_text(self, body: bytes, first_line: int) -> np.ndarray:
        tokens = body.split()
        if not tokens:
            return np.empty(0, dtype=self.fmt.dtype)
        odd = None if body.isascii() and b"_" not in body else _NOT_NUMBER_CHAR.search(body)  # fast path first
        if odd is not None:  # '_' separators and non-ASCII digits: Python's float() reads them, we do not
            self._refuse_token_at(body, first_line, odd.start(), "only ASCII digits, '.', 'e' and a sign are read "
                                  "(no '_' digit separators, no non-ASCII digits)")
        try:
            if self.fmt.kind == "text-integers":
                vals = np.array(tokens, dtype=np.int64)
            else:
                vals = np.array(tokens, dtype=np.float64)
        except (ValueError, OverflowError):
            self._locate_bad_token(body, first_line)
            raise  # pragma: no cover - _locate_bad_token always raises
        if self.fmt.kind == "text-integers":
            bad = (vals < self.fmt.lo) | (vals > self.fmt.hi)
            if bad.any():
                i = int(np.argmax(bad))
                raise InputError(
                    f"integer {int(vals[i])} outside --range {self.fmt.lo}:{self.fmt.hi}",
                    f"{self.where} line {self._line_of_token(body, first_line, i)}",
                    "fix the value or widen --range",
                )
        else:
            ok = (vals >= 0) & (vals < 1)
            ones = vals == 1.0
            if ones.any():
                # "1.000000": a uniform just below 1 rounded to d printed decimals (1 <= d <= 15). On the
                # printed grid it is the point 10^d, which is 0 modulo 1: read as 0.0, so that the grid is
                # exactly uniform again (k = 0 and k = 10^d each hold half a cell). Any other form of 1
                # ("1", "1.0e0", "0.99999999999999999999") is still refused below.
                rounded = np.array([_ROUNDED_ONE.fullmatch(tokens[int(i)]) is not None
                                    for i in np.flatnonzero(ones)])
                if rounded.all():
                    vals = np.where(ones, 0.0, vals)
                    self.wrapped_ones += int(ones.sum())
                    ok = ok | ones
            if not ok.all():
                i = int(np.argmin(ok))
                v = vals[i]
                at = f"{self.where} line {self._line_of_token(body, first_line, i)}"
                tok = _shown(tokens[i])
                if np.isnan(v):
                    raise InputError(f"NaN ({tok!r}) where a uniform float was expected", at, _FLOAT_HINT)
                if np.isinf(v):
                    raise InputError(f"infinity ({tok!r}) where a uniform float was expected", at, _FLOAT_HINT)
                if re.fullmatch(rb"[+-]?\d+", tokens[i]):
                    raise InputError(
                        f"integer {tok} in text input without --range",
                        at,
                        "give --range LO:HI for integer outcomes (e.g. --range 1:6), or supply floats in [0, 1)",
                    )
                raise InputError(f"float outside [0, 1): {tok}", at, _FLOAT_HINT)
            negzero = np.signbit(vals)  # only -0.0 can have the sign bit here (all values are >= 0)
            if negzero.any():
                i = int(np.argmax(negzero))
                raise InputError(f"negative zero {tokens[i][:40].decode('ascii', 'replace')!r} where a uniform float "
                                 "in [0, 1) was expected", f"{self.where} line {self._line_of_token(body, first_line, i)}",
                                 "a sign on zero points to a generator or formatting bug; write 0")
            zero = vals == 0
            if zero.any() and _BIG_NEG_EXPONENT.search(body):  # only then can a nonzero token underflow to 0.0
                for i in np.flatnonzero(zero):
                    tok = tokens[int(i)]
                    if not _ZERO_TOKEN.fullmatch(tok):
                        raise InputError(f"{tok[:40].decode('ascii', 'replace')!r} is not zero but underflows to 0.0 "
                                         "in a 64-bit float",
                                         f"{self.where} line {self._line_of_token(body, first_line, int(i))}",
                                         "values below about 4.9e-324 cannot be told from 0; check the generator")
        return vals

    def _refuse_token_at(self, body: bytes, first_line: int, pos: int, why: str) -> None:
        a = max(body.rfind(ws, 0, pos) for ws in (b" ", b"\n", b"\t", b"\r", b"\f", b"\v")) + 1
        m = re.match(rb"\S+", body[a:])
        tok = m.group() if m else b""
        line = first_line + body.count(b"\n", 0, a)
        kind = "an integer" if self.fmt.kind == "text-integers" else "a number"
        raise InputError(f"cannot read {tok[:40].decode('utf-8', 'replace')!r} as {kind}: {why}",
                         f"{self.where} line {line}", "write plain decimal numbers separated by white space")

    def _line_of_token(self, body: bytes, first_line: int, index: int) -> int:
        for j, m in enumerate(re.finditer(rb"\S+", body)):
            if j == index:
                return first_line + body.count(b"\n", 0, m.start())
        return first_line  # pragma: no cover

    def _locate_bad_token(self, body: bytes, first_line: int) -> None:
        want_int = self.fmt.kind == "text-integers"
        for m in re.finditer(rb"\S+", body):
            tok = m.group()
            line = first_line + body.count(b"\n", 0, m.start())
            shown = tok[:40].decode("utf-8", "replace") + ("..." if len(tok) > 40 else "")
            if want_int and _INT_TOKEN.fullmatch(tok):
                if -(2**63) <= int(tok) < 2**63:
                    continue
                raise InputError(
                    f"integer {shown} outside --range {self.fmt.lo}:{self.fmt.hi}",
                    f"{self.where} line {line}",
                    "fix the value or widen --range",
                )
            try:
                if not want_int:
                    float(tok)
                    continue
            except (ValueError, OverflowError):
                pass
            if want_int:
                raise InputError(
                    f"cannot read {shown!r} as an integer",
                    f"{self.where} line {line}",
                    "text input with --range must hold whole numbers separated by white space",
                )
            raise InputError(
                f"cannot read {shown!r} as a number",
                f"{self.where} line {line}",
                "text input must hold numbers separated by white space",
            )
        raise InputError("unreadable text", f"{self.where} line {first_line}", "check the encoding")

    # -- public -----------------------------------------------------------------------------------
    def feed(self, chunk: bytes) -> np.ndarray:
        """Decode a chunk; returns the values completed by it (possibly none)."""
        if not chunk:
            return np.empty(0, dtype=self.fmt.dtype)
        if self._hex is not None:
            out = self._hex.feed(chunk)
        else:
            out = self._feed_binary(chunk) if self.fmt.is_binary else self._feed_text(chunk)
        self.offset += len(chunk)
        self.values += len(out)
        return out

    def finish(self) -> np.ndarray:
        """End of stream: return the last values, or raise if a partial value is left over."""
        if self._hex is not None:
            return self._hex.finish()
        if self.fmt.is_binary:
            if self._carry:
                n = len(self._carry)
                raise InputError(
                    f"stream length {self.offset} bytes is not a whole number of "
                    f"{self.fmt.itemsize}-byte values ({n} byte{'s' if n != 1 else ''} left over)",
                    f"{self.where} byte offset {self.offset - n}",
                    "check --format, or trim the stream to whole values (no data is dropped silently)",
                )
            return np.empty(0, dtype=self.fmt.dtype)
        body, self._carry = self._carry, b""
        out = self._parse_text(body, self._line) if body.strip() else np.empty(0, dtype=self.fmt.dtype)
        self.values += len(out)
        return out
