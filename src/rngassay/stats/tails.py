"""Tail probabilities of the reference distributions, accurate far into the tails.

Policy for p-values (used by every function in :mod:`rngassay.stats`):

* A right tail is ``P(T >= t)`` and a left tail ``P(T <= t)`` under the null hypothesis.
  For discrete distributions both tails include the observed value, so
  ``right + left - P(T = t) = 1``.
* Tails come from survival functions (``sf``), never from ``1 - cdf``.
* A returned p-value is never 0 and never above 1: it is clipped into
  ``[P_FLOOR, 1]`` where ``P_FLOOR`` is the smallest positive *normal* double
  (``2.2250738585072014e-308``).  A p-value equal to ``P_FLOOR`` therefore means
  "at most about 1e-308"; where the true size matters beyond that, use the
  ``*_log10_sf`` helpers, which stay finite where the tail underflows.
* NaN input is an error (:class:`ValueError`), never a silent NaN p-value.

The distributions are evaluated with :mod:`scipy.stats` / :mod:`scipy.special`
(regularised incomplete gamma and beta functions), which keep relative accuracy
in the tails down to underflow.
"""

from __future__ import annotations

import math
from numbers import Integral

import numpy as np
from scipy import special, stats

__all__ = [
    "P_FLOOR",
    "clip_p",
    "clip_p_array",
    "log10_p",
    "chi2_tails",
    "chi2_log10_sf",
    "normal_tails",
    "normal_two_sided",
    "normal_log10_sf",
    "poisson_tails",
    "binomial_tails",
    "discrete_two_sided",
    "two_sided",
]

#: Smallest p-value ever returned: the smallest positive normal double.
P_FLOOR: float = float(np.finfo(np.float64).tiny)

_LN10 = math.log(10.0)


def _check_real(name: str, value: float) -> float:
    v = float(value)
    if math.isnan(v):
        raise ValueError(f"{name} is NaN")
    return v


def _check_int(name: str, value: int) -> int:
    if isinstance(value, Integral):
        return int(value)
    v = float(value)
    if not math.isfinite(v) or v != math.floor(v):
        raise ValueError(f"{name} must be an integer, got {value!r}")
    return int(v)


def clip_p(p: float) -> float:
    """Clip a probability into ``[P_FLOOR, 1.0]``; NaN raises :class:`ValueError`."""
    v = _check_real("p-value", p)
    if v < P_FLOOR:
        return P_FLOOR
    if v > 1.0:
        return 1.0
    return v


def clip_p_array(p: np.ndarray) -> np.ndarray:
    """Vectorised :func:`clip_p` (returns a new float64 array)."""
    a = np.asarray(p, dtype=np.float64)
    if np.isnan(a).any():
        raise ValueError("p-value array contains NaN")
    return np.clip(a, P_FLOOR, 1.0)


def log10_p(p: float) -> float:
    """``log10`` of the clipped p-value (so never ``-inf``)."""
    return math.log10(clip_p(p))


# --------------------------------------------------------------------- chi-square


def chi2_tails(x: float, df: float) -> tuple[float, float]:
    """Right ``P(X >= x)`` and left ``P(X <= x)`` tails of the chi-square distribution.

    ``df`` may be any positive real.  Both are computed directly (the regularised incomplete gamma
    functions ``scipy.special.chdtrc`` / ``chdtr``: what ``scipy.stats.chi2.sf`` / ``cdf`` evaluate, bit for
    bit, without the distribution machinery's ~75 µs a call), so each keeps relative accuracy in its own tail;
    an underflowed tail is returned as ``P_FLOOR`` (see :func:`chi2_log10_sf` for its size).
    """
    x = _check_real("chi-square statistic", x)
    df = _check_real("degrees of freedom", df)
    if not df > 0 or math.isinf(df):
        raise ValueError(f"degrees of freedom must be positive and finite, got {df}")
    if x <= 0.0:
        return 1.0, P_FLOOR
    right = float(special.chdtrc(df, x))
    left = float(special.chdtr(df, x))
    return clip_p(right), clip_p(left)


def _log_gammaincc_cf(a: float, x: float) -> float:
    """ln Q(a, x) by the continued fraction for Γ(a, x) (valid and fast for x > a + 1).

    Modified Lentz evaluation of the Legendre continued fraction (Numerical Recipes,
    §6.2, "gcf"), combined with the prefactor in log space so nothing underflows.
    """
    tiny = 1e-300
    b = x + 1.0 - a
    c = 1.0 / tiny
    d = 1.0 / b
    h = d
    for i in range(1, 10_000):
        an = -i * (i - a)
        b += 2.0
        d = an * d + b
        if abs(d) < tiny:
            d = tiny
        c = b + an / c
        if abs(c) < tiny:
            c = tiny
        d = 1.0 / d
        delta = d * c
        h *= delta
        if abs(delta - 1.0) < 1e-15:
            break
    return -x + a * math.log(x) - math.lgamma(a) + math.log(h)


