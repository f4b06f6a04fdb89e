"""Runs-up and runs-down tests on uniforms (Knuth §3.3.2 G), covariance form.

H0: the uniforms are i.i.d. with a continuous distribution (so every ordering of any stretch of
them is equally likely).  A *run up* is a maximal strictly increasing stretch ``U_k < U_{k+1} <
... < U_{k+r-1}``; the sequence splits into runs, and ``C_r`` counts runs of length ``r`` for
r = 1..5, ``C_6`` those of length >= 6 (the last run is counted as it is cut by the end of the data).
Adjacent runs are dependent, so Pearson's chi-square does not apply; Knuth's statistic uses the
covariance of the counts instead:

    V = 1/(n - 6) * sum_ij (C_i - n b_i)(C_j - n b_j) a_ij,      V ~ chi2(6) as n -> inf,

with ``b_i = i/(i+1)! - (i+1)/(i+2)!`` (i < 6), ``b_6 = 1/840``, and ``(a_ij)`` the inverse of the
per-value limiting covariance matrix ``lim Cov(C_i, C_j)/n``.

Nothing here is a copied table: the means and covariances are *derived exactly* (rational
arithmetic) from the probability that a random permutation shows a given pattern of ascents and
descents (a dynamic programme over relative ranks).  For n >= 12 they are exactly linear in n,
``E C = n b + e0`` and ``Cov C = n S + I``; ``a = S^-1``.  The derived ``a_ij`` agree with the
table printed by Knuth (check-values.md §5) to 2e-5 relative (the table's rounding).  The exact
values matter: the matrix is ill-conditioned, and the 5-digit rounding of the printed table
moved V by 0.4% on a test sample of n = 20000.  The exact finite-n moments also give a second form of the
statistic, reported in ``details``.

Runs down are runs up of the negated sequence (a run down continues while ``U_{k+1} < U_k``).
A tie ``U_{k+1} = U_k`` ends a run in both directions (probability ~ n 2^-53 for 53-bit uniforms,
~ n 2^-32 for 32-bit words: negligible at the recommended sizes).

Method: D. E. Knuth, TAOCP Vol. 2, 3rd ed., §3.3.2 G (run test) and exercise 14 (the covariances).
"""

from __future__ import annotations

from fractions import Fraction
from functools import lru_cache
from math import factorial
from typing import Any

import numpy as np
from numba import njit

from rngassay.checks.lawcache import kept
from rngassay.checks.registry import CheckSpec, check_id, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError
from rngassay.stats import chi2_tails

KNUTH_RUNS = "Knuth, TAOCP Vol. 2, 3rd ed., §3.3.2 G (run test, covariance form) and exercise 14"

#: Smallest n accepted by the check; Knuth recommends n >= 4000 (used by the default parameters).
RUNS_MIN_N = 1000
RUNS_DEFAULT_MIN_N = 4000

# ------------------------------------------------------------------ exact moments (derivation)


def _pattern_count(cmp: list[str | None]) -> int:
    """Number of orderings of len(cmp)+1 distinct values with the given ascent/descent pattern.

    ``cmp[t]`` constrains the pair (x_t, x_{t+1}): '<' ascent, '>' descent, None free.
    Dynamic programme over the relative rank of the last value among those seen so far.
    """
    f = [1]
    for j in range(2, len(cmp) + 2):
        c = cmp[j - 2]
        pre = [0]
        for x in f:
            pre.append(pre[-1] + x)
        tot = pre[-1]
        if c == "<":
            f = [pre[r - 1] for r in range(1, j + 1)]
        elif c == ">":
            f = [tot - pre[r - 1] for r in range(1, j + 1)]
        else:
            f = [tot] * j
    return sum(f)


def _prob(cons: dict[int, str]) -> Fraction:
    if not cons:
        return Fraction(1)
    lo, hi = min(cons), max(cons)
    return Fraction(_pattern_count([cons.get(t) for t in range(lo, hi + 1)]), factorial(hi - lo + 2))


def _indicator(i: int, k: int, n: int) -> dict[int, str] | None:
    """Comparisons fixed by 'a run of length i (i = 6: >= 6) starts at position k' in n values.

    Comparison t relates U_t and U_{t+1}.  None when the run does not fit.
    """
    cons: dict[int, str] = {}
    if k > 0:
        cons[k - 1] = ">"
    last = k + min(i, 6) - 1
    if last > n - 1:
        return None
    for t in range(k, last):
        cons[t] = "<"
    if i < 6 and last < n - 1:
        cons[last] = ">"
    return cons


