"""Views: the arrays checks consume, made from decoded stream values.

ALL bit-order and word-to-float conventions of rngassay live in this module.

Input kinds (see :mod:`rngassay.intake.formats`): raw bytes (``u1``), unsigned words (``<u2 >u2 <u4 >u4
<u8 >u8``), uniform floats (``<f4 <f8``, or text floats) and categorical integers (text with ``--range``).

``bytes``
    Raw bytes in stream order (byte and word inputs only).
``words32`` / ``words64``
    Unsigned words. From raw bytes: consecutive 4 (8) bytes read **little-endian**, so a generator
    that writes its words little-endian is seen word for word. From word inputs: the words as
    declared by the format's byte order; narrower words are combined little-end first (two ``u2``
    make one ``u4`` as ``w0 | w1 << 16``; two ``u4`` make one ``u8`` as ``w0 | w1 << 32``, numpy's
    own convention), wider ones are split low half first.
``bits``
    Packed bits as a uint8 array plus a bit count, **most significant bit first** within each byte
    (``np.unpackbits`` order). From raw bytes: bytes in stream order. From words: each word's bits
    from its most significant to its least, words in stream order — so the bit sequence of a word
    input does not depend on its byte order.
``uniforms``
    float64 in [0, 1). Raw bytes become ``<u8`` words and then ``(w >> 11) * 2**-53`` (53-bit
    resolution: numpy's ``Generator.random`` convention). ``u8`` words the same way; ``u4`` words
    ``w * 2**-32`` (32-bit resolution), ``u2`` words ``w * 2**-16``. Float inputs keep their own
    values and resolution (``<f4``: 24 bits). Text integers have no uniform view.
``integers``
    Unbiased integers in [0, k). Text integers with ``--range LO:HI``: ``value - LO`` with
    ``k = HI - LO + 1`` fixed by the declaration. Byte and word inputs: 32-bit words; for k a power
    of two the top log2(k) bits, otherwise ``w mod k`` after rejecting ``w >= k * floor(2**32 / k)``
    (exactly unbiased; the count of rejected words is small and data-dependent). Float inputs:
    ``floor(u * k)`` (biased by at most k / 2**resolution per outcome).
"""

from __future__ import annotations

import numpy as np

from .formats import Format

VIEW_NAMES = ("bytes", "words32", "words64", "bits", "uniforms", "integers")


def available_views(fmt: Format) -> tuple[str, ...]:
    """Views that make sense for an input format."""
    if fmt.kind in ("bytes", "words"):
        return VIEW_NAMES
    if fmt.kind in ("floats", "text-floats"):
        return ("uniforms", "integers")
    return ("integers",)


def input_bytes_per_value(fmt: Format, view: str) -> float:
    """Stream bytes (binary) or values (text) consumed per view value. Bits: per bit."""
    size = fmt.itemsize
    if view == "bytes":
        return 1.0
    if view == "words32":
        return 4.0
    if view == "words64":
        return 8.0
    if view == "bits":
        return 1.0 / 8.0
    if view == "uniforms":
        if fmt.kind == "bytes":
            return 8.0
        return float(size) if size else 1.0
    if view == "integers":
        if fmt.kind in ("bytes", "words"):
            return 4.0  # before rejection
        return float(size) if size else 1.0
    raise ValueError(f"unknown view {view!r}")


def uniform_resolution_bits(fmt: Format) -> int:
    """Resolution in bits of the uniforms view (the grid 2**-bits the values claim to live on)."""
    if fmt.kind == "bytes" or (fmt.kind == "words" and fmt.itemsize == 8):
        return 53
    if fmt.kind == "words":
        return 8 * fmt.itemsize
    if fmt.name == "<f4":
        return 24
    return 53


def as_bytes(vals: np.ndarray, fmt: Format) -> np.ndarray:
    if fmt.kind not in ("bytes", "words"):
        raise ValueError(f"no byte view for {fmt.describe()}")
    return np.ascontiguousarray(vals).view(np.uint8)


