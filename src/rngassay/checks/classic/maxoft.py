"""Maximum-of-t test (Knuth §3.3.2 G).

The uniforms are cut into m = n // t disjoint groups of t; V_j = max(U_{jt}, ..., U_{jt+t-1}).
Under H0 (i.i.d. U[0, 1)) P(V <= x) = x^t, so V_j^t is uniform on [0, 1) and the m values are
tested against U(0, 1) — with the Kolmogorov–Smirnov test as Knuth does (``stat="ks"``,
default) or with Anderson–Darling (``stat="ad"``), more sensitive in the tails.
"""

from __future__ import annotations

import numpy as np
from numba import njit

from rngassay.checks.registry import CheckSpec, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError
from rngassay.stats import AD_EPS, ad_pvalue, ks_pvalue

from .frequency import KNUTH, need, result_name, uniforms
from .goodness import ad_from_sorted, ks_from_sorted, sorted_uniforms


@njit(cache=True)
def max_power(u, t):
    """V_j^t with V_j the maximum of the j-th disjoint group of t values."""
    m = u.size // t
    out = np.empty(m, dtype=np.float64)
    for j in range(m):
        base = j * t
        v = u[base]
        for i in range(1, t):
            x = u[base + i]
            if x > v:
                v = x
        out[j] = v**t
    return out


def check_maximum_of_t(data: np.ndarray, t: int = 3, stat: str = "ks", n: int | None = None) -> CheckResult:
    """Maximum-of-t test (Knuth §3.3.2 G).

    H0: the uniforms are i.i.d. U[0, 1), so max(U_1..U_t)^t is U(0, 1).  Tested with KS
    (``stat="ks"``) or Anderson–Darling (``stat="ad"``); right tail.
    """
    t = int(t)
    if not 2 <= t <= 1024:
        raise InputError(f"maximum-of-t: t must be in 2..1024, got {t}")
    if stat not in ("ks", "ad"):
        raise InputError(f"maximum-of-t: stat must be 'ks' or 'ad', got {stat!r}")
    u = uniforms(data, n, "maximum-of-t")
    need(u.size // t, 1, f"maximum-of-t t={t}")
    s = sorted_uniforms(max_power(u, t))
    m = s.size
    if stat == "ks":
        d, dp, dm = ks_from_sorted(s)
        statistic, p = float(d), ks_pvalue(d, m)
        null = f"kolmogorov D_n (n={m})"
        details = {"groups": m, "d_plus": float(dp), "d_minus": float(dm)}
    else:
        statistic = ad_from_sorted(s, AD_EPS)
        p = ad_pvalue(statistic, m)
        null = f"anderson-darling A2 (n={m})"
        details = {"groups": m}
    return CheckResult(
        name=result_name("maximum-of-t", {"t": t, "stat": stat}), statistic=statistic, p_value=p,
        null=null, n=m * t, details=details,
    )


def _maxoft_defaults(n: int) -> list[dict]:
    """t = 3 with KS (Knuth's form) and t = 8 with AD, each when it gives >= 100 maxima."""
    out = []
    if n // 3 >= 100:
        out.append({"n": n, "t": 3, "stat": "ks"})
    if n // 8 >= 100:
        out.append({"n": n, "t": 8, "stat": "ad"})
    return out


register(CheckSpec(
    key="maximum-of-t", family="classic", title="maximum-of-t test", view="uniforms", kind="continuous",
    func=check_maximum_of_t, values_needed=lambda p: int(p["n"]), default_params=_maxoft_defaults,
    source=f"{KNUTH} G",
    notes="t = 3 tested with KS, t = 8 tested with Anderson-Darling",
))
