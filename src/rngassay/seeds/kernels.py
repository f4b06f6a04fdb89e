"""Numba and numpy kernels of the seed sweep: anchors, cross-correlation, merging, Hamming distances.

Conventions (the same as :mod:`rngassay.intake.views` for raw bytes): a stream's words are consecutive
8-byte groups read little-endian; its uniforms are ``(w >> 11) * 2**-53``.
"""

from __future__ import annotations

import hashlib

import numpy as np
from numba import njit

from ..intake.formats import parse_format
from ..intake.views import as_uniforms

_U1 = parse_format("u1")

WINDOW = 16  # bytes per overlap window (128 bits)


@njit(cache=True)
def _mix(hi: np.uint64, lo: np.uint64) -> np.uint64:
    # splitmix64's output function (Steele, Lea, Flood 2014) over a fold of the 128-bit window
    z = lo ^ (hi * np.uint64(0x9E3779B97F4A7C15))
    z = (z ^ (z >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
    z = (z ^ (z >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
    return z ^ (z >> np.uint64(31))


@njit(cache=True)
def _anchor_kernel(mat, shift, cap):
    n, B = mat.shape
    total = n * cap
    rows = np.empty(total, np.int32)
    pos = np.empty(total, np.int32)
    his = np.empty(total, np.uint64)
    los = np.empty(total, np.uint64)
    k = 0
    eight = np.uint64(8)
    top = np.uint64(56)
    sh = np.uint64(shift)
    for r in range(n):
        hi = np.uint64(0)
        lo = np.uint64(0)
        cnt = 0
        for i in range(B):
            hi = (hi << eight) | (lo >> top)
            lo = (lo << eight) | np.uint64(mat[r, i])
            if i >= 15 and cnt < cap:
                p = i - 15
                if p == 0 or (_mix(hi, lo) >> sh) == np.uint64(0):
                    rows[k] = r
                    pos[k] = p
                    his[k] = hi
                    los[k] = lo
                    k += 1
                    cnt += 1
    return rows[:k], pos[:k], his[:k], los[:k]


def anchors(mat: np.ndarray, spacing: int, cap: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Content-defined 16-byte windows of each row of ``mat``: ``(row, position, hi, lo)``.

    A window (at any byte position) is kept when the top ``log2(spacing)`` bits of a 64-bit hash of its
    16 bytes are zero -- a choice made by content alone, so a stream and a shifted copy of it keep the same
    windows (the sampling idea of winnowing: Schleimer, Wilkerson, Aiken 2003, SIGMOD). The window at
    position 0 is always kept. At most ``cap`` windows per row (first ones). ``hi``/``lo`` are the 16
    bytes as a big-endian 128-bit integer, so equal windows have equal (hi, lo).
    """
    if spacing < 2 or spacing & (spacing - 1):
        raise ValueError("spacing must be a power of two >= 2")
    if mat.shape[1] < WINDOW:
        e = np.empty(0, np.int32)
        return e, e.copy(), np.empty(0, np.uint64), np.empty(0, np.uint64)
    shift = 64 - (spacing.bit_length() - 1)
    return _anchor_kernel(np.ascontiguousarray(mat, dtype=np.uint8), shift, int(cap))


def uniforms(mat: np.ndarray) -> np.ndarray:
    """Rows of bytes -> rows of float64 uniforms, the battery's own conversion of bytes (intake.views: the top
    53 bits of each little-endian 64-bit word)."""
    mat = np.ascontiguousarray(mat, dtype=np.uint8)
    return as_uniforms(mat.reshape(-1), _U1).reshape(mat.shape[0], -1)


@njit(cache=True)
def _xcorr_kernel(c, L):
    m, n = c.shape
    out = np.empty((m - 1, 2 * L + 1))
    for p in range(m - 1):
        for j in range(2 * L + 1):
            lag = j - L
            s = 0.0
            if lag >= 0:
                for t in range(n - lag):
                    s += c[p, t + lag] * c[p + 1, t]
            else:
                for t in range(n + lag):
                    s += c[p, t] * c[p + 1, t - lag]
            out[p, j] = 12.0 * s / np.sqrt(n - abs(lag))
    return out


def cross_z(mat: np.ndarray, lags: int) -> np.ndarray:
    """z-scores of the lagged cross-products of adjacent rows: shape (rows - 1, 2 * lags + 1).

    Column ``j`` is lag ``l = j - lags``: ``z = 12 * sum_t (a[t + l] - 1/2)(b[t] - 1/2) / sqrt(n - |l|)``
    for rows a (seed i) and b (seed i + 1), with b's index shifted for negative l. Under the null
    (independent uniform streams) the products have mean 0 and variance (1/12)**2 exactly, so each z has
    mean 0 and variance 1 and is approximately N(0, 1) (central limit theorem; common practice).
    """
    if mat.shape[0] < 2:
        return np.empty((0, 2 * lags + 1))
    c = uniforms(mat) - 0.5
    return _xcorr_kernel(np.ascontiguousarray(c), int(lags))


def interleave(mat: np.ndarray) -> np.ndarray:
    """Merge the rows word by word (8-byte words): w0 of row 0, w0 of row 1, ..., w1 of row 0, ..."""
    k, B = mat.shape
    w = np.ascontiguousarray(mat).view("V8")
    return np.ascontiguousarray(w.T).view(np.uint8).reshape(-1)


def hamming(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Hamming distance between corresponding rows of two uint8 matrices."""
    return np.unpackbits(np.bitwise_xor(a, b), axis=1).sum(axis=1, dtype=np.int64)


def digests(mat: np.ndarray) -> np.ndarray:
    """SHA-256 of every row (FIPS 180-4), as an (n, 32) uint8 matrix."""
    out = np.empty((mat.shape[0], 32), dtype=np.uint8)
    for i in range(mat.shape[0]):  # one hashlib call per stream
        out[i] = np.frombuffer(hashlib.sha256(mat[i].tobytes()).digest(), dtype=np.uint8)
    return out
