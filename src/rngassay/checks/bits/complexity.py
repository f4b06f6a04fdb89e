"""Linear complexity checks: Berlekamp-Massey on blocks of bits, and on the bit lanes of words.

Null hypothesis: the bits are independent fair coin flips, so the linear complexity L of an
M-bit block is close to M/2 with the distribution of SP 800-22 Rev. 1a §3.10.
Methods: J. L. Massey (1969), "Shift-register synthesis and BCH decoding", IEEE Trans. Inf.
Theory 15:122-127; NIST SP 800-22 Rev. 1a §2.10.  The Berlekamp-Massey kernel is word-parallel:
the discrepancy is the parity of (connection polynomial AND reversed sequence), 64 taps per word.
"""

from __future__ import annotations

import math
import os
from collections.abc import Sequence
from concurrent.futures import ThreadPoolExecutor

import numpy as np
from numba import njit

from rngassay.checks.registry import CheckSpec, check_id, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError

from ._common import as_packed, as_words32, check_lanes, chi2_counts, clip_p, igamc, lanes_u64, popcount64, to_u64
from .frequency import pool_class_counts

SP800_22 = "NIST SP 800-22 Rev. 1a (2010)"

# SP 800-22 Rev. 1a §2.10.4 step (6) / §3.10, as printed (pi_0 is printed 0.01047; the limit is 1/96).
LC_PROBS_PRINTED = (0.01047, 0.03125, 0.125, 0.5, 0.25, 0.0625, 0.020833)
LC_PROBS_LIMIT = (1 / 96, 1 / 32, 1 / 8, 1 / 2, 1 / 4, 1 / 16, 1 / 48)
_T_EDGES = np.array([-2.5, -1.5, -0.5, 0.5, 1.5, 2.5])


@njit(cache=True)
def _xor_and(a, b, n):
    """Parity word of a[:n] AND b[:n] (XOR-reduced); a plain loop over 1-D views vectorises."""
    acc = np.uint64(0)
    for k in range(n):
        acc ^= a[k] & b[k]
    return acc


@njit(cache=True)
def _bm_setup(w, start, N, R, RS, C, B, T):
    """The block reversed into R, its 64 shifts into RS, C, B, T cleared; returns W = ceil(N / 64)."""
    W = (N + 63) // 64
    allb = np.uint64(0xFFFFFFFFFFFFFFFF)
    for i in range(W):
        p = start + 64 * i
        j = p >> 6
        sh = p & 63
        if sh == 0:
            v = w[j]
        else:
            v = (w[j] << np.uint64(sh)) | (w[j + 1] >> np.uint64(64 - sh))
        R[W - 1 - i] = v
    if N & 63:
        R[0] &= allb << np.uint64(64 - (N & 63))
    R[W] = 0
    R[W + 1] = 0
    for i in range(W + 2):
        RS[0, i] = R[i]
    for sh in range(1, 64):
        for i in range(W + 1):
            RS[sh, i] = (R[i] >> np.uint64(sh)) | (R[i + 1] << np.uint64(64 - sh))
        RS[sh, W + 1] = 0
    for i in range(W + 2):
        C[i] = 0
        B[i] = 0
        T[i] = 0
    return W


@njit(cache=True, inline="always")
def _bm_step(n, m, L, W):
    """The update's shape at a nonzero discrepancy: C <- C + x^(n-m) B, with shift n - m = 64 q + r; the new
    length; the top word touched; whether B takes the old C (2L <= n)."""
    shift = n - m
    newL = n + 1 - L
    top = (max(L, newL) >> 6) + 1
    if top > W + 1:
        top = W + 1
    return shift >> 6, shift & 63, newL, top, 2 * L <= n


