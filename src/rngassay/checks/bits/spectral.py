"""Spectral (discrete Fourier transform) check on bits.

Null hypothesis: the bits are independent fair coin flips, so no periodic pattern makes the
DFT modulus exceed the 95% threshold more often than in 5% of the frequencies.
Method: NIST SP 800-22 Rev. 1a §2.6 (with the Rev. 1a variance n * 0.95 * 0.05 / 4).
"""

from __future__ import annotations

import math

import numpy as np

from rngassay.checks.registry import CheckSpec, register
from rngassay.checks.result import CheckResult

from ._common import as_packed, erfc_p, need, unpack

SP800_22 = "NIST SP 800-22 Rev. 1a (2010)"

# Largest sequence the planner hands to one FFT (memory: ~24 bytes per bit).
SPECTRAL_MAX_BITS = 1 << 22


def spectral_dft(packed: np.ndarray, n_bits: int | None = None) -> CheckResult:
    """Discrete Fourier transform (spectral) test, SP 800-22 §2.6.

    X = 2 eps - 1; S = DFT(X); of the moduli |S_j|, j = 0 .. n//2 - 1, count N1 below
    T = sqrt(ln(1/0.05) n).  Under H0, N1 is ~ N(0.95 n/2, n 0.95 0.05 / 4); d = (N1 - N0)/sd,
    two-sided p = erfc(|d| / sqrt 2).
    """
    packed, n = as_packed(packed, n_bits)
    need(n, 2, "spectral dft")
    x = unpack(packed, n).astype(np.float64)
    x *= 2.0
    x -= 1.0
    s = np.fft.rfft(x)
    del x
    half = n // 2
    mod = np.abs(s[:half])
    t = math.sqrt(math.log(1.0 / 0.05) * n)
    n0 = 0.95 * n / 2.0
    n1 = int(np.count_nonzero(mod < t))
    d = (n1 - n0) / math.sqrt(n * 0.95 * 0.05 / 4.0)
    return CheckResult(
        name="spectral dft", statistic=d, p_value=erfc_p(d), null="N(0,1), two-sided",
        kind="continuous", n=n, details={"below_threshold": n1, "expected": n0, "threshold": t},
        pooled={"z": d, "below_threshold": n1, "n": n},
    )


def pool_spectral(pooled: list[dict]) -> CheckResult:
    """Spectral check on all the replicates: the peak counts N1 and the lengths n add up.

    Pooled: N1 = sum of the replicates' counts of moduli below their thresholds, n = sum of their n.
    Under the check's own null each N1_i is N(0.95 n_i / 2, n_i 0.95 0.05 / 4) (the Rev. 1a variance)
    and the replicates are independent, so N1 is N(0.95 n / 2, n 0.95 0.05 / 4) with the summed n:
    d = (N1 - 0.95 n / 2) / sqrt(n 0.95 0.05 / 4), two-sided p = erfc(|d| / sqrt 2).  For equal n_i
    this is sum d_i / sqrt(R).  Not the count of one DFT over the joined bits (each replicate has its
    own transform and threshold), but the same law with the pooled mean and variance; the variance
    is the check's own, so its calibration is the single segment's (a relative error in the variance
    carries over unchanged, it does not grow with R).
    """
    n1 = sum(int(p["below_threshold"]) for p in pooled)
    n = sum(int(p["n"]) for p in pooled)
    if n < 2:
        raise ValueError("spectral pooling: no bits")
    n0 = 0.95 * n / 2.0
    d = (n1 - n0) / math.sqrt(n * 0.95 * 0.05 / 4.0)
    return CheckResult(
        name="spectral dft", statistic=d, p_value=erfc_p(d), null="N(0,1), two-sided",
        kind="continuous", n=n, details={"below_threshold": n1, "expected": n0, "replicates": len(pooled)},
    )


register(CheckSpec(
    key="spectral dft", family="bits", title="discrete Fourier transform (spectral) test",
    view="bits", kind="continuous", func=spectral_dft, values_needed=lambda p: int(p["n_bits"]),
    default_params=lambda n: [{"n_bits": min(n, SPECTRAL_MAX_BITS)}] if n >= 1000 else [],
    source=f"{SP800_22} §2.6", pool=pool_spectral,
    max_replicates=4,  # costly per byte: 4 replicates are plenty
    sample="at most 2^22 bits (512 KiB) in each of 4 replicates: one FFT of 2^22 points costs about 0.1 s",
))
