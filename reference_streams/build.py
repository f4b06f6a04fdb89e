"""Build the reference bit streams: the first 10^6 bits of e, pi, sqrt(2), sqrt(3).

Each constant is written in binary with its integer part included (e = 10.1011..., pi = 11.0010...,
sqrt 2 = 1.0110..., sqrt 3 = 1.1011...), the first 1,000,000 bits of that expansion, packed most
significant bit first (``np.packbits`` order) into 125,000 bytes.  These are the inputs of the
worked examples in NIST SP 800-22 Rev. 1a, Appendix B.

Usage:  python reference_streams/build.py [--check]
  (no option)  compute the streams with mpmath, write <name>.bin and README.md beside this script
  --check      recompute and compare with the committed files (exit 1 on any difference)
"""

from __future__ import annotations

import hashlib
import sys
from pathlib import Path

import mpmath

N_BITS = 1_000_000
GUARD = 128  # extra bits of working precision
HERE = Path(__file__).resolve().parent

# name -> (mpmath expression, number of integer bits)
CONSTANTS = {
    "e": (lambda: mpmath.e, 2),
    "pi": (lambda: mpmath.pi, 2),
    "sqrt2": (lambda: mpmath.sqrt(2), 1),
    "sqrt3": (lambda: mpmath.sqrt(3), 1),
}


def constant_bits(name: str, n_bits: int = N_BITS) -> bytes:
    """First ``n_bits`` bits of the binary expansion of the constant, packed MSB first."""
    make, int_bits = CONSTANTS[name]
    with mpmath.workprec(n_bits + GUARD):
        x = +make()
        scaled = x * mpmath.mpf(2) ** (n_bits - int_bits)
        value = int(mpmath.floor(scaled))
        frac = scaled - value
        # The floor must not be decided by rounding error: the discarded tail must be
        # clear of 0 and 1 by far more than the working precision's error.
        margin = mpmath.mpf(2) ** (-GUARD // 2)
        if not (margin < frac < 1 - margin):
            raise RuntimeError(f"{name}: binary expansion too close to a rounding boundary")
    if value.bit_length() != n_bits:
        raise RuntimeError(f"{name}: expected {n_bits} bits, got {value.bit_length()}")
    return value.to_bytes((n_bits + 7) // 8, "big")


README_HEAD = """# Reference streams

Binary expansions of four mathematical constants, used by the tests of the bit-level checks
(`tests/checks/bits/`) to reproduce the worked figures of NIST SP 800-22 Rev. 1a, Appendix B
(the figures are listed in the project's shared reference-figures file, check-values.md §2).

| file | constant | first bits | bits | bytes | SHA-256 |
|---|---|---|---|---|---|
{rows}

## Format

Each file holds the first 1,000,000 bits of the binary expansion of the constant, **integer part
included** (e = 10.1011…, π = 11.0010…, √2 = 1.0110…, √3 = 1.1011…), packed 8 bits per byte with the
first bit in the most significant position of the first byte (the order of `numpy.packbits` and of the
`bits` view of rngassay). 1,000,000 is a multiple of 8, so there is no padding.

Load with `np.fromfile("reference_streams/e.bin", dtype=np.uint8)`.

## Provenance and rebuilding

Computed by `reference_streams/build.py` with mpmath {mpmath_version} at {prec} bits of working precision
(the bits wanted plus {guard} guard bits): the constant is scaled by 2^(10^6 − integer bits) and
floored; the script refuses to write a file if the discarded tail lies within 2^-{half} of a rounding
boundary. Rebuild (a few seconds to a minute each):

    python reference_streams/build.py          # rewrites *.bin and this README
    python reference_streams/build.py --check  # recomputes and compares with the committed files
"""


def main(argv: list[str]) -> int:
    check = "--check" in argv
    rows = []
    bad = 0
    for name in CONSTANTS:
        data = constant_bits(name)
        digest = hashlib.sha256(data).hexdigest()
        path = HERE / f"{name}.bin"
        if check:
            ok = path.exists() and path.read_bytes() == data
            print(f"{name}: {'ok' if ok else 'DIFFERS'} {digest}")
            bad += not ok
        else:
            path.write_bytes(data)
            print(f"wrote {path.name} sha256={digest}")
        first = "".join(f"{b:08b}" for b in data[:3])
        label = {"e": "e", "pi": "π", "sqrt2": "√2", "sqrt3": "√3"}[name]
        rows.append(f"| `{name}.bin` | {label} | `{first}…` | {N_BITS:,} | {len(data):,} | `{digest}` |")
    if not check:
        text = README_HEAD.format(
            rows="\n".join(rows),
            mpmath_version=mpmath.__version__,
            prec=N_BITS + GUARD,
            guard=GUARD,
            half=GUARD // 2,
        )
        (HERE / "README.md").write_text(text, encoding="utf-8")
        print("wrote README.md")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
