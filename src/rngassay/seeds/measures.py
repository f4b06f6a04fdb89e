"""The statistics of the seed sweep: pure functions from arrays to p-values.

Each function states its null hypothesis. Throughout, the null is: the streams of distinct seeds are
independent sequences of independent uniform bytes. Every function returns a dict with ``p_value``
(never 0: clipped at :data:`rngassay.stats.P_FLOOR`), ``statistic``, ``null`` and small ``details``.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from scipy import special
from scipy import stats as sps

from .. import stats
from ..checks.result import CheckResult
from ..stats import bonferroni, sidak

MIN_EXPECTED = 5.0  # chi-square cells need at least this many expected counts (common practice)


def _result(name: str, d: dict[str, Any]) -> CheckResult:
    """A row check's outcome as the battery's result type (details stay as they are for the report)."""
    return CheckResult(name=name, statistic=float(d["statistic"]), p_value=float(d["p_value"]), null=d["null"],
                       kind=d["kind"], details=d["details"])


def _binom_two_sided(k: np.ndarray, n: np.ndarray, p: float) -> np.ndarray:
    """Doubled smaller exact binomial tail, elementwise (each tail includes the observed value)."""
    k = np.asarray(k, dtype=np.float64)
    n = np.asarray(n, dtype=np.float64)
    right = sps.binom.sf(k - 1, n, p)
    left = sps.binom.cdf(k, n, p)
    return np.clip(np.minimum(1.0, 2.0 * np.minimum(right, left)), stats.P_FLOOR, 1.0)


# ---------------------------------------------------------------------------------------------- early bytes


def early_bytes(first: np.ndarray) -> CheckResult | None:
    """Distribution of each early output byte across seeds.

    H0: for each position j < P, byte j of the streams of the S seeds are S independent uniform bytes.
    Cells: the byte's top b bits, b = min(8, floor(log2(S / 5))) so every cell expects >= 5 seeds
    (all 256 values from S >= 1280 seeds). Per position two statistics: Pearson's chi-square on the
    2^b cells (df = 2^b - 1, both tails: too uneven and too even), and the most extreme single cell
    (exact binomial Binomial(S, 2^-b), two-sided, Sidak over the 2^b cells) -- the second catches one
    strongly favoured value (e.g. RC4's second output byte is 0 with probability 2/256: Mantin and
    Shamir 2001, FSE, LNCS 2355) that the chi-square dilutes over 255 degrees of freedom. A position's
    p-value is the Bonferroni minimum of the two; the check's p-value is the Bonferroni minimum over the
    P positions (the family-wise rejection of Holm's procedure within the positions is the same event).
    Returns None when fewer than 10 seeds are given (b < 1).
    """
    S, P = first.shape
    if S < 10 or P == 0:
        return None
    b = int(min(8, math.floor(math.log2(S / MIN_EXPECTED))))
    K = 1 << b
    cells = (first >> np.uint8(8 - b)).astype(np.int64)
    counts = np.zeros((P, K), dtype=np.int64)
    for j in range(P):  # a loop over positions; the counting is vectorised
        counts[j] = np.bincount(cells[:, j], minlength=K)
    e = S / K
    chi2 = ((counts - e) ** 2).sum(axis=1) / e
    right = sps.chi2.sf(chi2, K - 1)
    left = sps.chi2.cdf(chi2, K - 1)
    p_chi = np.clip(np.minimum(1.0, 2.0 * np.minimum(right, left)), stats.P_FLOOR, 1.0)
    p_cells = _binom_two_sided(counts, np.full_like(counts, S), 1.0 / K)
    cell_min = p_cells.min(axis=1)
    p_cell = np.array([sidak(float(x), K) for x in cell_min])
    p_pos = np.clip(np.minimum(1.0, 2.0 * np.minimum(p_chi, p_cell)), stats.P_FLOOR, 1.0)
    jw = int(np.argmin(p_pos))
    cw = int(np.argmin(p_cells[jw]))
    p = bonferroni(p_pos.tolist())
    return _result("early bytes", {
        "p_value": p,
        "statistic": float(chi2[jw]),
        "null": f"per position: chi2(df={K - 1}) and Binomial({S}, 1/{K}) per cell",
        "kind": "discrete",
        "position_p": [float(x) for x in p_pos],
        "details": {
            "seeds": S, "positions": P, "cells": K, "cell_bits": b, "expected_per_cell": e,
            "worst_position": jw, "worst_position_chi2": float(chi2[jw]),
            "worst_position_p_chi2": float(p_chi[jw]), "worst_position_p_cell": float(p_cell[jw]),
            "worst_cell_values": f"{cw << (8 - b)}..{((cw + 1) << (8 - b)) - 1}",
            "worst_cell_count": int(counts[jw, cw]),
            "method": "Bonferroni over positions of min(chi-square two-sided, Sidak max-cell binomial) x 2",
        },
    })


# ---------------------------------------------------------------------------------------------- avalanche


def avalanche_edges(bases: np.ndarray, bits: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, int]:
    """Pairs (seed, seed with bit j flipped) for every base seed and j < ``bits``, kept as a forest.

    Duplicate pairs and pairs that would close a cycle in the graph of seeds are dropped (union-find),
    so that the output differences of the kept pairs are mutually independent under H0 (the XORs along
    the edges of a forest of independent uniform strings are independent uniform strings).
    Returns (a, b, bit, dropped).
    """
    parent: dict[int, int] = {}

    def find(x: int) -> int:
        root = x
        while parent.get(root, root) != root:
            root = parent[root]
        while parent.get(x, x) != root:  # path compression
            parent[x], x = root, parent[x]
        return root

    a_out: list[int] = []
    b_out: list[int] = []
    j_out: list[int] = []
    dropped = 0
    for s in (int(x) for x in bases):  # a loop over seeds and bit positions (bookkeeping, no data)
        for j in range(bits):
            t = s ^ (1 << j)
            rs, rt = find(s), find(t)
            if rs == rt:
                dropped += 1
                continue
            parent[rs] = rt
            a_out.append(s)
            b_out.append(t)
            j_out.append(j)
    return (np.array(a_out, dtype=np.uint64), np.array(b_out, dtype=np.uint64), np.array(j_out, dtype=np.int64),
            dropped)


def avalanche(distances: np.ndarray, flipped_bit: np.ndarray, nbits: int, seed_bits: int) -> CheckResult | None:
    """Seed avalanche: how many of the first ``nbits`` output bits change when one seed bit flips.

    H0: the first outputs of the two seeds of each pair are independent uniform strings, so each distance
    is Binomial(nbits, 1/2), independently over the pairs (a forest: see :func:`avalanche_edges`).
    Statistics: the pooled distance, Binomial(E * nbits, 1/2), both tails (too few changes: a weak
    mixer; too many: outputs anti-correlated with the seed); and per flipped seed bit j the pooled
    distance of its pairs, both tails, Sidak over the bits. p = Bonferroni minimum of the two.
    """
    E = int(distances.size)
    if E == 0:
        return None
    D = int(distances.sum())
    n = E * nbits
    right, left = stats.binomial_tails(D, n, 0.5)
    p_pool = stats.discrete_two_sided(right, left)
    Dj = np.bincount(flipped_bit, weights=distances, minlength=seed_bits).astype(np.int64)
    Ej = np.bincount(flipped_bit, minlength=seed_bits)
    have = Ej > 0
    pj = np.ones(seed_bits)
    pj[have] = _binom_two_sided(Dj[have], Ej[have] * nbits, 0.5)
    jw = int(np.argmin(pj))
    p_bits = sidak(float(pj[jw]), int(have.sum()))
    p = bonferroni([p_pool, p_bits])
    mean_j = np.where(have, Dj / np.maximum(Ej, 1), np.nan)
    return _result("avalanche", {
        "p_value": p,
        "statistic": float(D),
        "null": f"Binomial({n}, 1/2)",
        "kind": "discrete",
        "details": {
            "pairs": E, "output_bits": nbits, "mean_distance": D / E, "expected_distance": nbits / 2,
            "p_pooled": float(p_pool), "p_worst_bit": float(pj[jw]), "worst_seed_bit": jw,
            "worst_seed_bit_mean_distance": float(mean_j[jw]),
            "mean_distance_by_seed_bit": [None if not h else round(float(v), 4) for v, h in zip(mean_j, have)],
            "method": "Bonferroni minimum of the pooled binomial and the Sidak minimum over flipped bits",
        },
    })


# --------------------------------------------------------------------------------------- cross-correlation


def cross_correlation(z: np.ndarray, lags: int, pair_seeds: np.ndarray | None = None) -> CheckResult | None:
    """Lagged correlation between the streams of adjacent seeds, from the z-scores of
    :func:`rngassay.seeds.kernels.cross_z` (one row per pair, one column per lag -L..L).

    H0: each z is N(0, 1), the z's approximately independent (distinct alignments of independent
    uniform streams are uncorrelated). Statistics: the largest |z|, two-sided normal tail, Sidak over
    all pairs x lags; and per lag the sum of z^2 over the pairs, chi2(df = pairs), right tail,
    Bonferroni over the lags (catches a weak correlation shared by many pairs). p = Bonferroni minimum.
    """
    if z.size == 0:
        return None
    npairs, nl = z.shape
    az = np.abs(z)
    idx = np.unravel_index(int(np.argmax(az)), z.shape)
    zmax = float(z[idx])
    p_one = 2.0 * float(special.ndtr(-abs(zmax)))
    p_max = sidak(stats.clip_p(p_one), int(z.size))
    q = (z * z).sum(axis=0)
    p_lag = np.clip(sps.chi2.sf(q, npairs), stats.P_FLOOR, 1.0)
    lw = int(np.argmin(p_lag))
    p_chi = bonferroni(p_lag.tolist())
    p = bonferroni([p_max, p_chi])
    worst_pair = None
    if pair_seeds is not None and len(pair_seeds):
        worst_pair = [int(pair_seeds[idx[0], 0]), int(pair_seeds[idx[0], 1])]
    return _result("cross-correlation", {
        "p_value": p,
        "statistic": zmax,
        "null": f"N(0,1) per pair and lag; chi2(df={npairs}) per lag",
        "kind": "continuous",
        "details": {
            "pairs": npairs, "lags": f"{-lags}..{lags}", "max_abs_z": abs(zmax), "max_z_lag": int(idx[1]) - lags,
            "max_z_pair": worst_pair, "p_max": float(p_max), "p_sum_squares": float(p_chi),
            "worst_lag_sum_squares": float(q[lw]), "worst_lag": lw - lags,
            "method": "Bonferroni minimum of Sidak max |z| and the per-lag chi-square minimum",
        },
    })


# ------------------------------------------------------------------------------------- duplicates/overlaps


def overlaps(
    seeds: np.ndarray,
    digests: np.ndarray,
    rows: np.ndarray,
    pos: np.ndarray,
    hi: np.ndarray,
    lo: np.ndarray,
    spacing: int,
    stream_bytes: int,
) -> CheckResult:
    """Identical streams and streams that overlap (one is a shifted copy of part of another).

    ``digests``: SHA-256 of each seed's stream; (rows, pos, hi, lo): the content-selected 16-byte windows
    of :func:`rngassay.seeds.kernels.anchors` (row = index into ``seeds``).

    H0: independent uniform streams. Under H0 two windows from different streams are equal with
    probability 2^-128, and two kept windows with probability ``spacing`` * 2^-128 (they are uniform on
    the kept set, which holds 2^128 / spacing values); two streams of B bytes are identical with
    probability 2^-8B. The p-value is 1 when nothing is found, else the birthday (union) bound on seeing
    any such match: C(N, 2) * spacing * 2^-128 + C(S, 2) * 2^-8B, N the number of kept windows.
    Identical streams are reported as duplicates; other matches as overlaps with their shift in bytes.
    """
    S = len(seeds)
    # identical streams: equal SHA-256 digests
    dig = np.ascontiguousarray(digests).view("V32").ravel()
    order = np.argsort(dig, kind="stable")
    same = np.flatnonzero(dig[order][1:] == dig[order][:-1])
    group = np.arange(S)  # representative of each stream's class of identical streams
    dup_examples: list[list[int]] = []
    for j in same:  # loop over found duplicates only
        a, b = int(order[j]), int(order[j + 1])
        group[b] = group[a]
        if len(dup_examples) < 10:
            dup_examples.append([int(seeds[group[a]]), int(seeds[b])])
    n_dup = int(same.size)  # streams identical to an earlier one (in digest order)
    # overlaps: equal kept windows in streams that are not identical
    n_over = 0
    examples: list[dict[str, int]] = []
    N = int(rows.size)
    if N > 1:
        o = np.lexsort((lo, hi))
        hs, ls, rs, ps = hi[o], lo[o], rows[o], pos[o]
        eq = (hs[1:] == hs[:-1]) & (ls[1:] == ls[:-1])
        cls = group[rs]
        cross = eq & (cls[1:] != cls[:-1])
        idx = np.flatnonzero(cross)
        pairs_seen: set[tuple[int, int, int]] = set()
        for j in idx:  # loop over found matches only
            ra, pa, rb, pb = int(rs[j]), int(ps[j]), int(rs[j + 1]), int(ps[j + 1])
            if ra > rb:
                ra, pa, rb, pb = rb, pb, ra, pa
            shift = pa - pb  # stream b from byte 0 lines up with stream a from byte `shift`
            key = (int(group[ra]), int(group[rb]), shift)
            if key in pairs_seen:
                continue
            pairs_seen.add(key)
            n_over += 1
            if len(examples) < 10:
                examples.append({"seed_a": int(seeds[ra]), "seed_b": int(seeds[rb]), "shift_bytes": shift})
    found = n_dup + n_over
    if found:
        log2_bound_windows = (math.log2(max(N, 2)) * 2 - 1) + math.log2(spacing) - 128
        bound = 2.0**log2_bound_windows + (S * (S - 1) / 2) * 2.0 ** max(-8 * stream_bytes, -1100)
        p = stats.clip_p(min(1.0, bound))
    else:
        p = 1.0
    return _result("duplicates and overlaps", {
        "p_value": p,
        "statistic": float(found),
        "null": "no equal 128-bit windows across seeds (birthday bound)",
        "kind": "discrete",
        "details": {
            "seeds": S, "duplicate_streams": n_dup, "overlapping_pairs_found": n_over,
            "duplicates": dup_examples, "overlaps": examples,
            "windows_compared": N, "window_bytes": 16, "window_spacing": spacing,
            "note": "duplicate_streams: streams equal to another seed's stream; overlaps: pairs (seed_a, seed_b, "
                    "shift s) found on a shared 16-byte window: the stream of seed_b from byte 0 lines up with the "
                    "stream of seed_a from byte s (negative s: the other way round); the count of overlapping "
                    "pairs is a lower bound (only neighbours in sorted window order are paired)",
        },
    })


def overlap_detection_length(spacing: int, miss: float = 1e-3) -> int:
    """Overlap length (bytes) found with probability at least 1 - ``miss``: windows are kept independently
    with probability 1/spacing per position (approximately), so P(no kept window) ~ exp(-(L - 15)/spacing)."""
    return int(math.ceil(spacing * math.log(1.0 / miss))) + 15
