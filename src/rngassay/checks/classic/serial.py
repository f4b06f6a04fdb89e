"""Serial tests on d-tuples of successive uniforms, non-overlapping and overlapping.

Each uniform is put in one of v equal bins (``floor(v u)``), so a d-tuple falls in one of v^d cells.

* **Non-overlapping** (Knuth §3.3.2 B, generalised from pairs to d-tuples): the ``n // d`` tuples
  ``(u_{jd}, ..., u_{jd+d-1})`` are independent; H0 makes their cells a multinomial sample with
  probabilities v^-d.  Pearson chi-square, ``v^d - 1`` d.o.f.
* **Overlapping**: all n tuples starting at every position, taken circularly (the last d - 1 tuples
  wrap round to the start).  The overlapping counts are *not* multinomial, so their naive
  chi-square does not have a chi-square law.  We use Good's first difference

      Δψ²_d = ψ²_d − ψ²_{d−1},  ψ²_m = Σ_cells (N_cell − n v^−m)² / (n v^−m),

  which is asymptotically chi-square with ``v^d − v^{d−1}`` d.o.f. under H0 (Good 1953, J. Roy.
  Statist. Soc. B 15; Knuth §3.3.2 exercise on the serial test [from memory]; NIST SP 800-22
  Rev. 1a §2.11 uses the same statistic on bits, v = 2).  With circular tuples the (d−1)-tuple
  counts are exactly the marginals of the d-tuple counts.  ψ²_0 = 0.

H0 for both: the uniforms are i.i.d. U[0, 1).  Both tails are reported.
"""

from __future__ import annotations

import numpy as np
from numba import njit

from rngassay.checks.registry import CheckSpec, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError
from rngassay.stats import chi2_tails

from .frequency import KNUTH, MIN_EXPECTED_DEFAULT, equiprobable_chi2, need, result_name, to_symbols, uniforms

#: Largest number of cells the default parameters use (memory 8 bytes per cell).
MAX_DEFAULT_CELLS = 1 << 20
#: Hard limit on cells for explicit parameters.
MAX_CELLS = 1 << 26


@njit(cache=True)
def nonoverlapping_counts(sym, d, v):
    """Cell counts of the n // d disjoint d-tuples of symbols in [0, v) (first symbol most significant)."""
    m = sym.size // d
    counts = np.zeros(v**d, dtype=np.int64)
    for t in range(m):
        idx = 0
        base = t * d
        for j in range(d):
            idx = idx * v + sym[base + j]
        counts[idx] += 1
    return counts


@njit(cache=True)
def overlapping_counts(sym, d, v):
    """Cell counts of the n circular overlapping d-tuples (s_i, ..., s_{i+d-1 mod n}), i < n."""
    n = sym.size
    counts = np.zeros(v**d, dtype=np.int64)
    top = v ** (d - 1)
    idx = 0
    for j in range(d):
        idx = idx * v + sym[j % n]
    counts[idx] += 1
    for i in range(1, n):
        k = i + d - 1
        if k >= n:
            k -= n
        idx = (idx - sym[i - 1] * top) * v + sym[k]
        counts[idx] += 1
    return counts


def psi2(counts: np.ndarray, n: int, probs: np.ndarray | None = None) -> float:
    """ψ² = Σ (N − n p)² / (n p) over cells; p = 1/cells when ``probs`` is None."""
    c = counts.astype(np.float64).ravel()
    if probs is None:
        e = n / c.size
        return float(np.sum((c - e) ** 2) / e)
    e = n * np.asarray(probs, dtype=np.float64).ravel()
    return float(np.sum((c - e) ** 2 / e))


