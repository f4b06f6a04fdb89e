"""Run checks on bits: runs of bits (transitions) and the longest run of ones in a block.

Null hypothesis: the bits are independent fair coin flips.  Methods: NIST SP 800-22 Rev. 1a
§2.3 (runs) and §2.4 (longest run of ones in a block).
"""

from __future__ import annotations

import functools
import math
from collections.abc import Sequence

import numpy as np
from numba import njit

from rngassay.checks.lawcache import kept
from rngassay.checks.registry import CheckSpec, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError

from ._common import (
    as_packed, byte_histogram, chi2_counts, clz64, count_ones, ctz64, erfc_p, igamc, need, popcount64, to_u64,
)
from .frequency import pool_class_counts

SP800_22 = "NIST SP 800-22 Rev. 1a (2010)"


@njit(cache=True)
def _transitions(w, n):
    """Number of t in [0, n-2] with s_t != s_{t+1} (word-parallel: x ^ (x << 1))."""
    if n < 2:
        return 0
    last = n - 2
    lw = last >> 6
    allb = np.uint64(0xFFFFFFFFFFFFFFFF)
    total = 0
    for i in range(lw + 1):
        x = w[i]
        y = x ^ ((x << np.uint64(1)) | (w[i + 1] >> np.uint64(63)))
        if i == lw:
            y &= allb << np.uint64(63 - (last & 63))
        total += int(popcount64(y))
    return total


def runs_of_bits(packed: np.ndarray, n_bits: int | None = None) -> CheckResult:
    """Runs test, SP 800-22 §2.3.

    H0: the number of runs V (maximal blocks of equal bits) of a fair-coin sequence with
    proportion of ones pi is approximately N(2 n pi (1 - pi), 8 n pi^2 (1 - pi)^2).
    The standard's prerequisite |pi - 1/2| < 2/sqrt(n) is kept: when it fails the runs statistic is
    not computed and the p-value reported is the monobit one (< 6.4e-5), flagged in ``details``.
    """
    packed, n = as_packed(packed, n_bits)
    need(n, 2, "runs of bits")
    ones = count_ones(packed, n)
    pi = ones / n
    if abs(pi - 0.5) >= 2.0 / math.sqrt(n):
        z = abs(2 * ones - n) / math.sqrt(n)
        # no pooled sums: a round with such a replicate is graded on the replicates' p-values (here the
        # monobit one), which keeps the evidence of a biased stream (under H0 this happens to 6e-5 of
        # replicates)
        return CheckResult(
            name="runs of bits", statistic=float("nan"), p_value=erfc_p(z), null="N(0,1) (monobit prerequisite)",
            kind="continuous", n=n, details={"prerequisite_failed": True, "ones": ones},
        )
    v = _transitions(to_u64(packed, n), n) + 1
    num = abs(v - 2.0 * n * pi * (1.0 - pi))
    den = 2.0 * math.sqrt(2.0 * n) * pi * (1.0 - pi)
    z = num / den * math.sqrt(2.0)  # erfc(num/den) = erfc(z / sqrt 2)
    return CheckResult(
        name="runs of bits", statistic=float(v), p_value=erfc_p(z), null="normal approximation",
        kind="continuous", n=n, details={"runs": int(v), "ones": ones, "z": z},
        pooled={"runs": int(v), "ones": int(ones), "n": n},
    )


def runs_moments(ones: int, n: int) -> tuple[float, float]:
    """Exact mean and variance of the number of runs of a random arrangement of ``ones`` ones and
    n - ones zeros (Wald & Wolfowitz 1940, Ann. Math. Statist. 11:147-162; formula from memory,
    checked against complete enumeration in the tests): with a = ones, b = n - ones,
    E = 2ab/n + 1, Var = 2ab(2ab - n) / (n^2 (n - 1)).
    """
    a, b = int(ones), int(n) - int(ones)
    if n < 2:
        return float(n), 0.0
    ab2 = 2.0 * a * b
    return ab2 / n + 1.0, ab2 * (ab2 - n) / (float(n) * n * (n - 1))


