"""Kernels of :mod:`rngassay.checks.findings` (numba, one pass each over a bounded sample).

Each kernel is a plain loop over an array; none allocates more than its output.
"""

from __future__ import annotations

import numpy as np
from numba import njit


@njit(cache=True, nogil=True)
def lane_ones(w, width):
    """Ones per bit lane: ``out[k] = #{i : bit k of w[i] is 1}`` (bit 0 = least significant)."""
    out = np.zeros(width, dtype=np.int64)
    for i in range(w.size):
        v = w[i]
        for k in range(width):
            out[k] += (v >> np.uint64(k)) & np.uint64(1)
    return out


@njit(cache=True, nogil=True)
def tail_period(x, max_d, min_match):
    """The smallest ``d`` in ``1..max_d`` at which the last ``min_match`` values of ``x`` equal the values
    ``d`` before them, and how far back that copy reaches: ``(d, s)`` with ``x[i] == x[i + d]`` for every
    ``s <= i < n - d`` (and ``s = 0`` or ``x[s - 1] != x[s - 1 + d]``); ``(0, 0)`` when there is none.

    Every equality claimed is compared value for value here (no hashing), so a returned period is a fact of
    the array. Cost: about one comparison per distance tried on data without repeats.
    """
    n = x.size
    for d in range(1, max_d + 1):
        if n - d < min_match:
            break
        k = 0
        while k < min_match and x[n - 1 - k] == x[n - 1 - k - d]:
            k += 1
        if k == min_match:
            j = n - 1 - k
            while j - d >= 0 and x[j] == x[j - d]:
                j -= 1
            return d, j - d + 1
    return 0, 0


@njit(cache=True, nogil=True)
def lane_period(w, lane, max_d, min_match):
    """:func:`tail_period` of bit ``lane`` of the words ``w`` (without making the bit array)."""
    n = w.size
    sh = np.uint64(lane)
    one = np.uint64(1)
    for d in range(1, max_d + 1):
        if n - d < min_match:
            break
        k = 0
        while k < min_match and ((w[n - 1 - k] >> sh) & one) == ((w[n - 1 - k - d] >> sh) & one):
            k += 1
        if k == min_match:
            j = n - 1 - k
            while j - d >= 0 and ((w[j] >> sh) & one) == ((w[j - d] >> sh) & one):
                j -= 1
            return d, j - d + 1
    return 0, 0


@njit(cache=True, nogil=True)
def equal_at_lags(x, max_lag):
    """``out[L - 1] = #{i >= L : x[i] == x[i - L]}`` for lags ``L = 1..max_lag``."""
    out = np.zeros(max_lag, dtype=np.int64)
    n = x.size
    for L in range(1, max_lag + 1):
        c = 0
        for i in range(L, n):
            if x[i] == x[i - L]:
                c += 1
        out[L - 1] = c
    return out


@njit(cache=True, nogil=True)
def three_term(x, max_lag, mask):
    """Counts of the three-term relations between ``x[i]``, ``x[i - j]`` and ``x[i - k]`` (1 <= j < k <=
    ``max_lag``), arithmetic modulo ``mask + 1`` (a power of two), over ``i >= k``:

    ``out[j - 1, k - 1, 0]``: ``x[i] - (x[i-j] + x[i-k])`` in {-1, 0, 1} (additive lagged Fibonacci, with a carry)
    ``out[j - 1, k - 1, 1]``: ``x[i] - (x[i-j] - x[i-k])`` in {-1, 0, 1} (subtractive)
    ``out[j - 1, k - 1, 2]``: ``x[i] - (x[i-k] - x[i-j])`` in {-1, 0, 1} (subtractive, the other order)
    ``out[j - 1, k - 1, 3]``: ``x[i] == x[i-j] ^ x[i-k]`` (exclusive or)
    """
    out = np.zeros((max_lag, max_lag, 4), dtype=np.int64)
    n = x.size
    one = np.uint64(1)
    for k in range(2, max_lag + 1):
        for j in range(1, k):
            c0 = 0
            c1 = 0
            c2 = 0
            c3 = 0
            for i in range(k, n):
                a = x[i]
                b = x[i - j]
                c = x[i - k]
                e = (a - b - c + one) & mask
                if e <= np.uint64(2):
                    c0 += 1
                e = (a - b + c + one) & mask
                if e <= np.uint64(2):
                    c1 += 1
                e = (a - c + b + one) & mask
                if e <= np.uint64(2):
                    c2 += 1
                if a == (b ^ c):
                    c3 += 1
            out[j - 1, k - 1, 0] = c0
            out[j - 1, k - 1, 1] = c1
            out[j - 1, k - 1, 2] = c2
            out[j - 1, k - 1, 3] = c3
    return out