@njit(cache=True)
def _bm(w, start, N, R, RS, C, B, T):
    """Linear complexity of bits [start, start + N) of the MSB-first sequence ``w`` (Massey 1969).

    Word-parallel: the block is held reversed (LSB-first) in R, so that the taps s_{n-i}, i = 0..L, line
    up with the coefficients c_i of C (LSB-first); RS[sh] is R shifted by sh bits, so the discrepancy is
    an aligned AND/XOR reduction of C against RS[sh], written over 1-D views so that the discrepancy and
    the update loops vectorise (about 3x faster than an indexed loop on 2^16..2^18-bit blocks).
    Scratch: R, C, B, T of at least W + 2 words, RS of shape (64, W + 2), W = ceil(N / 64)."""
    W = _bm_setup(w, start, N, R, RS, C, B, T)
    C[0] = 1
    B[0] = 1
    L = 0
    m = -1
    for n in range(N):
        o = 64 * W - 1 - n  # position of s_n in R (LSB-first); s_{n-i} is at o + i
        acc = _xor_and(C, RS[o & 63, o >> 6:], (L >> 6) + 1)
        if popcount64(acc) & np.uint64(1):
            q, r, newL, top, swap = _bm_step(n, m, L, W)
            if swap:
                T[: top + 1] = C[: top + 1]
            # C <- C + x^shift B  (deg x^shift B <= newL, so q <= top)
            if r == 0:
                Cq = C[q: top + 1]
                Bq = B[: Cq.size]
                for k in range(Cq.size):
                    Cq[k] ^= Bq[k]
            else:
                C[q] ^= B[0] << np.uint64(r)
                rl = np.uint64(r)
                rr = np.uint64(64 - r)
                Cq = C[q + 1: top + 1]
                nk = Cq.size
                B1 = B[1: 1 + nk]
                B0 = B[0: nk]
                for k in range(nk):
                    Cq[k] ^= (B1[k] << rl) | (B0[k] >> rr)
            if swap:
                B, T = T, B
                L = newL
                m = n
    return L


@njit(cache=True)
def _bm_short(w, start, N, R, RS, C, B, T):
    """:func:`_bm` with plain indexed loops: the same steps and result, faster for short blocks (up to a few
    thousand bits: 45 against 69 us a block at M = 500), where creating the 1-D views costs more than the
    vectorised loops save (at M = 50,000 the view form is 2.6x faster)."""
    W = _bm_setup(w, start, N, R, RS, C, B, T)
    C[0] = 1
    B[0] = 1
    L = 0
    m = -1
    for n in range(N):
        o = 64 * W - 1 - n  # as in _bm
        row = o & 63
        base = o >> 6
        acc = np.uint64(0)
        for k in range((L >> 6) + 1):
            acc ^= C[k] & RS[row, base + k]
        if popcount64(acc) & np.uint64(1):
            q, r, newL, top, swap = _bm_step(n, m, L, W)
            if swap:
                for k in range(top + 1):
                    T[k] = C[k]
            if r == 0:
                for k in range(top + 1 - q):
                    C[q + k] ^= B[k]
            else:
                C[q] ^= B[0] << np.uint64(r)
                rl = np.uint64(r)
                rr = np.uint64(64 - r)
                for k in range(top - q):
                    C[q + 1 + k] ^= (B[1 + k] << rl) | (B[k] >> rr)
            if swap:
                B, T = T, B
                L = newL
                m = n
    return L


SHORT_WORDS = 128  # blocks of up to 128 words (8192 bits) use _bm_short


@njit(cache=True, nogil=True)
def _bm_blocks(w, start, M, N):
    """Linear complexity of N consecutive M-bit blocks of the MSB-first sequence ``w``."""
    W = (M + 63) // 64
    R = np.empty(W + 2, dtype=np.uint64)
    RS = np.empty((64, W + 2), dtype=np.uint64)
    C = np.empty(W + 2, dtype=np.uint64)
    B = np.empty(W + 2, dtype=np.uint64)
    T = np.empty(W + 2, dtype=np.uint64)
    out = np.empty(N, dtype=np.int64)
    for b in range(N):
        if W <= SHORT_WORDS:
            out[b] = _bm_short(w, start + b * M, M, R, RS, C, B, T)
        else:
            out[b] = _bm(w, start + b * M, M, R, RS, C, B, T)
    return out