def pool_runs(pooled: list[dict]) -> CheckResult:
    """Runs test on all the replicates' bits: the runs counts V_i and the ones counts add up.

    Given each replicate's number of ones, V_i has the exact mean and variance of
    :func:`runs_moments` (the runs test is conditional on the proportion of ones, as in §2.3), and the
    replicates are independent, so z = sum (V_i - E_i) / sqrt(sum Var_i) is asymptotically N(0,1);
    two-sided p = erfc(|z| / sqrt 2).  This is the runs statistic of the joined segments except for the
    R - 1 pairs of bits across segment ends, which no replicate saw.  (The single-segment statistic
    centres V at 2 n pi (1 - pi), one run below the exact mean: harmless for one segment, a bias of
    2 sqrt(R / n) standard deviations if summed over R replicates, hence the exact moments here.)
    """
    runs = ones = n = 0
    mean = var = 0.0
    for p in pooled:
        e, v = runs_moments(int(p["ones"]), int(p["n"]))
        runs += int(p["runs"])
        ones += int(p["ones"])
        n += int(p["n"])
        mean += e
        var += v
    if not var > 0.0:
        raise ValueError("runs pooling: no variance (constant segments)")
    z = (runs - mean) / math.sqrt(var)
    return CheckResult(
        name="runs of bits", statistic=float(runs), p_value=erfc_p(z),
        null="normal (exact conditional moments), two-sided", kind="continuous", n=n,
        details={"runs": runs, "expected": mean, "sd": math.sqrt(var), "z": z, "ones": ones,
                 "replicates": len(pooled)},
    )


# --------------------------------------------------------------------------- longest run of ones


@njit(cache=True)
def _longest_runs(w, M, N):
    """Longest run of ones in each of N blocks of M bits (word-parallel with carries)."""
    out = np.empty(N, dtype=np.int64)
    allb = np.uint64(0xFFFFFFFFFFFFFFFF)
    for blk in range(N):
        a = blk * M
        b = a + M
        best = 0
        carry = 0
        wa = a >> 6
        wb = (b - 1) >> 6
        for i in range(wa, wb + 1):
            x = w[i]
            if i == wa:
                x &= allb >> np.uint64(a & 63)
            if i == wb:
                x &= allb << np.uint64(63 - ((b - 1) & 63))
            if x == allb:
                carry += 64
                continue
            lead = int(clz64(~x))
            if carry + lead > best:
                best = carry + lead
            y = x
            k = 0
            while y:
                y &= y << np.uint64(1)
                k += 1
            if k > best:
                best = k
            carry = int(ctz64(~x))
        if carry > best:
            best = carry
        out[blk] = best
    return out


_BYTE_LONGEST = np.array([max(len(r) for r in format(b, "08b").split("0")) for b in range(256)],
                         dtype=np.int64)

# SP 800-22 §2.4.4 and §3.4: block length -> (lowest class upper bound v_lo, number of classes K+1,
# recommended number of blocks N, class probabilities as printed in the standard's table).
LONGEST_RUN_TABLES: dict[int, tuple[int, int, int, tuple[float, ...]]] = {
    8: (1, 4, 16, (0.2148, 0.3672, 0.2305, 0.1875)),
    128: (4, 6, 49, (0.1174, 0.2430, 0.2493, 0.1752, 0.1027, 0.1124)),
    10_000: (10, 7, 75, (0.0882, 0.2092, 0.2483, 0.1933, 0.1208, 0.0675, 0.0727)),
}


def prob_longest_run_at_most(M: int, k: int) -> float:
    """Exact P(longest run of ones in M fair bits <= k), by the renewal recursion on the first zero."""
    if k >= M:
        return 1.0
    f = np.ones(M + 1, dtype=np.float64)  # f[j] = P(no run > k among j bits)
    weights = 0.5 ** np.arange(1, k + 2)  # first zero after j ones, j = 0..k
    for j in range(k + 1, M + 1):
        f[j] = float(np.dot(weights, f[j - 1 - k : j][::-1]))
    return float(f[M])


def longest_run_class_probs(M: int, v_lo: int, n_classes: int) -> np.ndarray:
    """Exact class probabilities: longest <= v_lo, v_lo+1, ..., >= v_lo + n_classes - 1."""
    cdf = [prob_longest_run_at_most(M, v_lo + i) for i in range(n_classes - 1)]
    probs = np.diff(np.concatenate([[0.0], cdf, [1.0]]))
    return probs


@functools.lru_cache(maxsize=8)
@kept  # computed once per machine
def _exact_class_probs_cached(M: int) -> tuple[float, ...]:
    v_lo, ncls, _, _ = LONGEST_RUN_TABLES[M]
    return tuple(longest_run_class_probs(M, v_lo, ncls).tolist())


def _exact_class_probs(M: int) -> np.ndarray:
    """Exact class probabilities of the standard's layout for M (cached: the recursion is O(M k))."""
    return np.array(_exact_class_probs_cached(int(M)))


