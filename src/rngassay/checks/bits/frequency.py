"""Frequency-type bit checks: monobit, block frequency, cumulative sums, m-bit poker.

Null hypothesis throughout: the bits are independent and each is 1 with probability 1/2.
Methods: NIST SP 800-22 Rev. 1a §2.1, §2.2, §2.13; poker test of FIPS 140-2 §4.9.1 generalised
to m-bit symbols.
"""

from __future__ import annotations

import functools
import math

import numpy as np
from numba import njit
from scipy import special

from rngassay.checks.classic.frequency import BYTE_COUNTS
from rngassay.checks.registry import CheckSpec, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError

from ._common import (
    as_packed, block_ones, byte_histogram, chi2_counts, clip_p, count_ones, erfc_p, igamc, need, to_u64,
)

SP800_22 = "NIST SP 800-22 Rev. 1a (2010)"


def monobit_frequency(packed: np.ndarray, n_bits: int | None = None) -> CheckResult:
    """Frequency (monobit) test, SP 800-22 §2.1.

    H0: ones and zeros are equally likely.  S = #ones - #zeros, statistic |S|/sqrt(n),
    p = erfc(|S| / sqrt(2n)) (two-sided).  ``p_left`` is not used: both signs are in the statistic.
    """
    packed, n = as_packed(packed, n_bits)
    need(n, 1, "monobit frequency")
    return monobit_result(count_ones(packed, n), n)


def monobit_result(ones: int, n: int) -> CheckResult:
    """The monobit result from the number of ones among ``n`` bits (shared with the one-pass form)."""
    s = 2 * ones - n
    s_obs = abs(s) / math.sqrt(n)
    return CheckResult(
        name="monobit frequency", statistic=s_obs, p_value=erfc_p(s_obs),
        null="|N(0,1)|", kind="continuous", n=n, details={"ones": ones, "sum": s},
        pooled={"z": s / math.sqrt(n), "sum": s, "n": n},
    )


_POPCOUNT = np.array([bin(v).count("1") for v in range(256)], dtype=np.int64)


def monobit_from_counts(counts: np.ndarray, params: dict | None = None) -> CheckResult:
    """Monobit from the 256 byte-value counts of the (whole) bytes it reads: ones = sum of popcount(v) h[v]."""
    n = 8 * int(counts.sum())
    need(n, 1, "monobit frequency")
    return monobit_result(int(_POPCOUNT @ np.asarray(counts, dtype=np.int64)), n)


def pool_monobit(pooled: list[dict]) -> CheckResult:
    """Monobit on all the replicates' bits at once: S = sum of the replicates' S, n = sum of their n.

    The walk sums add up exactly, so |S| / sqrt(n) is the statistic of the concatenated segments
    (for equal n it is |sum z| / sqrt(R)); two-sided p = erfc(|S| / sqrt(2n)) as for one segment.
    """
    s = sum(int(p["sum"]) for p in pooled)
    n = sum(int(p["n"]) for p in pooled)
    if n < 1:
        raise ValueError("monobit pooling: no bits")
    s_obs = abs(s) / math.sqrt(n)
    return CheckResult(name="monobit frequency", statistic=s_obs, p_value=erfc_p(s_obs),
                       null="|N(0,1)|", kind="continuous", n=n, details={"sum": s, "replicates": len(pooled)})


def pool_class_counts(pooled: list[dict]) -> CheckResult:
    """A class-count check's own Pearson chi-square on its replicates' class counts added up.

    Each replicate gives ``{"counts", "probs" (absent: equal classes), "df", "name"}``.  The classes
    are disjoint blocks, matrices or symbols, so the summed counts are the counts of all the blocks
    at once and the statistic is the check's, chi-square with the same ``df`` (they do not grow).
    Right tail in ``p_value``, left tail (too even a spread) in ``p_left``.
    """
    p0 = pooled[0]
    df = int(p0["df"])
    counts = np.sum([np.asarray(p["counts"], dtype=np.int64) for p in pooled], axis=0)
    probs = (np.full(counts.size, 1.0 / counts.size) if p0.get("probs") is None
             else np.asarray(p0["probs"], dtype=np.float64))
    for p in pooled:
        q = p.get("probs")
        same = (q is None) if p0.get("probs") is None else (q is not None and np.array_equal(np.asarray(q), probs))
        if int(p["df"]) != df or not same or np.asarray(p["counts"]).shape != counts.shape:
            raise ValueError("replicates with different classes cannot be pooled")
    chi2, expected = chi2_counts(counts, probs)
    return CheckResult(
        name=str(p0.get("name", "class counts")), statistic=chi2, p_value=igamc(df / 2.0, chi2 / 2.0),
        p_left=clip_p(special.gammainc(df / 2.0, max(chi2, 0.0) / 2.0)), null=f"chi2(df={df})",
        kind="continuous", n=sum(int(p.get("n", 0)) for p in pooled),
        details={"counts": counts.tolist() if counts.size <= 256 else None,
                 "expected": expected.tolist() if counts.size <= 256 else None, "replicates": len(pooled)},
    )


