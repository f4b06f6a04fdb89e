"""Maurer's universal statistical check on bits.

Null hypothesis: the bits are independent fair coin flips, so the sequence cannot be compressed:
the mean log2 distance between repeats of L-bit blocks matches its value for a uniform source.
Method: U. M. Maurer (1992), "A universal statistical test for random bit generators",
J. Cryptology 5:89-105; as specified in NIST SP 800-22 Rev. 1a §2.9.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from rngassay.checks.registry import CheckSpec, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError

from ._common import as_packed, erfc_p, to_u64

SP800_22 = "NIST SP 800-22 Rev. 1a (2010)"

# SP 800-22 §2.9.4 table (Maurer 1992): expected value and variance of log2(distance) for L = 1..16.
# Re-derived in tests/checks/bits/test_universal.py from the geometric distance law.
EXPECTED = (0.0, 0.7326495, 1.5374383, 2.4016068, 3.3112247, 4.2534266, 5.2177052, 6.1962507,
            7.1836656, 8.1764248, 9.1723243, 10.170032, 11.168765, 12.168070, 13.167693,
            14.167488, 15.167379)
VARIANCE = (0.0, 0.690, 1.338, 1.901, 2.358, 2.705, 2.954, 3.125, 3.238, 3.311, 3.356, 3.384,
            3.401, 3.410, 3.416, 3.419, 3.421)


@njit(cache=True)
def _universal_sum(w, L, Q, K):
    last = np.zeros(1 << L, dtype=np.int64)
    sh = np.uint64(64 - L)
    for i in range(1, Q + 1):
        p = (i - 1) * L
        j = p >> 6
        b = p & 63
        v = w[j] if b == 0 else (w[j] << np.uint64(b)) | (w[j + 1] >> np.uint64(64 - b))
        last[int(v >> sh)] = i
    total = 0.0
    for i in range(Q + 1, Q + K + 1):
        p = (i - 1) * L
        j = p >> 6
        b = p & 63
        v = w[j] if b == 0 else (w[j] << np.uint64(b)) | (w[j + 1] >> np.uint64(64 - b))
        k = int(v >> sh)
        total += math.log2(i - last[k])
        last[k] = i
    return total


def universal_maurer(packed: np.ndarray, n_bits: int | None = None, L: int = 7,
                     Q: int | None = None) -> CheckResult:
    """Maurer's universal statistical test, SP 800-22 §2.9.

    The sequence is cut into L-bit blocks: Q initialisation blocks, then K = n // L - Q test
    blocks.  f_n = mean log2(distance to the previous occurrence of the same block).
    Under H0, f_n ~ N(E_L, c^2 Var_L / K) with c = 0.7 - 0.8/L + (4 + 32/L) K^(-3/L) / 15;
    two-sided p = erfc(|f_n - E_L| / (sqrt 2 sigma)).  Q defaults to 10 * 2^L.
    """
    packed, n = as_packed(packed, n_bits)
    L = int(L)
    if not 1 <= L <= 16:
        raise InputError(f"universal maurer: L must be in 1..16, got {L}")
    Q = 10 * 2**L if Q is None else int(Q)
    K = n // L - Q
    if Q < 1 or K < 1:
        raise InputError(f"universal maurer: L={L}, Q={Q} needs more than {(Q + 1) * L} bits, have {n}")
    total = _universal_sum(to_u64(packed, (Q + K) * L), L, Q, K)
    fn = total / K
    c = 0.7 - 0.8 / L + (4.0 + 32.0 / L) * K ** (-3.0 / L) / 15.0
    sigma = c * math.sqrt(VARIANCE[L] / K)
    z = (fn - EXPECTED[L]) / sigma
    return CheckResult(
        name="universal maurer", statistic=fn, p_value=erfc_p(z), null=f"N({EXPECTED[L]}, {sigma:.4g}^2)",
        kind="continuous", n=(Q + K) * L, details={"L": L, "Q": Q, "K": K, "z": z},
        pooled={"z": z, "total": total, "K": K, "L": L, "var": (K * sigma) ** 2, "n": (Q + K) * L},
    )


def pool_universal(pooled: list[dict]) -> CheckResult:
    """Maurer's statistic over all the replicates' test blocks: the sums of log2 distances add up.

    Under the check's own null each replicate's sum T_i = K_i f_i is N(K_i E_L, (K_i sigma_i)^2), with
    sigma_i = c(K_i) sqrt(Var_L / K_i) (c corrects for the dependence between a segment's distances);
    the replicates are independent, so z = sum (T_i - K_i E_L) / sqrt(sum (K_i sigma_i)^2) is N(0,1)
    (for equal K_i it is sum z_i / sqrt(R)); two-sided p.  The statistic shown is f = sum T_i / sum K_i.
    Each replicate keeps its own Q initialisation blocks, so this is not literally the statistic of the
    joined bits (which would initialise once), but the linear statistic of all the test blocks.
    """
    L = int(pooled[0]["L"])
    if any(int(p["L"]) != L for p in pooled):
        raise ValueError("universal maurer replicates with different L cannot be pooled")
    total = math.fsum(float(p["total"]) for p in pooled)
    K = sum(int(p["K"]) for p in pooled)
    var = math.fsum(float(p["var"]) for p in pooled)
    if K < 1 or not var > 0.0:
        raise ValueError("universal maurer pooling: no test blocks")
    z = (total - K * EXPECTED[L]) / math.sqrt(var)
    sigma = math.sqrt(var) / K
    return CheckResult(
        name="universal maurer", statistic=total / K, p_value=erfc_p(z), null=f"N({EXPECTED[L]}, {sigma:.4g}^2)",
        kind="continuous", n=sum(int(p["n"]) for p in pooled),
        details={"L": L, "K": K, "z": z, "replicates": len(pooled)},
    )


def _universal_defaults(n: int) -> list[dict]:
    # SP 800-22 §2.9.7: n >= (Q + K) L with Q = 10 * 2^L, K = 1000 * 2^L, L = 6..16;
    # below L = 6 the same rule with smaller L (the standard's worked example uses L = 2).
    for L in range(16, 1, -1):
        Q = 10 * 2**L
        if 1010 * 2**L * L <= n:
            K = n // L - Q
            return [{"n_bits": (Q + K) * L, "L": L, "Q": Q}]
    return []


register(CheckSpec(
    key="universal maurer", family="bits", title="Maurer's universal statistical test", view="bits",
    sized=("L", "Q"),  # block length and initialisation blocks the published table gives for the data
    kind="continuous", func=universal_maurer, values_needed=lambda p: int(p["n_bits"]),
    default_params=_universal_defaults, source=f"Maurer (1992); {SP800_22} §2.9", pool=pool_universal,
))
