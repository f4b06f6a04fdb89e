"""Sniffing: input given with no ``--format`` whose first bytes are printed numbers or hex digits is refused.

Without ``--format`` a file or standard input is read as raw bytes (``u1``). A text file of numbers read that
way fails every check at once (its bytes are a handful of characters), and the verdict would blame the
generator for the user's missing option. So the first :data:`SNIFF_BYTES` bytes (or all there are) are looked
at, without consuming them, and when they are

- **hex**: white-space-separated tokens of hex digits (each optionally ``0x``-prefixed) with at least one
  ``0x`` prefix or one letter a-d or f (either case; ``e`` alone could be an exponent), or
- **printed numbers**: only digits, ``+ - . , e E`` and white space, with at least one digit,

the run stops with one line naming ``--format hex`` or ``--format text`` (``--range LO:HI`` for integers).
An explicit ``--format`` (``u1`` included) turns sniffing off, so such bytes can still be assayed raw.

False trips on random data: every byte of the sniffed prefix must lie in one set of 34 byte values (10
digits, 12 hex letters, ``x X``, ``+ - . ,`` and 6 white-space characters), and at least
:data:`MIN_SNIFF_BYTES` = 32 bytes are required (shorter input is never sniffed). For a uniformly random
byte stream the probability of a trip is therefore at most (34/256)^32 < 1e-28 (for a stream of 4 KiB or
more, (34/256)^4096, far below 1e-3000).
"""

from __future__ import annotations

import re

from ..errors import InputError

SNIFF_BYTES = 4096
MIN_SNIFF_BYTES = 32
#: the only byte values a sniffed prefix may hold (34 of 256; see the module docstring)
SNIFF_ALPHABET = frozenset(b"0123456789abcdefABCDEFxX+-.,") | frozenset(b" \t\n\r\v\f")

_WS = b" \t\n\r\v\f"
_NUMBER_CHARS = re.compile(rb"[0-9+\-.,eE \t\n\r\v\f]*")
_HEX_TOKEN = re.compile(rb"(?:0[xX])?[0-9a-fA-F]+")
_HEX_PART = re.compile(rb"(?:0[xX]?)?[0-9a-fA-F]*")  # a token cut short by the end of the sniffed prefix
_HEX_SIGN = re.compile(rb"0[xX]|[a-dA-DfF]")
_FLOAT_SIGN = re.compile(rb"[.eE]")


def sniff(head: bytes, complete: bool) -> str | None:
    """``"hex"``, ``"text-integers"``, ``"text-floats"`` or None (raw bytes) for the first bytes of an input.

    ``complete``: ``head`` is the whole input (its last token is not cut short)."""
    if len(head) < MIN_SNIFF_BYTES or not SNIFF_ALPHABET.issuperset(head):
        return None
    tokens = head.split()
    if not tokens:
        return None
    last_cut = not complete and head[-1:] not in (b" ", b"\t", b"\n", b"\r", b"\v", b"\f")
    whole = tokens[:-1] if last_cut else tokens
    if (all(_HEX_TOKEN.fullmatch(t) for t in whole) and (not last_cut or _HEX_PART.fullmatch(tokens[-1]))
            and _HEX_SIGN.search(head)):
        return "hex"
    if _NUMBER_CHARS.fullmatch(head) and re.search(rb"[0-9]", head):
        return "text-floats" if _FLOAT_SIGN.search(head) else "text-integers"
    return None


def refuse_printed(head: bytes, complete: bool, where: str) -> None:
    """Raise the one-line error naming the format to pass when :func:`sniff` finds text or hex."""
    kind = sniff(head, complete)
    if kind is None:
        return
    raw = "or --format u1 to assay these bytes as raw bytes"
    if kind == "hex":
        raise InputError("input looks like hex digits, not raw bytes (no --format given)", where,
                         f"pass --format hex to decode them, {raw}")
    if kind == "text-integers":
        raise InputError("input looks like printed integers, not raw bytes (no --format given)", where,
                         f"pass --format text --range LO:HI (the inclusive range of the values, e.g. 1:6), {raw}")
    raise InputError("input looks like printed numbers, not raw bytes (no --format given)", where,
                     f"pass --format text for floats in [0, 1) (or --format text --range LO:HI for integers), {raw}")
