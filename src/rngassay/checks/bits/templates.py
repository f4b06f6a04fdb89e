"""Template-matching checks on bits: non-overlapping and overlapping occurrences of a pattern.

Null hypothesis: the bits are independent fair coin flips, so the number of occurrences of a
fixed m-bit template in each block follows its fair-coin distribution.
Methods: NIST SP 800-22 Rev. 1a §2.7 (non-overlapping) and §2.8 (overlapping, with the class
probabilities corrected in Rev. 1a after Hamano & Kaneko (2007), IEICE Trans. Fundamentals
E90-A(1):115-121).  Matching is word-parallel: 64 start positions per uint64 operation.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Sequence
from fractions import Fraction

import numpy as np
from numba import njit

from rngassay.checks.lawcache import kept
from rngassay.checks.registry import CheckSpec, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError

from ._common import as_packed, chi2_counts, clz64, igamc, popcount64, range_ones, to_u64
from .frequency import pool_class_counts

SP800_22 = "NIST SP 800-22 Rev. 1a (2010)"

# Overlapping template (m = 9 ones, M = 1032): class probabilities for 0, 1, 2, 3, 4, >= 5 matches.
OVERLAPPING_PROBS_REV1A = (0.364091, 0.185659, 0.139381, 0.100571, 0.070432, 0.139865)
OVERLAPPING_PROBS_FIRST_EDITION = (0.367879, 0.183940, 0.137955, 0.099634, 0.069935, 0.140657)

# Non-overlapping template: the replicates' chi-squares are pooled (summed, df added) only when a block
# expects at least this many matches.  Each term (W - mu)^2 / sigma^2 has variance about 2 + 1/mu
# (W is nearly Poisson), not the 2 of chi2(1); summed over R N blocks the excess would make the pooled
# tail anti-conservative for small mu (mu = 2: variance 25 % too large).  At mu >= 50 it is <= 1 %.
POOL_MIN_MEAN = 50.0


# --------------------------------------------------------------------------- kernels


@njit(cache=True)
def _match_mask(w, n_bits, tmpl, m):
    """Bit p of the result (MSB-first) is 1 iff bits [p, p+m) equal the template (p <= n - m)."""
    nw = w.size - 1
    out = np.zeros(nw + 1, dtype=np.uint64)
    allb = np.uint64(0xFFFFFFFFFFFFFFFF)
    inv = np.empty(m, dtype=np.uint64)
    for j in range(m):
        bj = (tmpl >> np.uint64(m - 1 - j)) & np.uint64(1)
        inv[j] = np.uint64(0) if bj else allb
    last = n_bits - m  # last valid start
    if last < 0:
        return out
    lw = last >> 6
    for i in range(lw + 1):
        x = w[i]
        nx = w[i + 1]
        acc = x ^ inv[0]
        for j in range(1, m):
            y = (x << np.uint64(j)) | (nx >> np.uint64(64 - j))
            acc &= y ^ inv[j]
        out[i] = acc
    out[lw] &= allb << np.uint64(63 - (last & 63))
    return out


@njit(cache=True)
def _block_counts(mask, M, N, m):
    """Matches starting in [b M, b M + M - m] for each block b (overlapping count)."""
    out = np.empty(N, dtype=np.int64)
    for b in range(N):
        out[b] = range_ones(mask, b * M, b * M + M - m + 1)
    return out


@njit(cache=True)
def _greedy_counts(mask, M, N, m):
    """Non-overlapping count per block: scan matches left to right, skipping m bits after each."""
    out = np.zeros(N, dtype=np.int64)
    allb = np.uint64(0xFFFFFFFFFFFFFFFF)
    for b in range(N):
        a = b * M
        e = b * M + M - m  # last start
        nxt = a
        cnt = 0
        for i in range(a >> 6, (e >> 6) + 1):
            y = mask[i]
            if i == (a >> 6):
                y &= allb >> np.uint64(a & 63)
            if i == (e >> 6):
                y &= allb << np.uint64(63 - (e & 63))
            while y:
                t = int(clz64(y))
                p = 64 * i + t
                y &= ~(np.uint64(1) << np.uint64(63 - t))
                if p >= nxt:
                    cnt += 1
                    nxt = p + m
        out[b] = cnt
    return out


# --------------------------------------------------------------------------- template helpers


def _parse_template(template: str | Sequence[int]) -> tuple[str, int, int]:
    s = template if isinstance(template, str) else "".join(str(int(b)) for b in template)
    s = s.replace(" ", "")
    if not s or any(ch not in "01" for ch in s) or len(s) > 63:
        raise InputError(f"template must be a bit string of length 1..63, got {template!r}")
    return s, len(s), int(s, 2)


def self_overlaps(template: str) -> list[int]:
    """Shifts j in 0..m-1 at which the template overlaps itself consistently (j = 0 always)."""
    m = len(template)
    return [j for j in range(m) if template[j:] == template[: m - j]]


def renewal_moments(template: str) -> tuple[Fraction, Fraction]:
    """Exact mean and variance of the waiting time T until the template first appears in fair
    bits, from the probability generating function G(z) = (z/2)^m / ((z/2)^m + (1 - z) c(z/2)),
    c(t) = sum over self-overlap shifts j of t^j (Guibas & Odlyzko 1981, J. Comb. Theory A 30:183).
    """
    m = len(template)
    shifts = self_overlaps(template)
    half = Fraction(1, 2)
    # numerator N(z) = (z/2)^m; denominator D(z) = (z/2)^m + (1 - z) * sum_j (z/2)^j
    # evaluate N, N', N'', D, D', D'' at z = 1
    N0 = half**m
    N1 = m * half**m
    N2 = m * (m - 1) * half**m
    c0 = sum(half**j for j in shifts)
    c1 = sum(j * half**j for j in shifts)
    D0 = N0  # (1 - z) term vanishes
    D1 = N1 - c0
    D2 = N2 - 2 * c1
    g1 = (N1 * D0 - N0 * D1) / D0**2
    g2 = ((N2 * D0 - N0 * D2) * D0 - 2 * D1 * (N1 * D0 - N0 * D1)) / D0**3
    return g1, g2 + g1 - g1 * g1


def overlapping_count_probs(template: str, M: int, K: int = 5) -> np.ndarray:
    """Exact P(#overlapping occurrences in M fair bits = 0, 1, ..., K-1, >= K) (cached)."""
    return np.array(_overlapping_count_probs(template, int(M), int(K)))


@functools.lru_cache(maxsize=64)
@kept  # computed once per machine
def _overlapping_count_probs(template: str, M: int, K: int) -> tuple[float, ...]:
    """Exact P(#overlapping occurrences in M fair bits = 0, 1, ..., K-1, >= K), by dynamic
    programming over the template's matching automaton (Knuth-Morris-Pratt failure links)."""
    m = len(template)
    fail = [0] * (m + 1)
    k = 0
    for i in range(1, m):
        while k and template[i] != template[k]:
            k = fail[k]
        if template[i] == template[k]:
            k += 1
        fail[i + 1] = k
    # transition table: state s (matched prefix length, 0..m-1 after folding m) x bit -> (s', hit)
    nxt = np.zeros((m, 2), dtype=np.int64)
    hit = np.zeros((m, 2), dtype=bool)
    for s in range(m):
        for bit in (0, 1):
            c = str(bit)
            t = s
            while t and template[t] != c:
                t = fail[t]
            if template[t] == c:
                t += 1
            if t == m:
                hit[s, bit] = True
                t = fail[m]
            nxt[s, bit] = t
    dist = np.zeros((m, K + 1))
    dist[0, 0] = 1.0
    for _ in range(M):
        new = np.zeros_like(dist)
        for s in range(m):
            row = dist[s] * 0.5
            for bit in (0, 1):
                t = nxt[s, bit]
                if hit[s, bit]:
                    new[t, 1:] += row[:-1]
                    new[t, K] += row[K]
                else:
                    new[t] += row
        dist = new
    return tuple(dist.sum(axis=0).tolist())


def first_edition_probs(m: int, M: int, K: int = 5) -> np.ndarray:
    """Class probabilities of the first edition of SP 800-22 (compound-Poisson approximation):
    P(0) = e^-eta, P(u) = e^-eta 2^-u sum_{l=1}^{u} C(u-1, l-1) eta^l / l!, eta = (M-m+1)/2^(m+1)."""
    eta = (M - m + 1) / 2.0 ** (m + 1)
    p = [math.exp(-eta)]
    for u in range(1, K):
        s = sum(math.comb(u - 1, l - 1) * eta**l / math.factorial(l) for l in range(1, u + 1))
        p.append(math.exp(-eta) * s / 2.0**u)
    p.append(1.0 - sum(p))
    return np.array(p)


# --------------------------------------------------------------------------- checks


def non_overlapping_template(packed: np.ndarray, n_bits: int | None = None,
                             template: str = "000000001", blocks: int = 8) -> CheckResult:
    """Non-overlapping template matching test, SP 800-22 §2.7.

    The sequence is cut into N = ``blocks`` blocks of M = n // N bits; W_j counts the template's
    occurrences in block j scanning left to right and skipping m bits after each match.
    chi2 = sum (W_j - mu)^2 / sigma^2 ~ chi2(N).  For aperiodic templates (no self-overlap, as
    in the standard) mu = (M - m + 1)/2^m, sigma^2 = M (2^-m - (2m - 1) 2^-2m); for periodic ones
    the renewal-theory moments mu = (M - m + 1)/E T, sigma^2 = M Var T / (E T)^3 are used.
    """
    packed, n = as_packed(packed, n_bits)
    tmpl, m, value = _parse_template(template)
    N = int(blocks)
    if N < 1:
        raise InputError(f"non-overlapping template: blocks must be >= 1, got {blocks}")
    M = n // N
    if M < m:
        raise InputError(f"non-overlapping template: blocks of {M} bits are shorter than the template")
    mask = _match_mask(to_u64(packed, N * M), N * M, np.uint64(value), m)
    shifts = self_overlaps(tmpl)
    aperiodic = shifts == [0]
    if aperiodic:
        counts = _block_counts(mask, M, N, m)
        mu = (M - m + 1) / 2.0**m
        var = M * (1.0 / 2.0**m - (2 * m - 1) / 2.0 ** (2 * m))
    else:
        counts = _greedy_counts(mask, M, N, m)
        et, vt = renewal_moments(tmpl)
        mu = (M - m + 1) / float(et)
        var = M * float(vt) / float(et) ** 3
    chi2 = float(np.sum((counts - mu) ** 2) / var)
    return CheckResult(
        name="non-overlapping template", statistic=chi2, p_value=igamc(N / 2.0, chi2 / 2.0),
        null=f"chi2(df={N})", kind="continuous", n=N * M,
        details={"template": tmpl, "blocks": N, "M": M, "mu": mu, "var": var, "aperiodic": aperiodic,
                 "counts": counts.tolist() if N <= 64 else None},
        # a sum over disjoint blocks: the replicates' sums are the statistic over all their blocks
        pooled={"statistic": chi2, "df": N} if mu >= POOL_MIN_MEAN else None,
    )


def _overlapping_probs(probabilities: str | Sequence[float], tmpl: str, M: int, K: int) -> np.ndarray:
    if isinstance(probabilities, str):
        if probabilities == "exact":
            return overlapping_count_probs(tmpl, M, K)
        if probabilities in ("rev1a", "first-edition"):
            if not (tmpl == "1" * 9 and M == 1032 and K == 5):
                raise InputError(f"probabilities={probabilities!r} are printed only for 9 ones, M=1032, K=5")
            return np.array(OVERLAPPING_PROBS_REV1A if probabilities == "rev1a"
                            else OVERLAPPING_PROBS_FIRST_EDITION)
        raise InputError("probabilities must be 'exact', 'rev1a', 'first-edition' or a list")
    probs = np.asarray(probabilities, dtype=np.float64)
    if probs.size != K + 1:
        raise InputError(f"overlapping template: need {K + 1} class probabilities")
    return probs


def overlapping_template(packed: np.ndarray, n_bits: int | None = None, template: str = "111111111",
                         M: int = 1032, K: int = 5,
                         probabilities: str | Sequence[float] = "exact") -> CheckResult:
    """Overlapping template matching test, SP 800-22 §2.8.

    N = n // M blocks; in each, count overlapping occurrences of the template (0 .. K-1, >= K).
    chi2 over the K + 1 classes ~ chi2(K).  ``probabilities``: "exact" (default; computed for any
    template and M; equals the corrected Rev. 1a table for 9 ones and M = 1032), "rev1a" (that table
    as printed), "first-edition" (the first edition's compound-Poisson values), or a sequence.
    """
    packed, n = as_packed(packed, n_bits)
    tmpl, m, value = _parse_template(template)
    M, K = int(M), int(K)
    N = n // M
    if M < m or N < 1 or K < 1:
        raise InputError(f"overlapping template: need at least one block of M={M} >= {m} bits, have {n}")
    probs = _overlapping_probs(probabilities, tmpl, M, K)
    mask = _match_mask(to_u64(packed, N * M), N * M, np.uint64(value), m)
    counts = _block_counts(mask, M, N, m)
    classes = np.bincount(np.minimum(counts, K), minlength=K + 1)
    chi2, expected = chi2_counts(classes, probs)
    return CheckResult(
        name="overlapping template", statistic=chi2, p_value=igamc(K / 2.0, chi2 / 2.0),
        null=f"chi2(df={K})", kind="continuous", n=N * M,
        details={"template": tmpl, "M": M, "blocks": N, "counts": classes.tolist(),
                 "expected": expected.tolist()},
        # disjoint blocks: the replicates' class counts add up to the counts of all their blocks
        pooled={"counts": classes, "probs": probs, "df": K, "n": N * M, "name": "overlapping template"},
    )


# --------------------------------------------------------------------------- registry


def _nonoverlapping_defaults(n: int) -> list[dict]:
    # SP 800-22 §2.7.7 / Appendix B: m = 9, N = 8 blocks, M > 0.01 n
    if n < 8 * 1000:
        return []
    return [{"n_bits": n // 8 * 8, "template": "000000001", "blocks": 8},
            {"n_bits": n // 8 * 8, "template": "111111110", "blocks": 8}]


register(CheckSpec(
    key="non-overlapping template", family="bits", title="non-overlapping template matching test",
    view="bits", kind="continuous", func=non_overlapping_template,
    values_needed=lambda p: int(p["n_bits"]), default_params=_nonoverlapping_defaults,
    source=f"{SP800_22} §2.7",
))


def _overlapping_defaults(n: int) -> list[dict]:
    # SP 800-22 §2.8.7: m = 9, M = 1032; N * min(pi) >= 5 needs N >= 72 blocks (standard: n >= 10^6)
    N = n // 1032
    if N < 100:
        return []
    return [{"n_bits": N * 1032, "template": "111111111", "M": 1032}]


register(CheckSpec(
    key="overlapping template", family="bits", title="overlapping template matching test",
    view="bits", kind="continuous", func=overlapping_template,
    values_needed=lambda p: int(p["n_bits"]), default_params=_overlapping_defaults,
    source=f"{SP800_22} §2.8; Hamano & Kaneko (2007)", pool=pool_class_counts,
))