def _merge(a: dict[int, str], b: dict[int, str]) -> dict[int, str] | None:
    c = dict(a)
    for t, s in b.items():
        if c.get(t, s) != s:
            return None
        c[t] = s
    return c


def runs_up_moments(n: int) -> tuple[list[Fraction], list[list[Fraction]]]:
    """Exact mean vector and covariance matrix of (C_1, ..., C_5, C_>=6) for n i.i.d. continuous values.

    Summation over all pairs of run-start indicators whose value windows overlap (indicators on
    disjoint sets of values are independent).  Cost grows like n; use :func:`runs_up_linear_moments`
    for large n.
    """
    n = int(n)
    if n < 1:
        raise ValueError("n must be >= 1")
    ind: dict[tuple[int, int], dict[int, str]] = {}
    p: dict[tuple[int, int], Fraction] = {}
    mean = [Fraction(0)] * 6
    for i in range(1, 7):
        for k in range(n):
            c = _indicator(i, k, n)
            if c is not None:
                ind[(i, k)] = c
                p[(i, k)] = _prob(c)
                mean[i - 1] += p[(i, k)]
    cov = [[Fraction(0)] * 6 for _ in range(6)]
    for (i, k), a in ind.items():
        ea = (k - 1 if k > 0 else 0, k + min(i, 6))  # value window [lo, hi]
        for (j, l), b in ind.items():
            eb = (l - 1 if l > 0 else 0, l + min(j, 6))
            if ea[1] < eb[0] or eb[1] < ea[0]:
                continue  # disjoint values: independent
            m = _merge(a, b)
            pab = Fraction(0) if m is None else _prob(m)
            cov[i - 1][j - 1] += pab - p[(i, k)] * p[(j, l)]
    return mean, cov


@lru_cache(maxsize=1)
@kept  # exact fractions, about 0.3 s: computed once per machine
def runs_up_linear_moments() -> tuple[tuple[Fraction, ...], tuple[Fraction, ...],
                                      tuple[tuple[Fraction, ...], ...], tuple[tuple[Fraction, ...], ...]]:
    """``(b, e0, S, I)`` with ``E C = n b + e0`` and ``Cov C = n S + I`` exactly for every n >= 12.

    Obtained from :func:`runs_up_moments` at n = 12 and 13 (the linearity from n = 12 on is
    checked in the tests up to n = 16; it holds because boundary terms stop changing once the
    first and last windows cannot overlap).
    """
    m12, c12 = runs_up_moments(12)
    m13, c13 = runs_up_moments(13)
    b = tuple(m13[a] - m12[a] for a in range(6))
    e0 = tuple(m12[a] - 12 * b[a] for a in range(6))
    S = tuple(tuple(c13[a][c] - c12[a][c] for c in range(6)) for a in range(6))
    I = tuple(tuple(c12[a][c] - 12 * S[a][c] for c in range(6)) for a in range(6))
    return b, e0, S, I


def _inverse(M: list[list[Fraction]]) -> list[list[Fraction]]:
    """Exact inverse by Gauss-Jordan elimination over the rationals."""
    k = len(M)
    A = [list(row) + [Fraction(int(i == j)) for j in range(k)] for i, row in enumerate(M)]
    for c in range(k):
        piv = next(r for r in range(c, k) if A[r][c] != 0)
        A[c], A[piv] = A[piv], A[c]
        pv = A[c][c]
        A[c] = [x / pv for x in A[c]]
        for r in range(k):
            if r != c and A[r][c] != 0:
                f = A[r][c]
                A[r] = [x - f * y for x, y in zip(A[r], A[c])]
    return [row[k:] for row in A]


@lru_cache(maxsize=1)
def runs_up_b() -> tuple[Fraction, ...]:
    """Exact b_i: E C_i / n as n -> inf: (1/6, 5/24, 11/120, 19/720, 29/5040, 1/840)."""
    return runs_up_linear_moments()[0]


@lru_cache(maxsize=1)
def runs_up_a_exact() -> tuple[tuple[Fraction, ...], ...]:
    """Exact matrix (a_ij) of Knuth's run test: the inverse of lim Cov(C)/n, as rationals."""
    S = runs_up_linear_moments()[2]
    return tuple(tuple(r) for r in _inverse([list(r) for r in S]))


@lru_cache(maxsize=1)
def runs_up_a() -> np.ndarray:
    """(a_ij) as a float64 6x6 array (read-only)."""
    a = np.array([[float(x) for x in r] for r in runs_up_a_exact()])
    a.setflags(write=False)
    return a


