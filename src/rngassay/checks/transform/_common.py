"""Shared pieces of the transform checks: target distributions, their quantile functions, and the
resolution of uniforms.

Targets
-------
Each target is a fully specified distribution with a vectorised quantile function ``ppf`` (the
inverse-CDF transform a simulation code applies to its uniforms) and, for continuous targets,
``logcdf``/``logsf`` that keep relative accuracy in their own tail.  The formulas are those of
``scipy.stats`` (``norm.ppf`` is ``scipy.special.ndtri``, ``expon.ppf`` is ``-log1p(-u)``,
``gamma.ppf`` is ``scipy.special.gammaincinv``); the Cauchy quantile is written as
``-cot(pi u)`` (``cot(pi (1 - u))`` above 1/2) instead of ``tan(pi (u - 1/2))`` so that tiny ``u``
keep their relative precision.  The tests check every target against ``scipy.stats``.

Discrete targets use the definition of the quantile function, ``F^-1(u) = min{k : F(k) >= u}``,
evaluated by binary search in a table of ``F`` (from ``scipy.stats`` ``cdf`` below the median and
``sf`` above it, so the table is accurate in both tails).  This is exact and tens of times
faster than ``scipy.stats.poisson.ppf`` (about 50 times at 2^18 values).

Resolution
----------
A uniform in [0, 1) with ``b`` bits of resolution is a multiple of ``2^-b``; 53-bit uniforms hit an
exact 0.0 with probability 2^-53, 32-bit ones with 2^-32.  The checks cannot see the input format
(a ``<u4`` word stream gives 32-bit uniforms, raw bytes 53-bit ones), so the claimed resolution is
a parameter, ``resolution_bits``.  Its default, ``None``, is the conservative choice the battery
uses: infer it from the sample -- the coarsest rung of :data:`BITS_LADDER` = (16, 32) on whose
grid every value lies, else 53.  So ``<u2`` and ``<u4`` word streams are judged at their own
resolution (no false alarm for 32-bit streams that legitimately produce 0.0 once in 2^32), raw
bytes and sound doubles at 53 bits, and float32-grade uniforms (multiples of 2^-24) at 32 bits,
which they do not meet: that is how such uniforms are caught when they arrive disguised as
``<f8``.  The price: a ``<f4`` input is judged at 32 bits too and fails the resolution checks;
a format-aware caller should pass ``resolution_bits=24`` for it (and 53 for a stream that
claims 53 bits, which makes the checks stricter still).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np
from numba import njit
from scipy import special, stats

from rngassay.errors import InputError

#: Rungs of the automatic resolution ladder (bits), coarsest first; above the last rung: 53.
BITS_LADDER = (16, 32)
FULL_BITS = 53


# --------------------------------------------------------------------------- resolution


@njit(cache=True)
def _on_grid(u, scale):
    for i in range(u.size):
        x = u[i] * scale
        if x != math.floor(x):
            return False
    return True


def on_grid(u: np.ndarray, bits: int) -> bool:
    """True when every value is a multiple of 2^-bits (exact: scaling by a power of two is exact)."""
    return bool(_on_grid(np.ascontiguousarray(u, dtype=np.float64), float(2.0**bits)))


def resolve_bits(u: np.ndarray, bits: int | None) -> tuple[int, bool]:
    """(resolution in bits, whether it was inferred from the data).

    A given resolution is lowered to the grid the values are found on (every value a multiple of 2^-b):
    a coarser grid than claimed is the fraction grid check's finding, so no other check fails it again (a
    sound 23-bit float32 stream judged at 24 bits would show no values above 1 - 2^-24, and twice the
    exact zeros). A sound stream loses a bit by chance with probability 2^-n."""
    if bits is not None:
        b = int(bits)
        if not 1 <= b <= FULL_BITS:
            raise InputError(f"resolution_bits must be in 1..{FULL_BITS}, got {bits}")
        from rngassay.intake.views import fraction_grid_bits

        return min(b, max(1, fraction_grid_bits(np.asarray(u, dtype=np.float64), b))), False
    if u.size == 0:
        return FULL_BITS, True
    for b in BITS_LADDER:
        if on_grid(u, b):
            return b, True
    return FULL_BITS, True


def lower_tail_probability(q: float, bits: int) -> float:
    """P(U < q) for U uniform on the grid {k 2^-bits : 0 <= k < 2^bits}: ceil(q 2^b) / 2^b."""
    m = 2.0**bits
    return min(1.0, math.ceil(q * m) / m)


def upper_tail_probability(q: float, bits: int) -> float:
    """P(U >= 1 - q) for U uniform on the 2^-bits grid: floor(q 2^b) / 2^b (exact for 1 - q a grid point too)."""
    m = 2.0**bits
    return min(1.0, math.floor(q * m) / m)


def expected_repeats(n: int, bits: int) -> float:
    """E[n - #distinct] for n values uniform on m = 2^bits cells: n - m (1 - (1 - 1/m)^n).

    Knuth, TAOCP Vol. 2, 3rd ed., §3.3.2 I (expected number of collisions); evaluated with
    ``expm1``/``log1p`` so it keeps its relative accuracy when n^2 / m is tiny (about
    n (n - 1) / (2 m) there).
    """
    n = int(n)
    if n < 2:
        return 0.0
    m = 2.0**bits
    if n < 1e-3 * m:
        # sum_j (-1)^j C(n, j) / m^(j-1), j = 2..4: truncation error below (n/m)^3 relative
        c2 = n * (n - 1) / 2.0
        c3 = c2 * (n - 2) / 3.0
        c4 = c3 * (n - 3) / 4.0
        return c2 / m - c3 / (m * m) + c4 / (m * m * m)
    # m ((1 - 1/m)^n - 1) + n: relative rounding error ~ m 1e-16 / n <= 1e-13 here
    return float(m * math.expm1(n * math.log1p(-1.0 / m)) + n)


# --------------------------------------------------------------------------- continuous targets


@dataclass(frozen=True)
class ContinuousTarget:
    """A fully specified continuous distribution the uniforms are transformed to."""

    name: str
    scipy: Callable[[], object]  # frozen scipy.stats distribution (reference)
    ppf: Callable[[np.ndarray], np.ndarray]
    logcdf: Callable[[np.ndarray], np.ndarray]
    logsf: Callable[[np.ndarray], np.ndarray]
    symmetric: bool
    kind: str = "continuous"


def _expon_ppf(u):
    return -np.log1p(-u)


def _expon_logcdf(x):
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(x > 0, np.log(-np.expm1(-np.maximum(x, 0.0))), -np.inf)


def _expon_logsf(x):
    return np.where(x > 0, -x, 0.0)


def _gamma2_logcdf(x):
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.log(special.gammainc(2.0, np.maximum(x, 0.0)))


def _gamma2_logsf(x):
    # S(x) = e^-x (1 + x) for the gamma(a=2) law: exact in the upper tail
    y = np.maximum(x, 0.0)
    return -y + np.log1p(y)


def _cauchy_ppf(u):
    u = np.asarray(u, dtype=np.float64)
    with np.errstate(divide="ignore"):
        lo = -1.0 / np.tan(np.pi * u)
        hi = 1.0 / np.tan(np.pi * (1.0 - u))
    return np.where(u < 0.5, lo, hi)


def _cauchy_logcdf(x):
    with np.errstate(divide="ignore"):
        return np.log(np.arctan2(1.0, -x) / np.pi)


def _cauchy_logsf(x):
    with np.errstate(divide="ignore"):
        return np.log(np.arctan2(1.0, x) / np.pi)


CONTINUOUS_TARGETS: dict[str, ContinuousTarget] = {
    t.name: t
    for t in (
        ContinuousTarget("normal", lambda: stats.norm(), special.ndtri, special.log_ndtr,
                         lambda x: special.log_ndtr(-x), True),
        ContinuousTarget("exponential", lambda: stats.expon(), _expon_ppf, _expon_logcdf, _expon_logsf, False),
        ContinuousTarget("gamma(a=2)", lambda: stats.gamma(a=2), lambda u: special.gammaincinv(2.0, u),
                         _gamma2_logcdf, _gamma2_logsf, False),
        ContinuousTarget("cauchy", lambda: stats.cauchy(), _cauchy_ppf, _cauchy_logcdf, _cauchy_logsf, True),
    )
}


# --------------------------------------------------------------------------- discrete targets


@dataclass(frozen=True)
class DiscreteTable:
    """Outcomes lo..hi of a discrete law: pmf, F(k) and S(k) = P(X > k) per outcome.

    The last outcome's pmf is S(hi - 1) (the tail beyond hi lumped into it), so the pmf sums to 1.
    """

    lo: int
    pmf: np.ndarray
    cdf: np.ndarray
    sf: np.ndarray

    @property
    def hi(self) -> int:
        return self.lo + self.pmf.size - 1

    def ppf(self, u: np.ndarray) -> np.ndarray:
        """F^-1(u) = min{k : F(k) >= u}: lower half by the cdf table, upper half by the sf table."""
        u = np.asarray(u, dtype=np.float64)
        idx = np.searchsorted(self.cdf, u, side="left")
        upper = u > 0.5
        if upper.any():
            # F(k) >= u  <=>  S(k) <= 1 - u (1 - u is exact for u >= 1/2); -S is non-decreasing
            idx_up = np.searchsorted(-self.sf, -(1.0 - u[upper]), side="left")
            idx[upper] = idx_up
        np.minimum(idx, self.pmf.size - 1, out=idx)
        return idx.astype(np.int64) + self.lo


def upper_outcome(frozen, tail: float, start: int) -> int:
    """Smallest outcome k >= start with S(k) = P(X > k) < ``tail`` (the support's top if it comes first).

    ``scipy.stats`` ``isf`` is unreliable for tails far below 1e-15 (NaN or infinite for some
    laws), so it only gives the starting point of a search in blocks of 256 outcomes.
    """
    b = frozen.support()[1]
    with np.errstate(divide="ignore", invalid="ignore"):
        guess = float(frozen.isf(max(tail, 1e-15)))
    hi = start if not math.isfinite(guess) else max(start, int(guess))
    while not (math.isfinite(b) and hi >= b):
        ks = np.arange(hi, hi + 256)
        below = np.flatnonzero(frozen.sf(ks) < tail)
        if below.size:
            hi = int(ks[below[0]])
            break
        hi += 256
    if math.isfinite(b):
        hi = min(hi, int(b))
    return hi


def discrete_table(frozen, tail: float = 2.0**-64) -> DiscreteTable:
    """Table of a frozen ``scipy.stats`` discrete law on lo..hi, hi the first k with S(k) < ``tail``.

    ``tail`` below 2^-53 means no uniform in [0, 1) (with 1 - u >= 2^-53) maps beyond hi.
    """
    lo = int(frozen.support()[0])
    hi = upper_outcome(frozen, tail, lo)
    k = np.arange(lo, hi + 1)
    cdf = frozen.cdf(k)
    sf = frozen.sf(k)
    pmf = frozen.pmf(k)
    pmf[-1] = frozen.sf(hi - 1) if hi > lo else 1.0
    return DiscreteTable(lo, np.asarray(pmf, float), np.asarray(cdf, float), np.asarray(sf, float))


@dataclass(frozen=True)
class DiscreteTarget:
    name: str
    scipy: Callable[[], object]
    kind: str = "discrete"

    def table(self) -> DiscreteTable:
        if self.name not in _TABLES:
            _TABLES[self.name] = discrete_table(self.scipy())
        return _TABLES[self.name]


_TABLES: dict[str, DiscreteTable] = {}

DISCRETE_TARGETS: dict[str, DiscreteTarget] = {
    t.name: t
    for t in (
        DiscreteTarget("poisson(mu=3)", lambda: stats.poisson(mu=3)),
        DiscreteTarget("binomial(n=10 p=0.3)", lambda: stats.binom(n=10, p=0.3)),
        DiscreteTarget("geometric(p=0.2)", lambda: stats.geom(p=0.2)),
    )
}

TARGETS: dict[str, ContinuousTarget | DiscreteTarget] = {**CONTINUOUS_TARGETS, **DISCRETE_TARGETS}


def ad_from_logs(log_f: np.ndarray, log_s: np.ndarray) -> float:
    """Anderson–Darling A² from ln F(x_(i)) and ln S(x_(i)) of a sorted sample (Anderson & Darling 1954).

    A² = -n - (1/n) sum [(2i - 1) ln F_(i) + (2n + 1 - 2i) ln S_(i)]; compensated summation
    (the kernel of :mod:`rngassay.checks.classic.goodness`).
    """
    from rngassay.checks.classic.goodness import _ad_weighted_sum

    lf = np.ascontiguousarray(log_f, dtype=np.float64)
    ls = np.ascontiguousarray(log_s, dtype=np.float64)
    n = lf.size
    acc, comp = _ad_weighted_sum(lf, ls, 0, n, 0.0, 0.0)
    fn = float(n)
    return float(-(fn * fn + acc) / fn)