def bm_jobs(jobs: list[tuple[np.ndarray, int, int, int]]) -> list[np.ndarray]:
    """Linear complexities for each job ``(w, start, M, N)`` (as :func:`_bm_blocks`), in order, spread over one
    thread per core: the kernel releases the GIL, and each job's result depends only on its own bits, so the
    results are the same on any number of cores."""
    threads = min(len(jobs), os.cpu_count() or 1)
    if threads <= 1:
        return [_bm_blocks(*j) for j in jobs]
    with ThreadPoolExecutor(threads) as ex:
        return list(ex.map(lambda j: _bm_blocks(*j), jobs))


def bm_split(w: np.ndarray, M: int, N: int) -> np.ndarray:
    """Linear complexities of N consecutive M-bit blocks from bit 0 of ``w``, the blocks shared out in
    contiguous runs over the cores (:func:`bm_jobs`)."""
    parts = min(N, os.cpu_count() or 1)
    cuts = [N * i // parts for i in range(parts + 1)]
    return np.concatenate(bm_jobs([(w, a * M, M, b - a) for a, b in zip(cuts, cuts[1:]) if b > a]))


def linear_complexity_profile_bits(packed: np.ndarray, n_bits: int | None = None) -> int:
    """Linear complexity (Berlekamp-Massey) of the whole bit string."""
    packed, n = as_packed(packed, n_bits)
    if n == 0:
        return 0
    return int(_bm_blocks(to_u64(packed, n), 0, n, 1)[0])


def lc_class_probs_exact(M: int) -> np.ndarray:
    """Exact class probabilities of T for M-bit blocks, from the count of M-bit sequences with
    linear complexity L: 1 for L = 0, 2^min(2L-1, 2M-2L) for L >= 1 (Rueppel 1986, Analysis and
    Design of Stream Ciphers, Springer, Thm 4.2)."""
    L = np.arange(M + 1, dtype=np.float64)
    log2n = np.where(L == 0, 0.0, np.minimum(2 * L - 1, 2 * M - 2 * L)) - M
    t = _t_values(L, M)
    cls = np.digitize(t, _T_EDGES, right=True)
    probs = np.zeros(7)
    np.add.at(probs, cls, np.exp2(log2n))
    return probs


def _mu(M: int) -> float:
    return M / 2.0 + (9.0 + (-1.0) ** (M + 1)) / 36.0 - math.ldexp(M / 3.0 + 2.0 / 9.0, -M)


def _t_values(L: np.ndarray, M: int) -> np.ndarray:
    return (-1.0) ** M * (np.asarray(L, dtype=np.float64) - _mu(M)) + 2.0 / 9.0


def _lc_probs(probabilities: str | Sequence[float], M: int) -> np.ndarray:
    if isinstance(probabilities, str):
        if probabilities == "printed":
            return np.array(LC_PROBS_PRINTED)
        if probabilities == "limit":
            return np.array(LC_PROBS_LIMIT)
        if probabilities == "exact":
            return lc_class_probs_exact(M)
        raise InputError("linear complexity: probabilities must be 'printed', 'limit', 'exact' or a list")
    p = np.asarray(probabilities, dtype=np.float64)
    if p.size != 7:
        raise InputError("linear complexity: need 7 class probabilities")
    return p


def _lc_result(name: str, Ls: np.ndarray, M: int, probs: np.ndarray, n: int, extra: dict,
               pool_probs: np.ndarray | None = None) -> CheckResult:
    t = _t_values(Ls, M)
    counts = np.bincount(np.digitize(t, _T_EDGES, right=True), minlength=7)
    chi2, expected = chi2_counts(counts, probs)
    return CheckResult(
        name=name, statistic=chi2, p_value=igamc(3.0, chi2 / 2.0), null="chi2(df=6)",
        kind="continuous", n=n,
        details={"M": M, "blocks": int(Ls.size), "counts": counts.tolist(), "expected": expected.tolist(),
                 "min_L": int(Ls.min()), "mean_L": float(Ls.mean()), **extra},
        # disjoint blocks: the replicates' T-class counts add up to the counts of all their blocks; tested
        # against ``pool_probs`` (the exact law when the check used the printed table, whose pi_0 = 0.01047
        # against 1/96 would bias a chi-square over many pooled blocks: noncentrality 2.7e-7 per block)
        pooled={"counts": counts, "probs": probs if pool_probs is None else pool_probs, "df": 6, "n": n,
                "name": name},
    )


def linear_complexity(packed: np.ndarray, n_bits: int | None = None, M: int = 500,
                      probabilities: str | Sequence[float] = "printed") -> CheckResult:
    """Linear complexity test, SP 800-22 §2.10.

    N = n // M blocks; L_i = linear complexity of block i (Berlekamp-Massey);
    T_i = (-1)^M (L_i - mu) + 2/9 with mu = M/2 + (9 + (-1)^(M+1))/36 - (M/3 + 2/9)/2^M, binned at
    -2.5, -1.5, ..., 2.5 into 7 classes; chi2 ~ chi2(6).  ``probabilities``: "printed" (default:
    the standard's table as printed, pi_0 = 0.01047), "limit" (pi_0 = 1/96 ...), "exact" (for this
    M, from the exact distribution of L), or a sequence of 7.
    """
    packed, n = as_packed(packed, n_bits)
    M = int(M)
    N = n // M
    if M < 2 or N < 1:
        raise InputError(f"linear complexity: need at least one block of M={M} bits, have {n}")
    probs = _lc_probs(probabilities, M)
    Ls = bm_split(to_u64(packed, N * M), M, N)
    return _lc_result("linear complexity", Ls, M, probs, N * M, {}, _pool_probs(probabilities, M, probs))


def _pool_probs(probabilities: str | Sequence[float], M: int, probs: np.ndarray) -> np.ndarray:
    """Class probabilities for the pooled test: the exact law in place of the printed table."""
    return lc_class_probs_exact(M) if isinstance(probabilities, str) and probabilities == "printed" else probs


def _left_tail_min_log10(min_l: int, M: int, blocks: int) -> float:
    """log10 P(min over `blocks` independent M-bit blocks of L <= min_l) under H0, from the exact
    law of L (log space, so tiny probabilities such as 2^-10000 keep their exponent)."""
    L = np.arange(0, min_l + 1, dtype=np.float64)
    log2n = np.where(L == 0, 0.0, np.minimum(2 * L - 1, 2 * M - 2 * L)) - M
    mx = float(log2n.max())
    log2F = mx + math.log2(float(np.sum(np.exp2(log2n - mx))))
    if log2F >= 0.0:
        return 0.0
    if log2F < -40:  # 1 - (1 - F)^blocks = blocks F (1 + O(blocks F))
        return (log2F + math.log2(blocks)) * math.log10(2.0)
    F = 2.0**log2F
    return math.log10(-math.expm1(blocks * math.log1p(-F)))


def linear_complexity_lanes(words: np.ndarray, n_words: int | None = None, M: int = 50_000,
                            blocks: int | None = None, lanes: Sequence[int] | None = None,
                            probabilities: str | Sequence[float] = "printed") -> CheckResult:
    """Linear complexity test on each bit lane of 32-bit words.

    Lane k is the bit sequence (bit k of word 0, bit k of word 1, ...), bit 0 = least significant.
    Each lane gives ``blocks`` blocks of M bits (default: all, n_words // M) and each block its
    linear complexity L.  H0: every lane is a fair-coin sequence, so L ~ M/2 with the law of
    §3.10 (|L - M/2| > k with probability about 2^-2k).  The T classes of all blocks of all lanes
    are pooled into the standard's chi2(6) statistic.  A lane obeying a linear recurrence of degree
    d < M/2 has L = d in every block, far in class 0: e.g. each lane of mt19937 has degree 19937,
    so M >= 50,000 exposes it.  ``details["per_lane"]`` has each lane's minimum L and the exact
    probability of so low a minimum (``p_low``, clipped; ``log10_p_low`` keeps tiny exponents).
    """
    words = as_words32(words)
    nw = words.size if n_words is None else int(n_words)
    if nw > words.size:
        raise InputError(f"n_words={nw} but only {words.size} words were given")
    M = int(M)
    lanes_list = check_lanes(lanes)
    N = nw // M if blocks is None else int(blocks)
    if M < 2 or N < 1 or N * M > nw:
        raise InputError(f"linear complexity lanes: {N} blocks of M={M} per lane need {max(N, 1) * M} words, have {nw}")
    probs = _lc_probs(probabilities, M)
    lanes_bits = lanes_u64(words[: N * M], lanes_list)
    all_L = np.stack(bm_jobs([(lanes_bits[i], 0, M, N) for i in range(len(lanes_list))]))
    per_lane = {}
    for k, row in zip(lanes_list, all_L):
        lg = _left_tail_min_log10(int(row.min()), M, N)
        per_lane[str(k)] = {"min_L": int(row.min()), "max_L": int(row.max()),
                            "p_low": clip_p(10.0**lg), "log10_p_low": lg}
    return _lc_result("linear complexity lanes", all_L.reshape(-1), M, probs, N * M,
                      {"lanes": lanes_list, "blocks_per_lane": N, "per_lane": per_lane},
                      _pool_probs(probabilities, M, probs))


# --------------------------------------------------------------------------- registry

LC_MAX_BLOCKS = 8192  # the fixed sample: 8192 blocks of 500 bits per replicate (about 0.4 s of Berlekamp-Massey)


def _lc_defaults(n: int) -> list[dict]:
    # SP 800-22 §2.10.7: n >= 10^6 recommended, 500 <= M <= 5000, N >= 200
    M = 500
    N = min(n // M, LC_MAX_BLOCKS)
    if N < 200:
        return []
    return [{"n_bits": N * M, "M": M}]


register(CheckSpec(
    key="linear complexity", family="bits", title="linear complexity test", view="bits",
    kind="continuous", func=linear_complexity, values_needed=lambda p: int(p["n_bits"]),
    default_params=_lc_defaults, source=f"Massey (1969); {SP800_22} §2.10", pool=pool_class_counts,
    max_replicates=4,  # about 0.4 s per replicate: 4 replicates are plenty
    sample="at most 8192 blocks of M=500 bits (4.1 Mbit) in each of 4 replicates: Berlekamp-Massey costs about "
           "45 us a block, 400x a read pass; SP 800-22 asks n >= 10^6 bits and N >= 200 blocks",
))

LANE_LC_M = 50_000
LANE_LC_MAX_BLOCKS = 8  # per lane: 32 x 8 = 256 blocks >= the standard's N >= 200


def _lc_lane_defaults(nw: int) -> list[dict]:
    out = []
    N = min(nw // LANE_LC_M, LANE_LC_MAX_BLOCKS)
    if N >= 7:  # 32 lanes x 7 = 224 blocks >= 200
        out.append({"n_words": N * LANE_LC_M, "M": LANE_LC_M, "blocks": N})
    return out


register(CheckSpec(
    key="linear complexity lanes", family="bits", windows=("fraction-tail",),
    sized=("blocks",),  # 7 or 8 blocks a lane, from the data available
    title="linear complexity test per bit lane of 32-bit words", view="words32", kind="continuous",
    func=linear_complexity_lanes, values_needed=lambda p: int(p["n_words"]),
    default_params=_lc_lane_defaults, source=f"{SP800_22} §2.10 applied to bit lanes",
    pool=pool_class_counts,  # one table per replicate (all lanes' blocks); per-lane minima not pooled
    max_replicates=2,  # about 3 s per replicate
    sample="8 blocks of M=50,000 bits in each of the 32 lanes (1.6 MB of words) in each of 2 replicates: "
           "Berlekamp-Massey costs about 13 ms a block; 256 blocks per replicate >= the N >= 200 of SP 800-22",
))


def linear_complexity_lanes_minimum(words: np.ndarray, n_words: int | None = None, M: int = 50_000,
                                    blocks: int | None = None, lanes: Sequence[int] | None = None) -> CheckResult:
    """Smallest linear complexity over every block of every bit lane of 32-bit words.

    H0: every lane is a fair-coin sequence. For one block of M bits, P(L <= l) is the exact left tail of
    the linear-complexity law (SP 800-22 §3.10); the p-value is the probability that the smallest of
    the ``lanes x blocks`` independent block complexities is as low as observed:
    ``1 - (1 - P_lane)^lanes`` with ``P_lane`` = P(min over the lane's blocks <= l). Needs only one
    block per lane (M words), so a short stream suffices: a lane of mt19937 has L = 19937 in every
    block of M = 50,000 bits, where a random block has L within a few units of 25,000. The statistic is
    an integer: its p-values are discrete (conservative), and the battery treats them so.
    """
    words = as_words32(words)
    nw = words.size if n_words is None else int(n_words)
    M = int(M)
    lanes_list = check_lanes(lanes)
    N = nw // M if blocks is None else int(blocks)
    if M < 2 or N < 1 or N * M > min(nw, words.size):
        raise InputError(f"linear complexity lanes minimum: {max(N, 1)} blocks of M={M} need {max(N, 1) * M} words, have {words.size}")
    lanes_bits = lanes_u64(words[: N * M], lanes_list)
    mins = [int(L.min()) for L in bm_jobs([(lanes_bits[i], 0, M, N) for i in range(len(lanes_list))])]
    lmin = min(mins)
    lg = _left_tail_min_log10(lmin, M, N)  # log10 P(min over one lane's N blocks <= lmin)
    p_lane = 10.0**lg
    k = len(lanes_list)
    p = -np.expm1(k * np.log1p(-min(p_lane, 1.0 - 1e-16))) if p_lane < 1.0 else 1.0
    if p_lane < 1e-300:  # below double range: the union bound k * p_lane is exact to first order
        p = 0.0
    name = check_id("linear complexity lanes minimum", {"M": M, "blocks": N})
    return CheckResult(
        name=name, statistic=float(lmin), p_value=clip_p(float(p)), null=f"min of {k * N} block complexities, M={M}",
        kind="discrete", n=N * M,
        details={"min_L_per_lane": mins, "log10_p_lane": lg, "log10_p": min(0.0, lg + np.log10(k))},
    )


def _lc_lane_min_defaults(nw: int) -> list[dict]:
    N = min(nw // LANE_LC_M, 1)  # one block per lane already separates L = d < M/2 from M/2
    return [{"n_words": N * LANE_LC_M, "M": LANE_LC_M, "blocks": N}] if N >= 1 else []


register(CheckSpec(
    key="linear complexity lanes minimum", family="bits", windows=("fraction-tail",),
    title="smallest linear complexity over the bit lanes of 32-bit words", view="words32", kind="discrete",
    func=linear_complexity_lanes_minimum, values_needed=lambda p: int(p["n_words"]),
    default_params=_lc_lane_min_defaults, source=f"{SP800_22} §2.10 and §3.10 (exact law of L), per bit lane",
    max_replicates=2,  # about 0.4 s per replicate; one low block is already decisive
    sample="one block of M=50,000 bits in each of the 32 lanes (200 kB of words) in each of 2 replicates: a lane "
           "of degree d < M/2 shows L = d in any one block",
))