def block_frequency(packed: np.ndarray, n_bits: int | None = None, M: int = 128) -> CheckResult:
    """Frequency test within blocks, SP 800-22 §2.2.

    H0: the proportion of ones in each of N = n // M blocks is 1/2.
    chi2 = 4 M sum (pi_i - 1/2)^2 ~ chi2(N); p = Q(N/2, chi2/2).  Bits past N*M are unused.
    """
    packed, n = as_packed(packed, n_bits)
    M = int(M)
    if M < 1:
        raise InputError(f"block frequency: M must be >= 1, got {M}")
    N = n // M
    if N < 1:
        raise InputError(f"block frequency needs at least one block of M={M} bits, got {n} bits")
    w = to_u64(packed, N * M)
    ones = block_ones(w, 0, M, N)
    pi = ones / M
    chi2 = float(4.0 * M * np.sum((pi - 0.5) ** 2))
    return CheckResult(
        name="block frequency", statistic=chi2, p_value=igamc(N / 2.0, chi2 / 2.0),
        null=f"chi2(df={N})", kind="continuous", n=N * M, details={"M": M, "blocks": N},
        # a sum over disjoint blocks: the replicates' sums are the statistic over all their blocks
        pooled={"statistic": chi2, "df": N},
    )


# --------------------------------------------------------------------------- cumulative sums

_BYTE_SUM = np.array([2 * bin(b).count("1") - 8 for b in range(256)], dtype=np.int64)


def _prefix_tables() -> tuple[np.ndarray, np.ndarray]:
    mx = np.empty(256, dtype=np.int64)
    mn = np.empty(256, dtype=np.int64)
    for b in range(256):
        s, hi, lo = 0, -9, 9
        for j in range(8):
            s += 1 if (b >> (7 - j)) & 1 else -1
            hi, lo = max(hi, s), min(lo, s)
        mx[b], mn[b] = hi, lo
    return mx, mn


_BYTE_MAX, _BYTE_MIN = _prefix_tables()


@njit(cache=True)
def _walk_extremes(packed, n_bits, bsum, bmax, bmin):
    """(S_n, max S_k, min S_k) over k in [0, n] with S_0 = 0, S_k = sum of (2 x_i - 1)."""
    s = 0
    hi = 0
    lo = 0
    full = n_bits // 8
    for i in range(full):
        b = packed[i]
        v = s + bmax[b]
        if v > hi:
            hi = v
        v = s + bmin[b]
        if v < lo:
            lo = v
        s += bsum[b]
    rem = n_bits - 8 * full
    if rem:
        b = packed[full]
        for j in range(rem):
            s += 1 if (b >> (7 - j)) & 1 else -1
            if s > hi:
                hi = s
            if s < lo:
                lo = s
    return s, hi, lo


