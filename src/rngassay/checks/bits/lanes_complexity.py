"""Linear complexity of long blocks of the lowest bit lanes of 32-bit words.

Lane ``b`` of ``n`` words is the ``n``-bit sequence (bit ``b`` of word 0, bit ``b`` of word 1, ...),
bit 0 = least significant.  Each of the lowest ``lanes`` lanes is cut into blocks of ``M = 2^k`` bits
(default ``2^18``) and the linear complexity ``L`` of every block is found with a word-parallel
Berlekamp--Massey kernel (Massey 1969; the scheme of :mod:`.complexity`, re-vectorised here).

Null law (exact): among the ``2^M`` blocks of ``M`` bits, ``2^min(2L-1, 2M-2L)`` have linear complexity
``L >= 1`` and one has ``L = 0`` (Rueppel 1986, Analysis and Design of Stream Ciphers, Springer -- the
theorem number, 4.2, from memory; verified in the tests by enumerating all 2^16 blocks of 16 bits; the law
behind NIST SP 800-22 Rev. 1a §2.10 / §3.10).  For even ``M`` this gives, for the distance
``D = |L - M/2|`` and every ``1 <= d <= M/2``, exactly ``P(D >= d) = 2^(1 - 2d)`` (left part
``(2 * 4^(M/2-d) + 1) / (3 * 2^M)``, right part ``(4^(M/2-d+1) - 1) / (3 * 2^M)``).  The statistic is the
largest ``D`` over all blocks of all examined lanes, and its p-value the exact right tail
``1 - (1 - 2^(1-2 D_max))^K`` for ``K`` independent blocks.  ``D`` is an integer, so the p-value is
discrete (exact at the attained values, conservative in between): the battery must not test it for
uniformity.

Why the lowest lanes and long blocks: in additive lagged-Fibonacci generators ``x_n = x_{n-r} + x_{n-s}
mod 2^32`` the carries move upward only, so lane 0 is a linear recurrence of degree ``s`` and lane ``b``
a function of degree ``2^b`` of the lower lanes, whose linear complexity grows quickly with ``b``
(lags (5, 17): lanes 0..3 have L = 17, 170, 4063, 119391 -- measured); in power-of-two LCGs lane
``b`` has period ``2^(b+1)``; in every F2-linear generator (shift registers, xorshift, twisted GFSR)
every lane, the lowest included, has linear complexity at most the state size.  A block of ``2^18``
bits exposes any lane with ``L`` below about ``2^17 - 20``: F2-linear state up to ~2^17 bits.  Cost:
Berlekamp--Massey is quadratic (this module's kernel: about 0.008 / 0.023 / 0.08 s for 2^16 / 2^17 /
2^18 bits on one core of the development machine, 3-4x faster than :func:`.complexity._bm_blocks`),
so the planner runs one 2^18-bit block on each of lanes 0..3 per replicate (about 0.3 s) in at most
two replicates: about 0.6 s per run.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from rngassay.checks.registry import CheckSpec, check_id, register
from rngassay.checks.result import CheckResult

from ._common import lanes_u64
from .complexity import bm_jobs  # the one Berlekamp-Massey kernel, one thread per core
from rngassay.stats import sidak_log

from .lanes_spectral import LaneParameterError, as_int, check_lane_bits, check_log2_block, words32

LC_LOG2_BLOCK_MIN, LC_LOG2_BLOCK_MAX = 4, 20
LC_LONG_LOG2_BLOCK = 18  # planner: 2^18-bit blocks (random L ~ 2^17)
LC_LONG_MIN_LOG2 = 16  # planner: no shorter blocks than 2^16 bits
LC_LONG_LANES = 4  # planner: lanes 0..3


# --------------------------------------------------------------------------- kernel


def distance_tail_log2(d: int, M: int) -> float:
    """log2 P(|L - M/2| >= d) for the linear complexity L of M fair bits, M even: 1 - 2d (d >= 1)."""
    if M % 2:
        raise LaneParameterError(f"linear complexity long lanes: M must be even, got {M}")
    if d <= 0:
        return 0.0
    if d > M // 2:
        return -math.inf
    return 1.0 - 2.0 * d


def linear_complexity_long_lanes(words: np.ndarray, n_words: int | None = None,
                                 log2_block: int = LC_LONG_LOG2_BLOCK, lanes: int = LC_LONG_LANES,
                                 blocks: int | None = None, lane_bits: int = 32) -> CheckResult:
    """Linear complexity test on long blocks of the lowest bit lanes 0 .. lanes-1 of 32-bit words.

    H0: every lane is a sequence of independent fair bits.  Each examined lane gives ``blocks``
    blocks of ``M = 2^log2_block`` bits (default: as many as the words hold); ``lanes`` must not
    exceed ``lane_bits`` (the number of meaningful low bits per word).  Statistic: the largest
    ``|L - M/2|`` over all blocks; p-value: its exact right tail (module text).  ``details`` has every
    block's ``L`` per lane, the worst lane, whether its ``L`` was low or high, and ``log10_p``.
    """
    what = "linear complexity long lanes"
    arr = words32(words, n_words, what)
    k = check_log2_block(log2_block, what, LC_LOG2_BLOCK_MIN, LC_LOG2_BLOCK_MAX)
    lb = check_lane_bits(lane_bits, what)
    nl = as_int(lanes)
    if nl is None or not 1 <= nl <= lb:
        raise LaneParameterError(f"{what}: lanes must be an integer in 1..lane_bits={lb}, got {lanes!r}")
    M = 1 << k
    nb = arr.size // M if blocks is None else as_int(blocks)
    if nb is None:
        raise LaneParameterError(f"{what}: blocks must be a positive integer, got {blocks!r}")
    if nb < 1 or nb * M > arr.size:
        raise LaneParameterError(
            f"{what}: {max(nb, 1)} block(s) of 2^{k} bits per lane need {max(nb, 1) * M} words, have {arr.size}")
    bits = lanes_u64(arr[: nb * M], list(range(nl)))
    Ls = np.stack(bm_jobs([(bits[i], 0, M, nb) for i in range(nl)]))  # (lanes, blocks)
    dist = np.abs(Ls - M // 2)
    i, j = np.unravel_index(int(np.argmax(dist)), dist.shape)
    dmax = int(dist[i, j])
    K = nl * nb
    p, lg = sidak_log(distance_tail_log2(dmax, M) * math.log(2.0), K)
    return CheckResult(
        name=check_id(what, {"log2_block": k, "lanes": nl}),
        statistic=float(dmax), p_value=p,
        null=f"largest |L - M/2| of {K} blocks, M=2^{k}, exact law (P(D >= d) = 2^(1-2d))",
        kind="discrete", n=nb * M,
        details={"M": M, "lanes": nl, "blocks": nb, "L": Ls.tolist(), "worst_lane": int(i), "block": int(j),
                 "direction": "low" if Ls[i, j] < M // 2 else ("high" if Ls[i, j] > M // 2 else "none"),
                 "log10_p": lg},
    )


# --------------------------------------------------------------------------- registry


def _lc_long_defaults(nw: int) -> list[dict]:
    if nw < (1 << LC_LONG_MIN_LOG2):
        return []
    k = min(LC_LONG_LOG2_BLOCK, int(nw).bit_length() - 1)
    return [{"n_words": 1 << k, "log2_block": k, "lanes": LC_LONG_LANES}]


register(CheckSpec(
    key="linear complexity long lanes", family="bits", windows=("fraction-tail",),
    sized=("log2_block",),  # block length, from the data available
    title="linear complexity of long blocks of the lowest bit lanes of 32-bit words", view="words32",
    kind="discrete", func=linear_complexity_long_lanes, values_needed=lambda p: int(p["n_words"]),
    default_params=_lc_long_defaults,
    source="Massey (1969) Berlekamp-Massey; Rueppel (1986) Thm 4.2 exact law of L; "
           "NIST SP 800-22 Rev. 1a (2010) §2.10 / §3.10; applied to bit lanes",
    notes="one 2^18-bit block on each of lanes 0..3 per replicate, two replicates; statistic max |L - M/2|, "
          "exact discrete tail",
    max_replicates=2,  # ~0.3 s per replicate (4 x Berlekamp-Massey on 2^18 bits): ~0.6 s per run
    sample="one block of 2^18 bits in each of the 4 lowest lanes (1 MiB of words) in each of 2 replicates: "
           "Berlekamp-Massey on 2^18 bits costs about 0.1 s",
))
