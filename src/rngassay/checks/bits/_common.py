"""Shared pieces of the bit-level checks: input handling, packed-word kernels, tails.

Internal representation: a bit sequence ``s_0 s_1 ... s_{n-1}`` is held as a ``uint64`` array in
which ``s_j`` is bit ``63 - j % 64`` of word ``j // 64`` ("MSB first", the same order as the packed
``bits`` view, read 8 bytes at a time big-endian).  The arrays made here are zero beyond ``n`` and
carry one extra zero word so kernels may always read ``w[i + 1]``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from numba import njit, types
from numba.extending import intrinsic
from scipy import special

from rngassay.errors import InputError

try:  # the project-wide helper, when present
    from rngassay.stats.tails import clip_p as _stats_clip_p  # type: ignore[attr-defined]
except Exception:  # pragma: no cover - depends on the stats package
    _stats_clip_p = None

TINY = float(np.finfo(np.float64).tiny)  # smallest positive normal float
U64_ALL = np.uint64(0xFFFFFFFFFFFFFFFF)


# --------------------------------------------------------------------------- p-values


def clip_p(p: float) -> float:
    """A p-value in [tiny, 1]: never exactly 0 (underflow), never above 1 (rounding)."""
    if _stats_clip_p is not None:
        return float(_stats_clip_p(p))
    p = float(p)
    if not p > TINY:  # also catches nan -> tiny is wrong for nan, handled below
        if math.isnan(p):
            return p
        return TINY
    return min(p, 1.0)


def erfc_p(z: float) -> float:
    """Two-sided normal tail ``erfc(|z| / sqrt 2)``."""
    return clip_p(special.erfc(abs(z) / math.sqrt(2.0)))


def igamc(a: float, x: float) -> float:
    """Regularised upper incomplete gamma Q(a, x) = P(chi2_{2a} >= 2x)."""
    return clip_p(special.gammaincc(a, max(x, 0.0)))


def chi2_counts(counts: np.ndarray, probs: np.ndarray) -> tuple[float, np.ndarray]:
    """Pearson statistic of class counts against class probabilities (expected = N * p)."""
    counts = np.asarray(counts, dtype=np.float64)
    expected = counts.sum() * np.asarray(probs, dtype=np.float64)
    return float(np.sum((counts - expected) ** 2 / expected)), expected


# --------------------------------------------------------------------------- input


def bits_from_string(s: str) -> tuple[np.ndarray, int]:
    """``"1011..."`` (first bit first; spaces and underscores ignored) -> ``(packed, n_bits)``."""
    clean = "".join(ch for ch in s if ch not in " _\n\t")
    if any(ch not in "01" for ch in clean):
        raise InputError(f"not a bit string: {s[:40]!r}", hint="use only the characters 0 and 1")
    arr = np.frombuffer(clean.encode("ascii"), dtype=np.uint8) - ord("0")
    return np.packbits(arr), len(clean)


def as_packed(packed: np.ndarray, n_bits: int | None) -> tuple[np.ndarray, int]:
    """Validate the ``bits`` view input and return ``(uint8 array, n_bits)``."""
    arr = np.ascontiguousarray(packed)
    if arr.dtype != np.uint8:
        raise InputError(f"bit checks take packed uint8 data, got dtype {arr.dtype}",
                         hint="pass np.packbits(...) output or the 'bits' view")
    arr = arr.reshape(-1)
    if n_bits is None:
        n_bits = 8 * arr.size
    n_bits = int(n_bits)
    if n_bits < 0 or n_bits > 8 * arr.size:
        raise InputError(f"n_bits={n_bits} but the array holds {8 * arr.size} bits")
    return arr, n_bits


def need(n_bits: int, minimum: int, check: str, hint: str = "") -> None:
    if n_bits < minimum:
        raise InputError(f"{check} needs at least {minimum} bits, got {n_bits}", hint=hint)


def to_u64(packed: np.ndarray, n_bits: int) -> np.ndarray:
    """Packed MSB-first bytes -> MSB-first uint64 words, zero beyond ``n_bits``, plus a zero word."""
    nbytes = (n_bits + 7) // 8
    nwords = (n_bits + 63) // 64
    buf = np.zeros(8 * (nwords + 1), dtype=np.uint8)
    buf[:nbytes] = packed[:nbytes]
    if n_bits % 8:
        buf[nbytes - 1] &= np.uint8((0xFF << (8 - n_bits % 8)) & 0xFF)
    return buf.view(">u8").astype(np.uint64)


def unpack(packed: np.ndarray, n_bits: int) -> np.ndarray:
    """One byte per bit (only for inherently small inputs)."""
    return np.unpackbits(packed, count=n_bits)


def count_ones(packed: np.ndarray, n_bits: int) -> int:
    """Number of ones among the first ``n_bits`` bits."""
    full = n_bits // 8
    k8 = full // 8 * 8
    total = int(np.bitwise_count(packed[:k8].view(np.uint64)).sum(dtype=np.int64)) if k8 else 0
    if full > k8:
        total += int(np.bitwise_count(packed[k8:full]).sum(dtype=np.int64))
    if n_bits % 8:
        last = int(packed[full]) >> (8 - n_bits % 8)
        total += bin(last).count("1")
    return total


# --------------------------------------------------------------------------- numba bit intrinsics


@intrinsic
def popcount64(typingctx, x):
    """Number of set bits of a uint64 (LLVM ctpop)."""
    if not isinstance(x, types.Integer):
        return None
    sig = types.uint64(types.uint64)

    def codegen(context, builder, signature, args):
        return builder.ctpop(args[0])

    return sig, codegen


@intrinsic
def clz64(typingctx, x):
    """Leading zeros of a uint64 (64 for 0)."""
    if not isinstance(x, types.Integer):
        return None
    sig = types.uint64(types.uint64)

    def codegen(context, builder, signature, args):
        from llvmlite import ir

        return builder.ctlz(args[0], ir.Constant(ir.IntType(1), 0))

    return sig, codegen


@intrinsic
def ctz64(typingctx, x):
    """Trailing zeros of a uint64 (64 for 0)."""
    if not isinstance(x, types.Integer):
        return None
    sig = types.uint64(types.uint64)

    def codegen(context, builder, signature, args):
        from llvmlite import ir

        return builder.cttz(args[0], ir.Constant(ir.IntType(1), 0))

    return sig, codegen


@njit(cache=True)
def range_ones(w, a, b):
    """Number of ones at positions [a, b) of an MSB-first word array."""
    if b <= a:
        return 0
    wa = a >> 6
    wb = (b - 1) >> 6
    ha = a & 63
    hb = (b - 1) & 63
    allb = np.uint64(0xFFFFFFFFFFFFFFFF)
    if wa == wb:
        m = (allb >> np.uint64(ha)) & (allb << np.uint64(63 - hb))
        return int(popcount64(w[wa] & m))
    total = int(popcount64(w[wa] & (allb >> np.uint64(ha))))
    for i in range(wa + 1, wb):
        total += int(popcount64(w[i]))
    total += int(popcount64(w[wb] & (allb << np.uint64(63 - hb))))
    return total


@njit(cache=True)
def block_ones(w, start, M, N):
    """Ones in each of N consecutive blocks of M bits starting at ``start``."""
    out = np.empty(N, dtype=np.int64)
    for i in range(N):
        out[i] = range_ones(w, start + i * M, start + (i + 1) * M)
    return out


@njit(cache=True)
def byte_histogram(packed, nbytes):
    """Counts of each byte value among the first ``nbytes`` bytes."""
    h = np.zeros(256, dtype=np.int64)
    for i in range(nbytes):
        h[packed[i]] += 1
    return h


# --------------------------------------------------------------------------- word lanes


@njit(cache=True)
def _lanes_kernel(words, out):
    n = words.size
    nfull = n // 64
    for b in range(nfull + (1 if n % 64 else 0)):
        base = b * 64
        cnt = min(64, n - base)
        for k in range(32):
            acc = np.uint64(0)
            for j in range(cnt):
                acc = (acc << np.uint64(1)) | np.uint64((words[base + j] >> np.uint32(k)) & np.uint32(1))
            if cnt < 64:
                acc = acc << np.uint64(64 - cnt)
            out[k, b] = acc


def lanes_u64(words: np.ndarray, lanes: Sequence[int] | None = None) -> np.ndarray:
    """uint32 words -> array (n_lanes, n_words/64 + 1) of MSB-first uint64 bit sequences.

    Lane ``k`` is the sequence of bit ``k`` (bit 0 = least significant) of the successive words.
    """
    words = np.ascontiguousarray(words, dtype=np.uint32).reshape(-1)
    nw = (words.size + 63) // 64
    out = np.zeros((32, nw + 1), dtype=np.uint64)
    _lanes_kernel(words, out)
    if lanes is None:
        return out
    return out[np.asarray(list(lanes), dtype=np.int64)]


def as_words32(words: np.ndarray) -> np.ndarray:
    arr = np.ascontiguousarray(words).reshape(-1)
    if arr.dtype != np.uint32:
        raise InputError(f"lane checks take uint32 words, got dtype {arr.dtype}",
                         hint="use the 'words32' view")
    return arr


def check_lanes(lanes: Sequence[int] | None) -> list[int]:
    if lanes is None:
        return list(range(32))
    out = [int(k) for k in lanes]
    if not out or any(k < 0 or k > 31 for k in out) or len(set(out)) != len(out):
        raise InputError(f"lanes must be distinct integers in 0..31, got {list(lanes)!r}")
    return out
