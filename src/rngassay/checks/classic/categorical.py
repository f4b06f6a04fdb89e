"""Checks on categorical outcomes (view "integers": outcomes in [0, k), k from ``--range``).

H0 throughout: the outcomes are i.i.d. and uniform on the k categories (a fair die, wheel, draw).

* **categorical frequency** — counts of the k outcomes.  Pearson chi-square with k − 1 d.o.f.
  (both tails); when the expected count per category is below 5 and the exact computation is
  feasible (at most 10^7 outcome vectors), the exact multinomial p-value by probability ordering
  (``rngassay.stats.exact_multinomial_p``) instead — its p-values are discrete (result kind
  "discrete"; ``pooled`` carries the counts, which add up across replicates to a multinomial
  sample again).
* **categorical serial** — overlapping circular pairs (d = 2) or triples (d = 3) of successive
  outcomes with Good's first-difference statistic Δψ²_d = ψ²_d − ψ²_{d−1}, asymptotically
  chi-square with k^d − k^{d−1} d.o.f. (Good 1953; Knuth §3.3.2 B; same statistic as
  :mod:`rngassay.checks.classic.serial`).  Both tails.

  Coarser cells when k^d is too large for the data: the outcomes are merged into g groups of
  neighbouring categories, group(x) = floor(x g / k), with g the largest number for which the
  rarest d-tuple cell still expects >= 5 tuples.  When g does not divide k the groups have unequal
  probabilities (|group| / k); ψ² then uses the product cell probabilities, and the first
  difference keeps its chi-square limit with g^d − g^{d−1} d.o.f. (the serial-test limit holds for
  unequal letter probabilities: Marsaglia (2005), J. Stat. Softw. 14(13) [from memory]; confirmed
  by this module's calibration tests).  The grouping is reported in the check name
  ("groups=g").  Non-overlapping tuples were not chosen: they need d times more data for the
  same cells.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from rngassay.checks.registry import CheckSpec, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError
from rngassay.stats import EXACT_MULTINOMIAL_MAX_OUTCOMES, chi2_tails, exact_multinomial_p

from .frequency import KNUTH, equiprobable_chi2, result_name, small_list, take
from .serial import MAX_CELLS, first_difference, overlapping_counts, pool_first_difference

#: Smallest expected count per cell for the chi-square form (common practice, Cochran's rule).
MIN_EXPECTED = 5.0


@njit(cache=True)
def _outcome_counts(x, k):
    """Counts of outcomes in [0, k); returns (counts, number of values outside [0, k))."""
    counts = np.zeros(k, dtype=np.int64)
    bad = 0
    for i in range(x.size):
        v = x[i]
        if v < 0 or v >= k:
            bad += 1
        else:
            counts[v] += 1
    return counts, bad


def _outcomes(data: np.ndarray, k: int, n: int | None, what: str) -> tuple[np.ndarray, np.ndarray]:
    k = int(k)
    if k < 2:
        raise InputError(f"{what}: k must be >= 2, got {k}")
    x = take(data, n, what, np.int64)
    counts, bad = _outcome_counts(x, k)
    if bad:
        raise InputError(f"{what}: {bad} outcome(s) outside [0, {k})", hint="check --range")
    return x, counts


def check_categorical_frequency(data: np.ndarray, k: int, n: int | None = None) -> CheckResult:
    """Frequency test on categorical outcomes (Knuth §3.3.2 A on the integers 0..k-1).

    H0: i.i.d. uniform outcomes on [0, k).  Pearson chi-square (k − 1 d.o.f., both tails), or the
    exact multinomial p-value when expected counts are below 5 and enumeration is feasible.
    """
    x, counts = _outcomes(data, k, n, "categorical frequency")
    m = int(x.size)
    if m < 1:
        raise InputError("categorical frequency: no outcomes")
    k = int(k)
    expected = m / k
    name = result_name("categorical frequency", {"k": k})
    details = {"expected_per_category": expected, "counts": small_list(counts, 64)}
    if expected < MIN_EXPECTED and math.comb(m + k - 1, k - 1) <= EXACT_MULTINOMIAL_MAX_OUTCOMES:
        p = exact_multinomial_p(counts, np.full(k, 1.0 / k))
        x2 = float(np.sum((counts - expected) ** 2) / expected)
        return CheckResult(
            name=name, statistic=x2, p_value=p, null=f"exact multinomial(n={m}, k={k}, uniform)",
            kind="discrete", n=m, details={**details, "method": "exact multinomial"},
            pooled={"counts": counts.tolist(), "k": k},
        )
    x2, df, right, left = equiprobable_chi2(counts)
    method = "chi-square" if expected >= MIN_EXPECTED else "chi-square (expected < 5: approximate)"
    return CheckResult(
        name=name, statistic=x2, p_value=right, p_left=left, null=f"chi2(df={df})", n=m,
        details={**details, "method": method}, pooled={"counts": counts, "k": k},
    )


def group_sizes(k: int, g: int) -> np.ndarray:
    """Number of categories in each group under group(x) = floor(x g / k)."""
    x = np.arange(k, dtype=np.int64)
    return np.bincount(x * g // k, minlength=g)


def choose_groups(k: int, d: int, n: int, min_expected: float = MIN_EXPECTED,
                  max_cells: int = MAX_CELLS) -> int:
    """Largest g <= k whose rarest d-tuple cell expects >= min_expected of n tuples
    (and g^d <= max_cells); 2 when none does."""
    for g in range(k, 1, -1):
        if g**d > max_cells:
            continue
        pmin = group_sizes(k, g).min() / k
        if n * pmin**d >= min_expected:
            return g
    return 2


def check_categorical_serial(data: np.ndarray, k: int, d: int = 2, groups: int | None = None,
                             n: int | None = None) -> CheckResult:
    """Serial test on overlapping pairs (d=2) or triples (d=3) of successive categorical outcomes.

    H0: i.i.d. uniform outcomes on [0, k).  Good's first difference Δψ²_d on circular tuples of
    the outcomes (or of g coarser groups, see module doc), chi-square with g^d − g^{d−1} d.o.f.,
    both tails.  ``groups=None`` chooses g with :func:`choose_groups`.
    """
    d = int(d)
    if not 2 <= d <= 4:
        raise InputError(f"categorical serial: d must be 2, 3 or 4, got {d}")
    x, _ = _outcomes(data, k, n, "categorical serial")
    k = int(k)
    m = int(x.size)
    if m < d + 1:
        raise InputError(f"categorical serial d={d} needs more than {d} outcomes, got {m}")
    g = choose_groups(k, d, m) if groups is None else int(groups)
    if not 2 <= g <= k:
        raise InputError(f"categorical serial: groups must be in 2..k, got {g}")
    if g**d > MAX_CELLS:
        raise InputError(f"categorical serial: {g}^{d} cells is more than {MAX_CELLS}",
                         hint="give fewer groups")
    if g == k:
        sym = x.astype(np.int32)
        marg = None
    else:
        table = (np.arange(k, dtype=np.int64) * g // k).astype(np.int32)
        sym = table[x]
        sizes = group_sizes(k, g)
        marg = sizes / k if np.any(sizes != sizes[0]) else None
    counts = overlapping_counts(sym, d, g)
    delta, s_d, s_d1 = first_difference(counts, g, m, marg)
    df = g**d - g ** (d - 1)
    right, left = chi2_tails(delta, df)
    params = {"k": k, "d": d}
    if g != k:
        params["groups"] = g
    pmin = 1.0 / g if marg is None else float(marg.min())
    return CheckResult(
        name=result_name("categorical serial", params), statistic=delta, p_value=right, p_left=left,
        null=f"chi2(df={df})", n=m,
        details={"psi2_d": s_d, "psi2_d_minus_1": s_d1, "cells": g**d, "groups": g,
                 "min_expected_per_cell": m * pmin**d},
        pooled={"counts": counts, "v": g, "d": d, "n": m, "marg": marg, "name": "categorical serial"},
    )


# --------------------------------------------------------------------------- registry

register(CheckSpec(
    key="categorical frequency", family="categorical", title="frequency test on categorical outcomes",
    view="integers", kind="continuous", func=check_categorical_frequency,
    values_needed=lambda p: int(p["n"]), default_params=lambda n: [{"n": n}] if n >= 10 else [],
    both_tails=True, source=f"{KNUTH} A; exact multinomial test for small counts",
    notes="k from --range; exact multinomial p-value (discrete) when expected < 5 and feasible",
    cheap=True,  # one fast counting pass: sees every byte of a large budget
))

register(CheckSpec(
    key="categorical serial", family="categorical",
    title="serial test on overlapping pairs and triples of categorical outcomes", view="integers",
    kind="continuous", func=check_categorical_serial, values_needed=lambda p: int(p["n"]),
    default_params=lambda n: [{"n": n, "d": d} for d in (2, 3) if n >= 100],
    both_tails=True, pool=pool_first_difference, source=f"Good (1953) J. Roy. Statist. Soc. B 15; {KNUTH} B",
    notes="d = 2 and 3; outcomes merged into coarser groups when k^d cells are too many for the data",
))
