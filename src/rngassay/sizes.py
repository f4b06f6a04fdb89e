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


def parse_size(text: str | int, option: str = "--budget") -> int:
    """Parse '64MiB', '1 GiB', '4096', '1.5KiB' (IEC: K, M, G, T also mean KiB, MiB...; KB, MB are decimal).

    Zero, negative and unparsable sizes raise InputError.
    """
    if isinstance(text, int) and not isinstance(text, bool):
        n = text
    else:
        m = re.fullmatch(r"\s*([+-]?\d+(?:\.\d+)?)\s*([A-Za-z]*)\s*", str(text))
        if not m or m.group(2).lower() not in _UNITS:
            raise InputError(
                f"cannot read {option} {text!r} as a size", "", "write a byte count with an IEC suffix, e.g. 64MiB, 512KiB, 1GiB"
            )
        n = int(float(m.group(1)) * _UNITS[m.group(2).lower()])
    if n <= 0:
        raise InputError(f"{option} must be positive, got {text!r}", "", "e.g. 64MiB")
    return n


def format_size(n: int) -> str:
    """Human size with an IEC suffix, exact when the count is a whole number of units."""
    for unit, f in (("GiB", 1 << 30), ("MiB", 1 << 20), ("KiB", 1 << 10)):
        if n >= f:
            v = n / f
            return f"{v:.0f} {unit}" if n % f == 0 else f"{v:.2f} {unit}"
    return f"{n} B"
