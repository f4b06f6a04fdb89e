"""Kolmogorov–Smirnov and Anderson–Darling tests of the uniforms against U(0, 1).

H0: the uniforms are an i.i.d. sample of the continuous U(0, 1) distribution (fully specified,
no estimated parameters).

* KS (Kolmogorov 1933; Knuth §3.3.1 B): D_n = sup |F_n(x) − x|; p-value P(D_n >= d) from
  :func:`rngassay.stats.ks_pvalue` (exact finite-n law up to 10^7 values).
* AD (Anderson & Darling 1954): A² = −n − (1/n) Σ [(2i−1) ln u_(i) + (2n+1−2i) ln(1 − u_(i))];
  p-value from :func:`rngassay.stats.ad_pvalue` (Marsaglia & Marsaglia 2004 finite-n correction).
  Values are clipped into [2^-53, 1 − 2^-53] before the logarithms (``rngassay.stats.AD_EPS``), so
  a 0.0 from a 32-bit-resolution stream adds about 37/n to A² instead of making it infinite.

The statistics are computed here by single-pass numba kernels over the sorted sample (the stats
core's reference implementations sort again and allocate several temporaries); the tests check
that both give the same numbers.  Input of coarse resolution (e.g. floats printed with three
decimals) is not continuous, and with enough values these tests will say so: that is a true
property of such data, not a false alarm.
"""

from __future__ import annotations

import numpy as np
from numba import njit

from rngassay.checks.registry import CheckSpec, register
from rngassay.checks.result import CheckResult
from rngassay.stats import AD_EPS, ad_pvalue, ks_pvalue

from .frequency import need, result_name, uniforms


def sorted_uniforms(u: np.ndarray) -> np.ndarray:
    """A sorted float64 copy (numpy's sort is faster here than a numba bucket sort)."""
    return np.sort(np.asarray(u, dtype=np.float64), kind="quicksort")


@njit(cache=True)
def ks_from_sorted(s):
    """(D_n, D+, D-) of a sorted sample against U(0, 1)."""
    n = s.size
    fn = float(n)
    dp = 0.0
    dm = 0.0
    for i in range(n):
        a = (i + 1) / fn - s[i]
        if a > dp:
            dp = a
        b = s[i] - i / fn
        if b > dm:
            dm = b
    return max(dp, dm), dp, dm


@njit(cache=True)
def _ad_weighted_sum(log_u, log_1mu, start, n, acc, comp):
    """Add sum (2i-1) ln u_(i) + (2n+1-2i) ln(1-u_(i)) over one chunk (i = start+1, ...) to the
    compensated (Kahan) sum (acc, comp); returns the new (acc, comp)."""
    two_n = 2.0 * n
    for j in range(log_u.size):
        w = 2.0 * (start + j) + 1.0
        y = (w * log_u[j] + (two_n - w) * log_1mu[j]) - comp
        t = acc + y
        comp = (t - acc) - y
        acc = t
    return acc, comp


#: Values per chunk in :func:`ad_from_sorted` (two 8 MiB work buffers, reused).
_AD_CHUNK = 1 << 20


def ad_from_sorted(s: np.ndarray, eps: float = AD_EPS) -> float:
    """Anderson–Darling A² of a sorted sample against U(0, 1), values clipped into [eps, 1-eps].

    The logarithms are numpy's (vectorised; ``log(1 - u)`` rather than the much slower
    ``log1p(-u)``: 1 - u is exact for u >= 1/2 and has absolute error <= 2^-53 below, which moves
    A² by at most ~1e-9), over chunks of 2^20 values in two reused buffers.  Compensated summation
    keeps S's relative error near 1e-16, so A² = -(n^2 + S)/n keeps an absolute accuracy of order
    n * 1e-16.
    """
    s = np.asarray(s, dtype=np.float64)
    n = s.size
    m = min(n, _AD_CHUNK)
    b1 = np.empty(m)
    b2 = np.empty(m)
    acc, comp = 0.0, 0.0
    for start in range(0, n, m):  # loop over chunks, not over values
        seg = s[start:start + m]
        c, lu = b1[: seg.size], b2[: seg.size]
        np.clip(seg, eps, 1.0 - eps, out=c)
        np.log(c, out=lu)
        np.subtract(1.0, c, out=c)
        np.log(c, out=c)
        acc, comp = _ad_weighted_sum(lu, c, start, n, acc, comp)
    fn = float(n)
    return float(-(fn * fn + acc) / fn)


def check_kolmogorov_smirnov(data: np.ndarray, n: int | None = None) -> CheckResult:
    """One-sample KS test of the uniforms against U(0, 1) (Kolmogorov 1933; Knuth §3.3.1 B).

    H0: i.i.d. U(0, 1).  Statistic D_n, right tail only (a too-small D_n is not used).
    """
    u = uniforms(data, n, "kolmogorov-smirnov")
    need(u.size, 1, "kolmogorov-smirnov")
    d, dp, dm = ks_from_sorted(sorted_uniforms(u))
    return CheckResult(
        name=result_name("kolmogorov-smirnov", {}), statistic=float(d), p_value=ks_pvalue(d, u.size),
        null=f"kolmogorov D_n (n={u.size})", n=int(u.size),
        details={"d_plus": float(dp), "d_minus": float(dm), "sqrt_n_d": float(np.sqrt(u.size) * d)},
    )


def check_anderson_darling(data: np.ndarray, n: int | None = None) -> CheckResult:
    """Anderson–Darling test of the uniforms against U(0, 1) (Anderson & Darling 1954).

    H0: i.i.d. U(0, 1).  Statistic A², right tail (Marsaglia & Marsaglia 2004 distribution).
    """
    u = uniforms(data, n, "anderson-darling")
    need(u.size, 1, "anderson-darling")
    s = sorted_uniforms(u)
    a2 = ad_from_sorted(s, AD_EPS)
    return CheckResult(
        name=result_name("anderson-darling", {}), statistic=a2, p_value=ad_pvalue(a2, u.size),
        null=f"anderson-darling A2 (n={u.size})", n=int(u.size),
        details={"zeros": int(np.searchsorted(s, 0.0, side="right"))},
    )


register(CheckSpec(
    key="kolmogorov-smirnov", family="classic", title="Kolmogorov-Smirnov test against U(0, 1)",
    view="uniforms", kind="continuous", func=check_kolmogorov_smirnov, values_needed=lambda p: int(p["n"]),
    default_params=lambda n: [{"n": n}] if n >= 100 else [],
    source="Kolmogorov (1933); Knuth, TAOCP Vol. 2, 3rd ed., §3.3.1 B",
))

register(CheckSpec(
    key="anderson-darling", family="classic", title="Anderson-Darling test against U(0, 1)",
    view="uniforms", kind="continuous", func=check_anderson_darling, values_needed=lambda p: int(p["n"]),
    default_params=lambda n: [{"n": n}] if n >= 100 else [],
    source="Anderson & Darling (1954) JASA 49; Marsaglia & Marsaglia (2004) J. Stat. Softw. 9(2)",
))