def chi2_log10_sf(x: float, df: float) -> float:
    """``log10 P(X >= x)`` for chi-square(df), finite even where the tail underflows.

    Where ``scipy.special.gammaincc`` is above 1e-290 its logarithm is returned; beyond,
    ``ln Q(df/2, x/2)`` is evaluated from the continued fraction in log space.
    """
    x = _check_real("chi-square statistic", x)
    df = _check_real("degrees of freedom", df)
    if not df > 0 or math.isinf(df):
        raise ValueError(f"degrees of freedom must be positive and finite, got {df}")
    if x <= 0.0:
        return 0.0
    if math.isinf(x):
        return -math.inf
    a, h = 0.5 * df, 0.5 * x
    q = float(special.gammaincc(a, h))
    if q > 1e-290 or h <= a + 1.0:
        return math.log10(q) if q > 0 else -math.inf
    return _log_gammaincc_cf(a, h) / _LN10


# ------------------------------------------------------------------------- normal


def normal_tails(z: float) -> tuple[float, float]:
    """Right ``P(Z >= z)`` and left ``P(Z <= z)`` tails of the standard normal."""
    z = _check_real("z", z)
    return clip_p(float(special.ndtr(-z))), clip_p(float(special.ndtr(z)))


def normal_two_sided(z: float) -> float:
    """Two-sided normal p-value ``P(|Z| >= |z|) = 2 Q(|z|)``, capped at 1."""
    z = _check_real("z", z)
    return clip_p(min(1.0, 2.0 * float(special.ndtr(-abs(z)))))


def normal_log10_sf(z: float) -> float:
    """``log10 P(Z >= z)``, finite far beyond the underflow of ``Q(z)`` (``scipy.special.log_ndtr``)."""
    z = _check_real("z", z)
    return float(special.log_ndtr(-z)) / _LN10


# --------------------------------------------------------------------- discrete


def poisson_tails(k: int, mu: float) -> tuple[float, float]:
    """Exact tails of Poisson(mu): ``(P(X >= k), P(X <= k))``.

    Computed as ``poisson.sf(k - 1, mu)`` and ``poisson.cdf(k, mu)`` (regularised incomplete
    gamma functions), each accurate in its own tail: the functions ``scipy.special.pdtrc`` / ``pdtr`` that
    ``scipy.stats.poisson`` evaluates for an integer k, bit for bit (tested), without its ~90 us a call.
    """
    k = _check_int("k", k)
    mu = _check_real("mu", mu)
    if mu < 0 or math.isinf(mu):
        raise ValueError(f"Poisson mean must be finite and >= 0, got {mu}")
    if k < 0:
        return 1.0, P_FLOOR
    if k == 0:  # P(X <= 0) = exp(-mu)
        return 1.0, clip_p(math.exp(-mu))
    if mu == 0.0:  # X = 0 surely, and k >= 1
        return P_FLOOR, 1.0
    right = float(special.pdtrc(k - 1, mu))
    left = float(special.pdtr(k, mu))
    return clip_p(right), clip_p(left)


def binomial_tails(k: int, n: int, p: float) -> tuple[float, float]:
    """Exact tails of Binomial(n, p): ``(P(X >= k), P(X <= k))``.

    Computed as ``binom.sf(k - 1, n, p)`` and ``binom.cdf(k, n, p)`` (regularised incomplete
    beta functions), each accurate in its own tail.
    """
    k = _check_int("k", k)
    n = _check_int("n", n)
    p = _check_real("p", p)
    if n < 0:
        raise ValueError(f"n must be >= 0, got {n}")
    if not 0.0 <= p <= 1.0:
        raise ValueError(f"p must lie in [0, 1], got {p}")
    if k <= 0:
        right = 1.0
    elif k > n:
        right = 0.0
    elif p == 0.0:
        right = 0.0
    elif p == 1.0:
        right = 1.0
    else:
        right = float(stats.binom.sf(k - 1, n, p))
    if k < 0:
        left = 0.0
    elif k >= n:
        left = 1.0
    elif p == 0.0:
        left = 1.0
    elif p == 1.0:
        left = 0.0
    else:
        left = float(stats.binom.cdf(k, n, p))
    return clip_p(right), clip_p(left)


def two_sided(right: float, left: float) -> float:
    """The two-sided rule of the whole tool: doubled smaller tail ``min(1, 2 min(right, left))`` (common
    practice); for a discrete statistic each tail includes the observed value."""
    return clip_p(min(1.0, 2.0 * min(_check_real("right", right), _check_real("left", left))))


discrete_two_sided = two_sided  # the name the discrete checks use
