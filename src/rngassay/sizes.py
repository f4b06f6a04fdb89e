"""Byte sizes with IEC suffixes (KiB, MiB, GiB, TiB); reports record exact byte counts."""

from __future__ import annotations

import re

from .errors import InputError

_UNITS = {
    "": 1, "b": 1,
    "kib": 1 << 10, "mib": 1 << 20, "gib": 1 << 30, "tib": 1 << 40,
    "k": 1 << 10, "m": 1 << 20, "g": 1 << 30, "t": 1 << 40,
    "kb": 10**3, "mb": 10**6, "gb": 10**9, "tb": 10**12,
}


MAX_SIZE = 1 << 50  # 1 PiB: larger sizes are refused before anything is planned or allocated


def parse_size(text: str | int, option: str = "--budget") -> int:
    """Parse '64MiB', '1 GiB', '4096', '1.5KiB' (IEC: K, M, G, T also mean KiB, MiB...; KB, MB are decimal).

    Zero, negative, unparsable sizes and sizes above ``MAX_SIZE`` (1 PiB) raise InputError; the number is
    read exactly (no float overflow for long digit strings).
    """
    from fractions import Fraction

    shown = repr(text) if len(str(text)) <= 40 else repr(str(text)[:40] + "...")
    if isinstance(text, int) and not isinstance(text, bool):
        n = text
    else:
        m = re.fullmatch(r"\s*([+-]?[0-9]{1,30}(?:\.[0-9]{1,30})?)\s*([A-Za-z]*)\s*", str(text), flags=re.ASCII)
        if not m or m.group(2).lower() not in _UNITS:
            raise InputError(
                f"cannot read {option} {shown} as a size", "", "write a byte count with an IEC suffix, e.g. 64MiB, 512KiB, 1GiB"
            )
        n = int(Fraction(m.group(1)) * _UNITS[m.group(2).lower()])
    if n <= 0:
        raise InputError(f"{option} must be positive, got {shown}", "", "e.g. 64MiB")
    if n > MAX_SIZE:
        raise InputError(f"{option} {shown} is above the maximum of 1 PiB", "", "e.g. 64MiB or 1GiB")
    return n


def format_size(n: int) -> str:
    """Human size with an IEC suffix, exact when the count is a whole number of units."""
    for unit, f in (("GiB", 1 << 30), ("MiB", 1 << 20), ("KiB", 1 << 10)):
        if n >= f:
            v = n / f
            return f"{v:.0f} {unit}" if n % f == 0 else f"{v:.2f} {unit}"
    return f"{n} B"
