"""Permutation test (Knuth §3.3.2 F).

The uniforms are cut into n // t disjoint t-tuples; each tuple's relative ordering is one of t!
permutations (indexed here by its Lehmer code: c_i = #{j > i : u_j < u_i}, mixed radix).  Under H0
(i.i.d. U[0, 1)) all t! orderings are equally likely; Pearson chi-square with t! − 1 d.o.f.,
both tails.

Ties.  Low-resolution input (32-bit or float32 uniforms, coarse text floats) can give tuples with
equal values, whose ordering is undefined.  Such tuples are dropped and counted (``ties`` in the
details).  This keeps the test exact, not approximate: for any i.i.d. sequence, continuous or
not, the values are exchangeable, so conditional on a tuple having no tie its t! orderings are
still equally likely, and tuples are independent of each other.  An excess of ties is not
judged here (the repeat and collision checks look at that).
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from rngassay.checks.registry import CheckSpec, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError

from .frequency import KNUTH, MIN_EXPECTED_DEFAULT, equiprobable_chi2, need, result_name, small_list, uniforms


@njit(cache=True)
def _perm_counts(u, t):
    m = u.size // t
    nf = 1
    for j in range(2, t + 1):
        nf *= j
    counts = np.zeros(nf, dtype=np.int64)
    ties = 0
    for h in range(m):
        base = h * t
        code = 0
        tie = False
        for i in range(t):
            x = u[base + i]
            c = 0
            for j in range(i + 1, t):
                y = u[base + j]
                if y < x:
                    c += 1
                elif y == x:
                    tie = True
            code = code * (t - i) + c
        if tie:
            ties += 1
        else:
            counts[code] += 1
    return counts, ties


def lehmer_index(values) -> int:
    """Index in [0, t!) of the ordering of distinct ``values`` (the same code the kernel uses)."""
    v = list(values)
    t = len(v)
    code = 0
    for i in range(t):
        c = sum(1 for j in range(i + 1, t) if v[j] < v[i])
        code = code * (t - i) + c
    return code


def check_permutation(data: np.ndarray, t: int = 3, n: int | None = None) -> CheckResult:
    """Permutation test on disjoint t-tuples (Knuth §3.3.2 F).

    H0: the uniforms are i.i.d. U[0, 1), so each tuple's ordering is uniform on the t!
    permutations.  Pearson chi-square, t! − 1 d.o.f., on the tuples without ties (see module
    doc); both tails.
    """
    t = int(t)
    if not 2 <= t <= 8:
        raise InputError(f"permutation: t must be in 2..8, got {t}")
    u = uniforms(data, n, "permutation")
    need(u.size // t, 1, f"permutation t={t}")
    counts, ties = _perm_counts(u, t)
    if counts.sum() == 0:
        raise InputError(f"permutation t={t}: every tuple has tied values", hint="use finer input")
    x2, df, right, left = equiprobable_chi2(counts)
    m = u.size // t
    return CheckResult(
        name=result_name("permutation", {"t": t}), statistic=x2, p_value=right, p_left=left,
        null=f"chi2(df={df})", n=m * t,
        details={"tuples": m, "ties": int(ties), "expected_per_order": (m - ties) / math.factorial(t),
                 "counts": small_list(counts, 24)},
        pooled={"counts": counts},
    )


# --------------------------------------------------------------------------- registry


def _permutation_defaults(n: int) -> list[dict]:
    """t = 3, 4, 5, each when its tuples give >= 10 expected per ordering."""
    return [{"n": n, "t": t} for t in (3, 4, 5) if n // t >= MIN_EXPECTED_DEFAULT * math.factorial(t)]


register(CheckSpec(
    key="permutation", family="classic", title="permutation test", view="uniforms", kind="continuous",
    func=check_permutation, values_needed=lambda p: int(p["n"]), default_params=_permutation_defaults,
    both_tails=True, source=f"{KNUTH} F",
    notes="t = 3, 4, 5; tuples with tied values are dropped (exact by exchangeability)",
))
