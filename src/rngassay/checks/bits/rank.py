"""Binary matrix rank checks: consecutive bits as M x Q matrices over GF(2).

Null hypothesis: the bits are independent fair coin flips, so each matrix is uniform over all
M x Q binary matrices and its rank has the exact distribution of SP 800-22 Rev. 1a §3.5.
Method: NIST SP 800-22 Rev. 1a §2.5 (32 x 32 there; any M x Q here, elimination on bit-packed
uint64 rows).  The lane variant applies the same test to each bit position of 32-bit words.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from numba import njit

from rngassay.checks.registry import CheckSpec, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError

from ._common import as_packed, as_words32, check_lanes, chi2_counts, clip_p, clz64, lanes_u64, to_u64
from .frequency import pool_class_counts

SP800_22 = "NIST SP 800-22 Rev. 1a (2010)"


def rank_probability(r: int, M: int, Q: int) -> float:
    """Exact P(rank = r) of a uniform random M x Q matrix over GF(2), SP 800-22 §3.5:
    p_r = 2^{r(Q+M-r) - MQ} prod_{i<r} (1 - 2^{i-Q})(1 - 2^{i-M}) / (1 - 2^{i-r}).
    """
    if r < 0 or r > min(M, Q):
        return 0.0
    log_p = (r * (Q + M - r) - M * Q) * math.log(2.0)
    for i in range(r):
        log_p += math.log1p(-(2.0 ** (i - Q))) + math.log1p(-(2.0 ** (i - M))) - math.log1p(-(2.0 ** (i - r)))
    return math.exp(log_p)


def rank_class_probs(M: int, Q: int) -> np.ndarray:
    """(P(rank = min(M,Q)), P(rank = min(M,Q) - 1), P(rank lower)), exact."""
    full = min(M, Q)
    p0 = rank_probability(full, M, Q)
    p1 = rank_probability(full - 1, M, Q)
    p2 = sum(rank_probability(r, M, Q) for r in range(full - 1))  # summed, not 1 - p0 - p1
    return np.array([p0, p1, p2])


@njit(cache=True)
def _gf2_rank(rows, M, W, pivot):
    """Rank over GF(2) of an M x Q matrix whose rows are W uint64 words (column c = bit 63 - c%64
    of word c//64), by inserting rows one by one into an echelon basis indexed by leading column.
    ``pivot`` is scratch of length >= 64 W.  Reduces ``rows`` in place."""
    for c in range(64 * W):
        pivot[c] = -1
    rank = 0
    for r in range(M):
        j = 0
        while True:
            while j < W and rows[r, j] == 0:
                j += 1
            if j == W:
                break
            c = 64 * j + int(clz64(rows[r, j]))
            pr = pivot[c]
            if pr < 0:
                pivot[c] = r
                rank += 1
                break
            for t in range(j, W):
                rows[r, t] ^= rows[pr, t]
    return rank


@njit(cache=True)
def _matrix_ranks(w, start, M, Q, N):
    """Ranks of N consecutive M x Q matrices (filled row by row) from bit ``start`` of ``w``."""
    W = (Q + 63) // 64
    rows = np.empty((M, W), dtype=np.uint64)
    pivot = np.empty(64 * W, dtype=np.int64)
    out = np.empty(N, dtype=np.int64)
    allb = np.uint64(0xFFFFFFFFFFFFFFFF)
    for k in range(N):
        base = start + k * M * Q
        for r in range(M):
            pos = base + r * Q
            for j in range(W):
                p = pos + 64 * j
                i = p >> 6
                sh = p & 63
                if sh == 0:
                    v = w[i]
                else:
                    v = (w[i] << np.uint64(sh)) | (w[i + 1] >> np.uint64(64 - sh))
                nb = Q - 64 * j
                if nb < 64:
                    v &= allb << np.uint64(64 - nb)
                rows[r, j] = v
        out[k] = _gf2_rank(rows, M, W, pivot)
    return out


def matrix_ranks(packed: np.ndarray, n_bits: int | None, M: int, Q: int) -> np.ndarray:
    """GF(2) ranks of the n // (M Q) consecutive M x Q matrices of the bit sequence."""
    packed, n = as_packed(packed, n_bits)
    N = n // (M * Q)
    return _matrix_ranks(to_u64(packed, N * M * Q), 0, M, Q, N)


def _rank_result(name: str, ranks: np.ndarray, M: int, Q: int, n: int, extra: dict) -> CheckResult:
    full = min(M, Q)
    counts = np.array([np.sum(ranks == full), np.sum(ranks == full - 1), np.sum(ranks < full - 1)])
    probs = rank_class_probs(M, Q)
    chi2, expected = chi2_counts(counts, probs)
    return CheckResult(
        name=name, statistic=chi2, p_value=clip_p(math.exp(-chi2 / 2.0)), null="chi2(df=2)",
        kind="continuous", n=n,
        details={"M": M, "Q": Q, "matrices": int(ranks.size), "counts": counts.tolist(),
                 "expected": expected.tolist(), "min_rank": int(ranks.min()), **extra},
        # disjoint matrices: the replicates' class counts add up to the counts of all their matrices
        pooled={"counts": counts, "probs": probs, "df": 2, "n": n, "name": name},
    )


def _check_shape(M: int, Q: int) -> tuple[int, int]:
    M, Q = int(M), int(Q)
    if M < 2 or Q < 2:
        raise InputError(f"binary matrix rank: M and Q must be >= 2, got {M} x {Q}")
    return M, Q


def binary_matrix_rank(packed: np.ndarray, n_bits: int | None = None, M: int = 32,
                       Q: int = 32) -> CheckResult:
    """Binary matrix rank test, SP 800-22 §2.5, for any M x Q.

    H0: the N = n // (M Q) disjoint matrices, filled row by row with consecutive bits, have GF(2)
    ranks distributed as for uniform random matrices.  Ranks are grouped into full, full - 1 and
    lower; chi2 ~ chi2(2), p = exp(-chi2 / 2).  Class probabilities are exact (§3.5 formula).
    """
    M, Q = _check_shape(M, Q)
    packed, n = as_packed(packed, n_bits)
    N = n // (M * Q)
    if N < 1:
        raise InputError(f"binary matrix rank: one {M}x{Q} matrix needs {M * Q} bits, have {n}")
    ranks = _matrix_ranks(to_u64(packed, N * M * Q), 0, M, Q, N)
    return _rank_result("binary matrix rank", ranks, M, Q, N * M * Q, {})


def binary_matrix_rank_lanes(words: np.ndarray, n_words: int | None = None, M: int = 64,
                             Q: int = 64, lanes: Sequence[int] | None = None) -> CheckResult:
    """Binary matrix rank test on each bit lane of 32-bit words.

    Lane k is the bit sequence (bit k of word 0, bit k of word 1, ...); each lane is cut into
    N = n_words // (M Q) matrices.  H0 as for :func:`binary_matrix_rank`, for every lane.  The class
    counts of all lanes are pooled into one chi2(2) statistic; per-lane counts and minimum ranks are
    in ``details``.  A lane obeying a linear recurrence of degree d < min(M, Q) has rank <= d.
    """
    M, Q = _check_shape(M, Q)
    words = as_words32(words)
    nw = words.size if n_words is None else int(n_words)
    if nw > words.size:
        raise InputError(f"n_words={nw} but only {words.size} words were given")
    lanes_list = check_lanes(lanes)
    N = nw // (M * Q)
    if N < 1:
        raise InputError(f"binary matrix rank lanes: one {M}x{Q} matrix per lane needs {M * Q} words, have {nw}")
    L = lanes_u64(words[: N * M * Q], lanes_list)
    all_ranks = np.stack([_matrix_ranks(L[i], 0, M, Q, N) for i in range(len(lanes_list))])
    full = min(M, Q)
    per_lane = {
        str(k): {"full": int(np.sum(r == full)), "full_minus_1": int(np.sum(r == full - 1)),
                 "lower": int(np.sum(r < full - 1)), "min_rank": int(r.min())}
        for k, r in zip(lanes_list, all_ranks)
    }
    return _rank_result("binary matrix rank lanes", all_ranks.reshape(-1), M, Q, N * M * Q,
                        {"lanes": lanes_list, "matrices_per_lane": N, "per_lane": per_lane})


# --------------------------------------------------------------------------- registry

# Square sizes the planner uses, with >= 38 matrices each (SP 800-22 §2.5.7: n >= 38 M Q).
_SIZES = (32, 256, 1024)


def _rank_defaults(n: int) -> list[dict]:
    out = []
    for s in _SIZES:
        N = n // (s * s)
        if N >= 38:
            out.append({"n_bits": N * s * s, "M": s, "Q": s})
    return out


register(CheckSpec(
    key="binary matrix rank", family="bits", title="binary matrix rank test", view="bits",
    kind="continuous", func=binary_matrix_rank, values_needed=lambda p: int(p["n_bits"]),
    default_params=_rank_defaults, source=f"{SP800_22} §2.5, §3.5",
    pool=pool_class_counts,
    max_replicates=8,  # costly per byte: 8 replicates are plenty
))


def _rank_lane_defaults(nw: int) -> list[dict]:
    out = []
    for s in (64, 256):
        N = nw // (s * s)
        if N >= 2:  # pooled over 32 lanes: >= 64 matrices
            out.append({"n_words": N * s * s, "M": s, "Q": s})
    return out


register(CheckSpec(
    key="binary matrix rank lanes", family="bits", windows=("fraction-tail",),
    title="binary matrix rank test per bit lane of 32-bit words", view="words32", kind="continuous",
    func=binary_matrix_rank_lanes, values_needed=lambda p: int(p["n_words"]),
    default_params=_rank_lane_defaults, source=f"{SP800_22} §2.5 applied to bit lanes",
    pool=pool_class_counts,  # one table per replicate (all lanes' matrices); per-lane counts not pooled
    max_replicates=8,  # costly per byte: 8 replicates are plenty
))
