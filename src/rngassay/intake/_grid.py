"""Kernels of :mod:`rngassay.intake.views` (the fraction grid, the uniforms of 64-bit words), in their own module
so that loading the views does not load numba."""

from __future__ import annotations

import math

import numpy as np
from numba import njit

_TWO64 = 18446744073709551616.0


@njit(cache=True, nogil=True)
def or_of_scaled(u, scale):
    """(bitwise OR of floor(u_i * scale) as uint64, True) in one pass without temporaries; (0, False) when a
    scaled value is outside [0, 2^64) or NaN, where the caller takes numpy's path."""
    acc = np.uint64(0)
    for i in range(u.size):
        f = math.floor(u[i] * scale)
        if not (f >= 0.0 and f < _TWO64):
            return np.uint64(0), False
        acc |= np.uint64(f)
    return acc, True


@njit(cache=True, nogil=True)
def top53_uniforms(w):
    """u_i = (w_i >> 11) 2^-53 for uint64 words, in one pass without temporaries (every step exact, so the
    values equal numpy's ``(w >> 11).astype(float64) * 2**-53``)."""
    out = np.empty(w.size, dtype=np.float64)
    scale = 2.0**-53
    for i in range(w.size):
        out[i] = float(w[i] >> np.uint64(11)) * scale
    return out
