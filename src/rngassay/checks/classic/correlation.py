"""Serial correlation test at lag L (Knuth §3.3.2 K, generalised to any lag).

Statistic: the circular lag-L serial correlation coefficient of Knuth §3.3.2 (23),

    C_L = (n Σ U_j U_{j+L} − (Σ U_j)²) / (n Σ U_j² − (Σ U_j)²),   indices mod n.

H0: the uniforms are i.i.d. (continuous), hence exchangeable.  Given the observed values, every
arrangement of them is then equally likely, and C_L is a monotone function of
R = Σ x_j x_{j+L} (x = U − mean).  We standardise with the *exact* permutation mean and variance
of R (Wald & Wolfowitz 1943; here derived for any 2-regular set of index pairs, i.e. any lag
with n / gcd(n, L) >= 3, and checked against full enumeration in the tests):

    E R   = (S1² − S2) / (n − 1)
    E R²  = n (S2² − S4) / (n)_2 + 2n T3 / (n)_3 + n (n − 3) T4 / (n)_4
    T3 = S1² S2 − 2 S1 S3 + 2 S4 − S2²,  T4 = S1⁴ − 6 S1² S2 + 3 S2² + 8 S1 S3 − 6 S4,

with S_k = Σ x_j^k and (n)_r the falling factorial.  The mean reproduces Knuth's exact
E C = −1/(n − 1); the variance agrees with Knuth's σ_n² = n² / ((n−1)²(n−2)) to O(1/n) relative.
z = (R − E R) / sd R is referred to N(0, 1) (asymptotic normality: Wald & Wolfowitz 1943), both
tails.  Accuracy: the permutation law of z has skewness O(n^-1/2); for the default sizes
(n >= 1000) the calibration tests find the normal p-values uniform, and at n = 100 the fraction
beyond |z| > 2.576 is within binomial noise of 1%.

Kernel: one numba pass over the data per lag gives S1..S4 of the centred values and R.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from rngassay.checks.registry import CheckSpec, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError
from rngassay.stats import normal_tails

from .frequency import KNUTH, result_name, uniforms


def circular_lag_sum(x: np.ndarray, lag: int) -> float:
    """Σ_j x_j x_{(j+lag) mod n} (two BLAS dot products, no copy)."""
    if lag == 0:
        return float(np.dot(x, x))
    return float(np.dot(x[:-lag], x[lag:]) + np.dot(x[-lag:], x[:lag]))


@njit(cache=True)
def _centred_sums(u, mu, lag):
    """One pass over x = u - mu: (S1, S2, S3, S4, R) with R = sum x_j x_{(j+lag) mod n}."""
    n = u.size
    s1 = 0.0
    s2 = 0.0
    s3 = 0.0
    s4 = 0.0
    r = 0.0
    for j in range(n):
        x = u[j] - mu
        k = j + lag
        if k >= n:
            k -= n
        y = u[k] - mu
        x2 = x * x
        s1 += x
        s2 += x2
        s3 += x2 * x
        s4 += x2 * x2
        r += x * y
    return s1, s2, s3, s4, r


def permutation_moments(s1: float, s2: float, s3: float, s4: float, n: int) -> tuple[float, float]:
    """Exact mean and variance of R = Σ_j x_{π(j)} x_{π(j+L)} over uniformly random permutations π,
    for a lag whose index pairs form cycles of length >= 3 (see module doc)."""
    if n < 4:
        raise ValueError("permutation moments need n >= 4")
    n2 = n * (n - 1.0)
    n3 = n2 * (n - 2.0)
    n4 = n3 * (n - 3.0)
    mean = (s1 * s1 - s2) / (n - 1.0)
    t2 = s2 * s2 - s4
    t3 = s1 * s1 * s2 - 2.0 * s1 * s3 + 2.0 * s4 - s2 * s2
    t4 = s1**4 - 6.0 * s1 * s1 * s2 + 3.0 * s2 * s2 + 8.0 * s1 * s3 - 6.0 * s4
    second = n * t2 / n2 + 2.0 * n * t3 / n3 + n * (n - 3.0) * t4 / n4
    return mean, second - mean * mean


def check_serial_correlation(data: np.ndarray, lag: int = 1, n: int | None = None) -> CheckResult:
    """Serial correlation test at lag L (Knuth §3.3.2 K).

    H0: the uniforms are i.i.d. (exchangeable).  z = standardised circular lag-L correlation
    (exact permutation mean and variance, see module doc) ~ N(0, 1); both tails.
    """
    lag = int(lag)
    u = uniforms(data, n, "serial correlation")
    m = u.size
    if m < 10 or lag < 1 or 3 * lag > m:
        raise InputError(f"serial correlation: need n >= 10 and 1 <= lag <= n/3, got n={m} lag={lag}",
                         hint="use more data or a smaller lag")
    s1, s2, s3, s4, r = _centred_sums(u, float(np.mean(u)), lag)
    if not s2 > 0:
        raise InputError("serial correlation: all values are equal")
    mean, var = permutation_moments(s1, s2, s3, s4, m)
    if not var > 0:
        raise InputError("serial correlation: degenerate values (zero permutation variance)")
    z = (r - mean) / math.sqrt(var)
    right, left = normal_tails(z)
    c = (m * r - s1 * s1) / (m * s2 - s1 * s1)  # Knuth's C (invariant to the centring)
    return CheckResult(
        name=result_name("serial correlation", {"lag": lag}), statistic=float(z), p_value=right,
        p_left=left, null="normal(0, 1)", n=int(m),
        details={"correlation": float(c), "mean_under_h0": -1.0 / (m - 1),
                 "sd_under_h0": math.sqrt(var) * m / (m * s2 - s1 * s1)},
    )


DEFAULT_LAGS = (1, 2, 3, 8, 16, 32, 64)


def _correlation_defaults(n: int) -> list[dict]:
    """Lags 1, 2, 3, 8, 16, 32, 64, each when n >= max(1000, 100 lag)."""
    return [{"n": n, "lag": L} for L in DEFAULT_LAGS if n >= max(1000, 100 * L)]


register(CheckSpec(
    key="serial correlation", family="classic", title="serial correlation test", view="uniforms",
    kind="continuous", func=check_serial_correlation, values_needed=lambda p: int(p["n"]),
    default_params=_correlation_defaults, both_tails=True,
    source=f"{KNUTH} K; Wald & Wolfowitz (1943) Ann. Math. Statist. 14",
    notes="lags 1, 2, 3, 8, 16, 32, 64; circular; exact permutation moments, normal tails",
))