def _trim(a: np.ndarray, multiple: int) -> np.ndarray:
    return a[: a.size - a.size % multiple]


def as_words32(vals: np.ndarray, fmt: Format) -> np.ndarray:
    if fmt.kind == "bytes":
        return _trim(np.ascontiguousarray(vals), 4).view("<u4").astype(np.uint32, copy=False)
    if fmt.kind != "words":
        raise ValueError(f"no word view for {fmt.describe()}")
    size = fmt.itemsize
    if size == 4:
        return vals.astype(np.uint32, copy=False)
    if size == 2:
        w = _trim(vals.astype(np.uint32), 2)
        return w[0::2] | (w[1::2] << np.uint32(16))
    w = vals.astype(np.uint64, copy=False)  # size 8: split, low half first
    out = np.empty(w.size * 2, dtype=np.uint32)
    out[0::2] = (w & np.uint64(0xFFFFFFFF)).astype(np.uint32)
    out[1::2] = (w >> np.uint64(32)).astype(np.uint32)
    return out


def as_words64(vals: np.ndarray, fmt: Format) -> np.ndarray:
    if fmt.kind == "bytes":
        return _trim(np.ascontiguousarray(vals), 8).view("<u8").astype(np.uint64, copy=False)
    if fmt.kind != "words":
        raise ValueError(f"no word view for {fmt.describe()}")
    if fmt.itemsize == 8:
        return vals.astype(np.uint64, copy=False)
    w32 = _trim(as_words32(vals, fmt), 2).astype(np.uint64)
    return w32[0::2] | (w32[1::2] << np.uint64(32))


def as_bits(vals: np.ndarray, fmt: Format) -> tuple[np.ndarray, int]:
    """(packed uint8 MSB-first, number of bits)."""
    if fmt.kind == "bytes":
        b = np.ascontiguousarray(vals).view(np.uint8)
    elif fmt.kind == "words":
        b = np.ascontiguousarray(vals.astype(f">u{fmt.itemsize}", copy=False)).view(np.uint8)
    else:
        raise ValueError(f"no bit view for {fmt.describe()}")
    return b, int(b.size) * 8


_2_53 = 2.0**-53


def as_uniforms(vals: np.ndarray, fmt: Format) -> np.ndarray:
    if fmt.kind in ("floats", "text-floats"):
        return vals.astype(np.float64, copy=False)
    if fmt.kind == "bytes" or (fmt.kind == "words" and fmt.itemsize == 8):
        w = as_words64(vals, fmt)
        return (w >> np.uint64(11)).astype(np.float64) * _2_53
    if fmt.kind == "words":
        return vals.astype(np.float64) * (2.0 ** -(8 * fmt.itemsize))
    raise ValueError(f"no uniform view for {fmt.describe()}: categorical outcomes")


def as_integers(vals: np.ndarray, fmt: Format, k: int | None = None) -> tuple[np.ndarray, int]:
    """(outcomes in [0, k), k). For text integers k comes from --range and must match if given."""
    if fmt.kind == "text-integers":
        assert fmt.lo is not None and fmt.hi is not None
        kk = fmt.hi - fmt.lo + 1
        if k is not None and k != kk:
            raise ValueError(f"outcomes are declared in {kk} categories, not {k}")
        return (vals - fmt.lo).astype(np.int64), kk
    if k is None or k < 2:
        raise ValueError("k >= 2 is needed for an integer view")
    if fmt.kind in ("floats", "text-floats"):
        return np.minimum(np.floor(vals * k), k - 1).astype(np.int64), k
    if k > 2**32:
        raise ValueError("k must be at most 2**32")
    w = as_words32(vals, fmt)
    if k & (k - 1) == 0:
        shift = 32 - (k.bit_length() - 1)
        return (w.astype(np.uint64) >> np.uint64(shift)).astype(np.int64) if shift < 32 else np.zeros(w.size, np.int64), k
    limit = (2**32 // k) * k
    w = w[w < limit] if limit < 2**32 else w
    return (w % np.uint32(k)).astype(np.int64), k