@lru_cache(maxsize=64)
def _exact_moments_float(n: int) -> tuple[np.ndarray, np.ndarray]:
    b, e0, S, I = runs_up_linear_moments()
    mean = np.array([float(n * b[i] + e0[i]) for i in range(6)])
    cov = [[n * S[i][j] + I[i][j] for j in range(6)] for i in range(6)]
    inv = np.array([[float(x) for x in r] for r in _inverse(cov)])
    return mean, inv


# ------------------------------------------------------------------ kernel


@njit(cache=True)
def _run_counts(u, down):
    """Counts of runs of length 1..5 and >= 6 (index 0..5), runs up (down=False) or down."""
    c = np.zeros(6, dtype=np.int64)
    n = u.size
    if n == 0:
        return c
    length = 1
    prev = u[0]
    for i in range(1, n):
        x = u[i]
        cont = (x < prev) if down else (x > prev)
        if cont:
            length += 1
        else:
            c[min(length, 6) - 1] += 1
            length = 1
        prev = x
    c[min(length, 6) - 1] += 1
    return c


def run_counts(u: np.ndarray, direction: str = "up") -> np.ndarray:
    """Counts (C_1, ..., C_5, C_>=6) of runs up or down of a 1-d array."""
    if direction not in ("up", "down"):
        raise InputError(f"runs: direction must be 'up' or 'down', got {direction!r}")
    a = np.ascontiguousarray(np.asarray(u).ravel())
    if a.dtype.kind not in "fiu":
        raise InputError(f"runs: numeric values needed, got dtype {a.dtype}")
    return _run_counts(a, direction == "down")


# ------------------------------------------------------------------ the check


def check_runs(data: np.ndarray, direction: str = "up", n: int | None = None) -> CheckResult:
    """Run test (Knuth §3.3.2 G), covariance form, on the first ``n`` uniforms (all when None).

    H0: the values are i.i.d. continuous, so the run-length counts have the exact means and
    covariances derived in this module.  Statistic: Knuth's
    ``V = (C - n b)^T A (C - n b) / (n - 6)``, asymptotically chi2(6); right tail is evidence of
    non-randomness (the left tail is reported too: an implausibly regular pattern of runs).
    ``details["v_exact_moments"]`` is the same quadratic form with the exact finite-n mean and
    covariance; it differs from V by O(1/n).
    """
    a = np.asarray(data).ravel()
    if n is not None:
        n = int(n)
        if n < 0 or n > a.size:
            raise InputError(f"runs {direction}: asked for {n} values, {a.size} available")
        a = a[:n]
    nn = int(a.size)
    if nn < RUNS_MIN_N:
        raise InputError(f"runs {direction} needs at least {RUNS_MIN_N} values, got {nn}", hint="use more data")
    counts = run_counts(a, direction)
    b = np.array([float(x) for x in runs_up_b()])
    d = counts - nn * b
    v = float(d @ runs_up_a() @ d) / (nn - 6)
    mean, inv = _exact_moments_float(nn)
    de = counts - mean
    v_exact = float(de @ inv @ de)
    right, left = chi2_tails(v, 6)
    details: dict[str, Any] = {
        "counts": counts.tolist(),
        "expected": (nn * b).round(3).tolist(),
        "v_exact_moments": v_exact,
    }
    return CheckResult(
        name=check_id(f"runs {direction}", {}), statistic=v, p_value=right, p_left=left,
        null="chi2(df=6)", kind="continuous", n=nn, details=details,
    )


def _defaults(direction: str):
    def f(n: int) -> list[dict]:
        # Knuth: "n should be large, say n >= 4000" [from memory]; the count of runs >= 6 then
        # has expectation n/840 >= 4.8.  All available values are used (power grows with n).
        return [{"direction": direction, "n": int(n)}] if n >= RUNS_DEFAULT_MIN_N else []
    return f


for _dir in ("up", "down"):
    register(CheckSpec(
        key=f"runs {_dir}", family="classic",
        title=f"run test, runs {_dir} (Knuth 3.3.2 G, covariance form)",
        view="uniforms", kind="continuous", func=check_runs,
        values_needed=lambda p: int(p["n"]), default_params=_defaults(_dir), both_tails=True,
        source=KNUTH_RUNS,
        notes="exact a_ij and b_i derived by rational arithmetic; all available values, n >= 4000",
    ))