@functools.lru_cache(maxsize=8192)  # a pure function of two integers: a seed sweep asks the same (z, n) often
def cusum_p_value(z: int, n: int) -> float:
    """P(max |S_k| >= z) for the symmetric walk of n steps, SP 800-22 §2.13.4 step (4).

    The standard's series (same summation limits), with every term rewritten as a difference of
    normal *upper* tails so that small p-values keep their relative accuracy (no 1 - cdf).
    """
    if z <= 0:
        return 1.0
    sq = math.sqrt(n)
    a = z / sq
    nz = n / z

    def q(x: np.ndarray) -> np.ndarray:  # upper normal tail Q(x)
        return special.ndtr(-x)

    # first sum: k from floor((-n/z + 1)/4) to floor((n/z - 1)/4), terms Phi((4k+1)a) - Phi((4k-1)a)
    k1 = np.arange(math.floor((-nz + 1) / 4), math.floor((nz - 1) / 4) + 1, dtype=np.float64)
    # second sum: k from floor((-n/z - 3)/4) to floor((n/z - 1)/4), terms Phi((4k+3)a) - Phi((4k+1)a)
    k2 = np.arange(math.floor((-nz - 3) / 4), math.floor((nz - 1) / 4) + 1, dtype=np.float64)

    def diff(lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
        # Phi(hi) - Phi(lo) for lo < hi, from upper tails on the side where they are small
        pos = lo >= 0
        out = np.where(pos, q(lo) - q(hi), special.ndtr(hi) - special.ndtr(lo))
        neg = hi <= 0
        return np.where(neg, q(-hi) - q(-lo), out)

    t1 = diff((4 * k1 - 1) * a, (4 * k1 + 1) * a)
    t2 = diff((4 * k2 + 1) * a, (4 * k2 + 3) * a)
    # 1 - sum(t1): the k = 0 term is 1 - 2Q(a); the others are small.
    zero = k1 == 0
    if zero.any():
        one_minus_s1 = 2.0 * float(q(np.array(a))) - float(np.sum(t1[~zero]))
    else:  # only for tiny n, where the range misses k = 0
        one_minus_s1 = 1.0 - float(np.sum(t1))
    p = float(one_minus_s1) + float(np.sum(t2))
    return clip_p(p)


def cumulative_sums(packed: np.ndarray, n_bits: int | None = None,
                    direction: str = "forward") -> CheckResult:
    """Cumulative sums (cusum) test, SP 800-22 §2.13.

    H0: the random walk S_k = sum (2 x_i - 1) behaves like a fair-coin walk.  The statistic is
    z = max_k |S_k| over the forward partial sums, or over the sums taken from the end
    (``direction="backward"``); the p-value is the walk's exact-limit tail of §2.13.4.
    """
    packed, n = as_packed(packed, n_bits)
    need(n, 1, "cumulative sums")
    if direction not in ("forward", "backward"):
        raise InputError(f"cumulative sums: direction must be 'forward' or 'backward', got {direction!r}")
    s, hi, lo = _walk_extremes(packed, n, _BYTE_SUM, _BYTE_MAX, _BYTE_MIN)
    if direction == "forward":
        z = max(hi, -lo)
    else:
        z = max(s - lo, hi - s)
    return CheckResult(
        name="cumulative sums", statistic=float(z), p_value=cusum_p_value(int(z), n),
        null="max |walk| of a fair-coin walk", kind="continuous", n=n,
        details={"direction": direction, "z": int(z), "final_sum": int(s)},
        pooled={"sum": int(s), "max": int(hi), "min": int(lo), "n": n, "direction": direction},
    )


def pool_cumulative_sums(pooled: list[dict]) -> CheckResult:
    """Cumulative sums on the replicates' segments joined end to end, in replicate order.

    Each replicate gives its walk's final sum S and extremes max S_k, min S_k (k = 0..n, S_0 = 0);
    the joined walk's extremes follow exactly (offset each segment by the sums before it), so the
    statistic is the check's on all the replicates' bits at once, with the same exact-limit tail for
    n = sum of the n.  Under H0 the joined segments are one fair-coin sequence.
    """
    direction = pooled[0]["direction"]
    if any(p["direction"] != direction for p in pooled):
        raise ValueError("cumulative sums replicates in different directions cannot be pooled")
    offset = hi = lo = n = 0
    for p in pooled:
        hi = max(hi, offset + int(p["max"]))
        lo = min(lo, offset + int(p["min"]))
        offset += int(p["sum"])
        n += int(p["n"])
    if n < 1:
        raise ValueError("cumulative sums pooling: no bits")
    z = max(hi, -lo) if direction == "forward" else max(offset - lo, hi - offset)
    return CheckResult(
        name="cumulative sums", statistic=float(z), p_value=cusum_p_value(int(z), n),
        null="max |walk| of a fair-coin walk", kind="continuous", n=n,
        details={"direction": direction, "z": int(z), "final_sum": int(offset), "replicates": len(pooled)},
    )


# --------------------------------------------------------------------------- poker (m-bit symbols)


@njit(cache=True)
def _symbol_counts(w, m, k):
    counts = np.zeros(1 << m, dtype=np.int64)
    for i in range(k):
        pos = i * m
        wi = pos >> 6
        sh = pos & 63
        if sh == 0:
            v = w[wi]
        else:
            v = (w[wi] << np.uint64(sh)) | (w[wi + 1] >> np.uint64(64 - sh))
        counts[int(v >> np.uint64(64 - m))] += 1
    return counts


def poker_symbols(packed: np.ndarray, n_bits: int | None = None, m: int = 4) -> CheckResult:
    """Poker test on non-overlapping m-bit symbols (FIPS 140-2 §4.9.1 uses m = 4 on 20,000 bits).

    H0: the k = n // m symbols are uniform on 2^m values.  X = (2^m / k) sum f_i^2 - k, which is
    Pearson's chi-square, ~ chi2(2^m - 1).  Right tail in ``p_value``; the left tail (too even a
    spread, which the FIPS interval also rejects) in ``p_left``.
    """
    packed, n = as_packed(packed, n_bits)
    m = int(m)
    if not 1 <= m <= 16:
        raise InputError(f"poker: m must be in 1..16, got {m}")
    k = n // m
    if k < 1:
        raise InputError(f"poker needs at least {m} bits")
    if m in (4, 8) and (k * m) % 8 == 0:  # whole bytes: one byte histogram
        h = byte_histogram(packed, k * m // 8)
        counts = h if m == 8 else h.reshape(16, 16).sum(axis=1) + h.reshape(16, 16).sum(axis=0)
    else:
        counts = _symbol_counts(to_u64(packed, k * m), m, k)
    return poker_result(counts, m, k)


def poker_result(counts: np.ndarray, m: int, k: int) -> CheckResult:
    """The poker result from the counts of ``k`` m-bit symbols (shared with the one-pass form)."""
    x = float((2**m / k) * np.sum(counts.astype(np.float64) ** 2) - k)
    df = 2**m - 1
    return CheckResult(
        name="poker", statistic=x, p_value=clip_p(special.chdtrc(df, x)),  # = scipy.stats.chi2.sf, bit for bit
        p_left=clip_p(special.chdtr(df, x)), null=f"chi2(df={df})", kind="continuous",
        n=k * m, details={"m": m, "symbols": k, "counts": counts.tolist() if m <= 8 else None},
        pooled={"counts": counts, "df": df, "n": k * m, "name": "poker"},
    )


def poker_from_counts(counts: np.ndarray, params: dict | None = None) -> CheckResult | None:
    """Poker on 8-bit symbols (the byte counts themselves) or 4-bit symbols (high and low nibbles of every
    byte) from the byte-value counts of the whole bytes it reads; None for other m."""
    m = int((params or {}).get("m", 4))
    if m not in (4, 8):
        return None
    h = np.asarray(counts, dtype=np.int64)
    k = 8 * int(h.sum()) // m
    if k < 1:
        raise InputError(f"poker needs at least {m} bits")
    sym = h.copy() if m == 8 else h.reshape(16, 16).sum(axis=1) + h.reshape(16, 16).sum(axis=0)
    return poker_result(sym, m, k)


# --------------------------------------------------------------------------- registry


def _n(params: dict) -> int:
    return int(params["n_bits"])


register(CheckSpec(
    key="monobit frequency", family="bits", title="frequency (monobit) test", view="bits",
    kind="continuous", func=monobit_frequency, values_needed=_n,
    default_params=lambda n: [{"n_bits": n}] if n >= 100 else [],
    source=f"{SP800_22} §2.1", pool=pool_monobit, table=BYTE_COUNTS, from_table=monobit_from_counts,
    cheap=True,  # one fast counting pass: sees every byte of a large budget
))


def _block_frequency_defaults(n: int) -> list[dict]:
    # SP 800-22 §2.2.7: n >= 100, M >= 20, M > 0.01 n, N < 100
    if n < 100:
        return []
    M = max(20, n // 99 + 1)
    N = n // M
    return [{"n_bits": N * M, "M": M}]


register(CheckSpec(
    key="block frequency", family="bits", title="frequency test within a block", view="bits",
    sized=("M",),  # block length, from the data available
    kind="continuous", func=block_frequency, values_needed=_n,
    default_params=_block_frequency_defaults, source=f"{SP800_22} §2.2",
))

register(CheckSpec(
    key="cumulative sums", family="bits", title="cumulative sums test", view="bits",
    kind="continuous", func=cumulative_sums, values_needed=_n,
    default_params=lambda n: ([{"n_bits": n, "direction": "forward"},
                               {"n_bits": n, "direction": "backward"}] if n >= 100 else []),
    source=f"{SP800_22} §2.13", pool=pool_cumulative_sums,
    notes="two registered variants: direction=forward and direction=backward",
))


def _poker_defaults(n: int) -> list[dict]:
    out = []
    for m in (4, 8):
        k = n // m
        if k >= 5 * 2**m * 4:  # >= 20 expected per cell (FIPS: 5000 nibbles, 312 per cell)
            out.append({"n_bits": k * m, "m": m})
    return out


register(CheckSpec(
    key="poker bit symbols", family="bits", title="poker test on m-bit symbols", view="bits",
    kind="continuous", func=poker_symbols, values_needed=_n, default_params=_poker_defaults,
    both_tails=True, source="FIPS 140-2 (2001) §4.9.1 (m = 4); Pearson chi-square on m-bit symbols",
    pool=pool_class_counts, table=BYTE_COUNTS, from_table=poker_from_counts,
    cheap=True,  # one fast counting pass: sees every byte of a large budget
))