def longest_run_of_ones(packed: np.ndarray, n_bits: int | None = None, M: int = 128,
                        blocks: int | None = None,
                        probabilities: str | Sequence[float] = "table") -> CheckResult:
    """Test for the longest run of ones in a block, SP 800-22 §2.4.

    H0: the longest run of ones in each M-bit block follows the fair-coin distribution.
    M is 8, 128 or 10^4 (the standard's class layouts); ``blocks`` defaults to every whole block
    (n // M).  ``probabilities``: "table" = the standard's printed class probabilities (M = 8 uses the
    exact values k/256, which the table rounds), "exact" = computed here from the recursion,
    or an explicit sequence.  chi2 ~ chi2(K).
    """
    packed, n = as_packed(packed, n_bits)
    M = int(M)
    if M not in LONGEST_RUN_TABLES:
        raise InputError(f"longest run of ones: M must be one of 8, 128, 10000, got {M}")
    v_lo, ncls, _, table = LONGEST_RUN_TABLES[M]
    N = n // M if blocks is None else int(blocks)
    if N < 1 or N * M > n:
        raise InputError(f"longest run of ones: {N} blocks of M={M} need {N * M} bits, have {n}")
    if isinstance(probabilities, str):
        if probabilities == "exact" or (probabilities == "table" and M == 8):
            probs = longest_run_class_probs(M, v_lo, ncls)
        elif probabilities == "table":
            probs = np.array(table)
        else:
            raise InputError(f"longest run of ones: probabilities must be 'table', 'exact' or a list")
    else:
        probs = np.asarray(probabilities, dtype=np.float64)
        if probs.size != ncls:
            raise InputError(f"longest run of ones: need {ncls} class probabilities for M={M}")
    if M == 8:  # one block per byte: histogram of byte values, then a 256-entry table
        byte_counts = byte_histogram(packed, N)
        counts = np.bincount(np.clip(_BYTE_LONGEST - v_lo, 0, ncls - 1), weights=byte_counts,
                             minlength=ncls).astype(np.int64)
    else:
        runs = _longest_runs(to_u64(packed, N * M), M, N)
        counts = np.bincount(np.clip(runs - v_lo, 0, ncls - 1), minlength=ncls)
    chi2, _ = chi2_counts(counts, probs)
    K = ncls - 1
    return CheckResult(
        name="longest run of ones", statistic=chi2, p_value=igamc(K / 2.0, chi2 / 2.0),
        null=f"chi2(df={K})", kind="continuous", n=N * M,
        details={"M": M, "blocks": N, "counts": counts.tolist()},
        # disjoint blocks: the replicates' class counts add up to the counts of all their blocks
        # (``exact_M``: see pool_longest_run)
        pooled={"counts": counts, "probs": probs, "df": K, "n": N * M, "name": "longest run of ones",
                "exact_M": M if isinstance(probabilities, str) else None},
    )


def pool_longest_run(pooled: list[dict]) -> CheckResult:
    """Longest-run chi-square on the replicates' class counts added up (disjoint blocks: the counts of
    all their blocks at once), against the exact class probabilities when the replicates used the
    standard's table or the exact law (``exact_M``).  The printed table's rounding (up to 1.6e-3 for
    M = 10^4, a noncentrality of 4.8e-5 per block) is harmless for one segment but grows with the
    pooled blocks (about 1 at 20,000 blocks).  Explicit probabilities are kept as given.
    """
    M = pooled[0].get("exact_M")
    if M is not None:
        if any(p.get("exact_M") != M for p in pooled):
            raise ValueError("longest run replicates with different block lengths cannot be pooled")
        exact = _exact_class_probs(int(M))  # computed once per process, where the grading runs
        pooled = [{**p, "probs": exact} for p in pooled]
    return pool_class_counts(pooled)


# --------------------------------------------------------------------------- registry


def _n(params: dict) -> int:
    return int(params["n_bits"])


register(CheckSpec(
    key="runs of bits", family="bits", title="runs test", view="bits", kind="continuous",
    func=runs_of_bits, values_needed=_n,
    default_params=lambda n: [{"n_bits": n}] if n >= 100 else [],
    source=f"{SP800_22} §2.3", pool=pool_runs,
))


def _longest_defaults(n: int) -> list[dict]:
    # SP 800-22 §2.4.2: n >= 128 -> M = 8, n >= 6272 -> M = 128, n >= 750,000 -> M = 10^4
    for M, lo in ((10_000, 750_000), (128, 6272), (8, 128)):
        if n >= lo:
            return [{"n_bits": n // M * M, "M": M}]
    return []


register(CheckSpec(
    key="longest run of ones", family="bits", title="test for the longest run of ones in a block",
    sized=("M",),  # the block length the published table gives for the data available
    view="bits", kind="continuous", func=longest_run_of_ones, values_needed=_n,
    default_params=_longest_defaults, source=f"{SP800_22} §2.4", pool=pool_longest_run,
))