def first_difference(counts_d: np.ndarray, v: int, n: int,
                     marg: np.ndarray | None = None) -> tuple[float, float, float]:
    """(Δψ²_d, ψ²_d, ψ²_{d-1}) from circular d-tuple counts (length v^d).

    ``marg`` -- cell probabilities of one symbol (length v) for unequal symbols; None = uniform.
    """
    cells = counts_d.size
    d = int(round(np.log(cells) / np.log(v)))
    if marg is None:
        pd = None
        pd1 = None
    else:
        pd = _product_probs(marg, d)
        pd1 = _product_probs(marg, d - 1) if d > 1 else None
    s_d = psi2(counts_d, n, pd)
    if d == 1:
        return s_d, s_d, 0.0
    counts_d1 = counts_d.reshape(cells // v, v).sum(axis=1)
    s_d1 = psi2(counts_d1, n, pd1)
    return s_d - s_d1, s_d, s_d1


def _product_probs(marg: np.ndarray, d: int) -> np.ndarray:
    p = np.ones(1)
    for _ in range(d):
        p = np.multiply.outer(p, marg).ravel()
    return p


def _check_dv(d: int, v: int, what: str) -> tuple[int, int]:
    d, v = int(d), int(v)
    if d < 1 or v < 2:
        raise InputError(f"{what}: need d >= 1 and v >= 2, got d={d} v={v}")
    if v**d > MAX_CELLS:
        raise InputError(f"{what}: v^d = {v**d} cells is more than {MAX_CELLS}", hint="lower v or d")
    return d, v


def check_serial(data: np.ndarray, d: int = 2, v: int = 8, n: int | None = None) -> CheckResult:
    """Serial test on non-overlapping d-tuples (Knuth §3.3.2 B for d = 2, same method for d > 2).

    H0: the uniforms are i.i.d. U[0, 1): the n // d disjoint tuples fall in the v^d cells with
    equal probabilities.  Pearson chi-square, ``v^d - 1`` d.o.f.; both tails.
    """
    d, v = _check_dv(d, v, "serial")
    u = uniforms(data, n, "serial")
    need(u.size // d, 2, f"serial d={d}")
    counts = nonoverlapping_counts(to_symbols(u, v), d, v)
    x2, df, right, left = equiprobable_chi2(counts)
    m = u.size // d
    return CheckResult(
        name=result_name("serial", {"d": d, "v": v}), statistic=x2, p_value=right, p_left=left,
        null=f"chi2(df={df})", n=m * d,
        details={"tuples": m, "cells": v**d, "expected_per_cell": m / v**d,
                 "empty_cells": int(np.count_nonzero(counts == 0))},
        pooled={"counts": counts},
    )


def check_serial_overlapping(data: np.ndarray, d: int = 2, v: int = 8, n: int | None = None) -> CheckResult:
    """Serial test on overlapping (circular) d-tuples with Good's first-difference statistic.

    H0: the uniforms are i.i.d. U[0, 1).  Statistic Δψ²_d = ψ²_d − ψ²_{d−1} (see module doc),
    asymptotically chi-square with ``v^d − v^{d−1}`` d.o.f. (Good 1953); both tails.
    """
    d, v = _check_dv(d, v, "serial overlapping")
    if d < 2:
        raise InputError("serial overlapping: d must be >= 2 (d = 1 is the equidistribution test)")
    u = uniforms(data, n, "serial overlapping")
    need(u.size, max(d, 2), f"serial overlapping d={d}")
    counts = overlapping_counts(to_symbols(u, v), d, v)
    delta, s_d, s_d1 = first_difference(counts, v, u.size)
    df = v**d - v ** (d - 1)
    right, left = chi2_tails(delta, df)
    return CheckResult(
        name=result_name("serial overlapping", {"d": d, "v": v}), statistic=delta, p_value=right,
        p_left=left, null=f"chi2(df={df})", n=int(u.size),
        details={"psi2_d": s_d, "psi2_d_minus_1": s_d1, "cells": v**d,
                 "expected_per_cell": u.size / v**d, "empty_cells": int(np.count_nonzero(counts == 0))},
        pooled={"counts": counts, "v": v, "d": d, "n": int(u.size), "name": "serial overlapping"},
    )


def pool_first_difference(pooled: list[dict]) -> CheckResult:
    """Good's first difference on the replicates' overlapping-tuple counts added up.

    Each replicate's circular d-tuple table sums to its n; the summed table is the table of all
    tuples (the d − 1 table follows from it the same way), so Δψ²_d on it is the statistic of all
    the data at once, chi-square with v^d − v^(d−1) d.o.f. as for one segment.
    """
    p0 = pooled[0]
    v, d = int(p0["v"]), int(p0["d"])
    if any(int(p["v"]) != v or int(p["d"]) != d for p in pooled):
        raise ValueError("replicates with different cells cannot be pooled")
    counts = np.sum([np.asarray(p["counts"], dtype=np.int64) for p in pooled], axis=0)
    n = int(sum(int(p["n"]) for p in pooled))
    marg = p0.get("marg")
    delta, s_d, s_d1 = first_difference(counts, v, n, None if marg is None else np.asarray(marg))
    df = v**d - v ** (d - 1)
    right, left = chi2_tails(delta, df)
    return CheckResult(name=p0.get("name", "serial overlapping"), statistic=delta, p_value=right, p_left=left,
                       null=f"chi2(df={df})", n=n, details={"psi2_d": s_d, "psi2_d_minus_1": s_d1})


# --------------------------------------------------------------------------- registry


def bins_for(tuples: int, d: int, min_expected: float = MIN_EXPECTED_DEFAULT,
             max_cells: int = MAX_DEFAULT_CELLS) -> int:
    """Largest power of two v with ``tuples / v^d >= min_expected`` and ``v^d <= max_cells`` (0 if none >= 2)."""
    v = 0
    c = 2
    while c**d <= max_cells and tuples >= min_expected * c**d:
        v = c
        c *= 2
    return v


def _serial_defaults(n: int) -> list[dict]:
    """d = 2, 3 on disjoint tuples; v = the largest power of two with >= 10 tuples per cell
    (at most 2^20 cells)."""
    out = []
    for d in (2, 3):
        v = bins_for(n // d, d)
        if v >= 2:
            out.append({"n": n, "d": d, "v": v})
    return out


def _serial_overlapping_defaults(n: int) -> list[dict]:
    """d = 2, 3, 4 on circular overlapping tuples; v = the largest power of two with >= 10
    tuples per cell (at most 2^20 cells)."""
    out = []
    for d in (2, 3, 4):
        v = bins_for(n, d)
        if v >= 2:
            out.append({"n": n, "d": d, "v": v})
    return out


register(CheckSpec(
    key="serial", family="classic", windows=("reversed",), title="serial test on non-overlapping d-tuples", view="uniforms",
    sized=("v",),  # cells per axis, from the data available
    kind="continuous", func=check_serial, values_needed=lambda p: int(p["n"]),
    default_params=_serial_defaults, both_tails=True, source=f"{KNUTH} B",
    notes="d = 2, 3; v = largest power of two with >= 10 tuples per cell, <= 2^20 cells",
))

register(CheckSpec(
    key="serial overlapping", family="classic",
    sized=("v",),  # cells per axis, from the data available
    title="serial test on overlapping d-tuples (first difference of psi-square)", view="uniforms",
    kind="continuous", func=check_serial_overlapping, values_needed=lambda p: int(p["n"]),
    default_params=_serial_overlapping_defaults, both_tails=True, pool=pool_first_difference,
    source=f"Good (1953) J. Roy. Statist. Soc. B 15; {KNUTH} B; NIST SP 800-22 Rev. 1a §2.11 (bits)",
    notes="d = 2, 3, 4; v = largest power of two with >= 10 tuples per cell, <= 2^20 cells",
))
