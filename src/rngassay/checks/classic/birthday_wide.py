"""Birthday spacings with large cell counts: t-tuples of word prefixes in 2^40 .. 2^64 cells.

H0: the words are i.i.d. uniform 32-bit integers.  A *point* is a non-overlapping t-tuple of
consecutive words (t = 2, 3, 4); its *cell* is the concatenation of the top ``b`` bits of each
word, first word most significant, one of ``k = 2^(t b)`` cells.  Take n points, sort their
cells ``Y_1 <= ... <= Y_n``, form the n circular spacings ``Y_2 - Y_1, ..., Y_1 + k - Y_n``, and
let R be the number of repeated values among the spacings (``R = sum_s (N_s - 1)^+``, N_s the
number of spacings equal to s).  R is approximately Poisson with mean ``lambda = n^3 / (4 k)``.

Why large k: the t-tuples of a generator with a small state (a linear congruential generator
with modulus m, say) lie on a lattice of about m points; once ``k >> m`` the spacings between
the sampled points are differences of lattice points, which take far fewer values than k, and R
grows to about ``n^3 / (4 c m)`` (c ~ 1.5 measured for the 48-bit drand48 LCG) whatever k is.
A test with ``k >> m`` and moderate n therefore sees a state of m; this is the
observation of P. L'Ecuyer, R. Simard (2001), "On the performance of birthday spacings tests with
certain families of random number generators", Math. Comput. Simulation 55, 131-137 (from
memory): an LCG with modulus m fails once n is a small multiple of m^(1/3) and k exceeds m.

Exact mean
----------
:func:`wide_mean` computes E[R] for n uniform birthdays in k days exactly (up to rounding and a
truncated, rapidly converging alternating series), with the pattern-counting formula of
``birthday.birthday_mean`` (``E R = E (N_0 - 1)^+ + sum_{q >= 2} (-1)^q sum_{s >= 1} E C(N_s, q)``)
but evaluated so that it stays accurate for k up to 2^64: binomial coefficients of the huge
free-day counts are sums of logs of their factors (``birthday_mean`` takes differences of
log-gamma values of size ~k log k there: measured against this function, its relative error is
~5e-6 at k = 2^36, ~4e-4 at 2^42, and it is meaningless at 2^48), and sums over s use
Gauss-Legendre quadrature with the Euler-Maclaurin midpoint correction.
How far the asymptotic lambda is off: E[R] = lambda (1 - eps) with eps = 2/n - 1/n^2 in the limit
k -> infinity (Dirichlet spacings; a test checks it) plus about 0.2 n^2/k (measured); for the
default variants eps <= 2e-4.  Over 64 pooled replicates of mean lambda <= 8 that shifts the
total by at most 0.1, against a standard deviation >= 5.6: so lambda would do, but the exact mean
costs about 0.1 s once per (n, k) and is used.

The total R over all complete samples of a run is tested against Poisson(samples E[R]), both
tails (too few repeats: a lattice or short period in the bits used).  The Poisson law is the
asymptotic one (the number of repeated spacings is a sum of weakly dependent rare events).
Measured on PCG64 words, 4000 samples per variant of the 2^16-word defaults (lambda 0.5, 0.59,
1.0): variance/mean 1.024, 1.012, 1.019 (standard error ~0.03); pooled over groups of 4 samples,
two-sided p < 0.01 in 0.3%, 0.4%, 0.3% of the groups (the discrete law is conservative at these
small means).  ``pooled = {"observed": total, "mu": samples E[R]}``.

Parameters chosen for a data size (:func:`default_variants`): one sample of as many points as the
words allow (at most 2^20), and the largest b with ``lambda >= 1/2`` (so k is as large as the
points allow: ``lambda`` in [1/2, 2^(t-1))).  A 2 MiB segment gives n = 2^18 pairs in 2^52 cells
(lambda = 1), 174,762 triples in 2^51 cells and 2^17 quadruples in 2^48 cells; a 1 MiB segment
(what non-cheap checks get at budgets of 128 MiB and more) 2^17 pairs in 2^50 cells (lambda = 1/2).
Cells below 2^40 are left to the plain birthday-spacings check.

Why lambda as small as 1/2 per sample: the pooled total over the replicates is what is tested
(mean 4 at 8 MiB, 32 at 64 MiB), and power against a lattice of m points needs k > m.  With
lambda >= 4 a 1 MiB segment would allow only 2^46 cells for pairs, where the 2^48-point lattice of
drand48 no longer shows (measured: 2^48 cells give 1.16 lambda, 2^50 cells 2.8 lambda, 2^52 cells
10.7 lambda, at n = 2^18).  Measured power of the default variants, PCG64 passing throughout:
drand48 (bits 47..16 as words) fails pairs at --budget 8MiB (59 repeats of 4 expected, p 8e-49)
and at 1GiB (p 9e-58); LCGs with 31/32-bit states (minstd, RANDU, Numerical Recipes' lcg32) and
xorshift32 fail every variant from one 2 MiB sample; triples and quadruples do not see drand48 at
2 MiB segments (2^51 and 2^48 cells are too close to 2^48 points).
"""

from __future__ import annotations

import math
from fractions import Fraction
from functools import lru_cache

import numpy as np

from rngassay.checks.classic.birthday import _stirling2_col, spacing_repeats
from rngassay.checks.lawcache import kept
from rngassay.checks.registry import CheckSpec, check_id, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError
from rngassay.stats import poisson_tails

KEY = "birthday spacings wide"
SOURCE = ("L'Ecuyer & Simard (2001), On the performance of birthday spacings tests with certain families "
          "of random number generators, Math. Comput. Simulation 55, 131-137 [from memory]; "
          "Marsaglia (1985) birthday spacings; Knuth, TAOCP Vol. 2, 3rd ed., §3.3.2 J")

#: Dimensions of the default variants.
DIMENSIONS = (2, 3, 4)
#: Most points per sample of the default variants.
MAX_POINTS = 1 << 20
#: Most points per sample accepted at all (the kernel needs 60-90 bytes per point).
MAX_POINTS_API = 1 << 22
#: Smallest per-sample Poisson mean the defaults accept (see the module docstring).
LAMBDA_MIN = 0.5
#: Fewest cells (as a power of two) of a default variant: smaller cell counts are the plain check's.
MIN_CELL_BITS = 40

# ------------------------------------------------------------------ exact mean


def wide_lambda(n: int, cells: int) -> float:
    """Asymptotic Poisson mean n^3 / (4 k)."""
    return float(n) ** 3 / (4.0 * float(cells))


def _log_occupancy(j: int, e: np.ndarray, n: int, k: float) -> np.ndarray:
    """log P(j given days all occupied and e (array) other given days empty), n birthdays in k days.

    P = sum_{u >= j} C(n, u) j! S(u, j) k^-u (1 - (e + j)/k)^(n - u): u birthdays fall on the j
    days and cover them, the other n - u avoid all j + e days.  Positive terms; each next term is
    about n j / k times the previous one, so the series is cut when a term drops below 1e-20.
    """
    e = np.asarray(e, dtype=np.float64)
    out = np.full(e.shape, -np.inf)
    if j > n:
        return out
    umax = min(n, j + 60)
    col = _stirling2_col(j, umax)
    free = k - e - j
    with np.errstate(divide="ignore", invalid="ignore"):
        lfree = np.where(free > 0, np.log1p(-(e + j) / k), -np.inf)
    lk = math.log(k)
    log_nfall = 0.0  # log n (n-1) ... (n-u+1), built up
    for u in range(0, umax + 1):
        if u >= j:
            lc = log_nfall - math.lgamma(u + 1) + math.lgamma(j + 1) + math.log(col[u]) - u * lk
            if u == n:
                term = np.where(free >= 0, lc, -np.inf)
            else:
                term = lc + (n - u) * lfree
            out = np.logaddexp(out, term)
            with np.errstate(invalid="ignore"):
                done = np.all((term - out < -46) | ~np.isfinite(out))
            if done:
                break
        if u < n:
            log_nfall += math.log(n - u)
    return out


def _log_compositions(L: np.ndarray, parts: int) -> np.ndarray:
    """log C(L - 1, parts - 1): compositions of L free days into ``parts`` positive gaps (L real, >= parts)."""
    L = np.asarray(L, dtype=np.float64)
    if parts == 0:
        return np.where(L == 0, 0.0, -np.inf)
    ok = L >= parts
    acc = np.zeros(L.shape)
    Ls = np.where(ok, L, float(parts))
    for i in range(1, parts):
        acc = acc + np.log(Ls - i)
    acc -= math.lgamma(parts)
    return np.where(ok, acc, -np.inf)


def _pattern_moment(q: int, s: np.ndarray, n: int, k: float) -> np.ndarray:
    """E C(N_s, q) for spacings s >= 1 (array, may be non-integer for quadrature).

    Unordered sets of q patterns "occupied day, s-1 empty days, occupied day" on the circle:
    k/q times the sum over a (adjacent pattern pairs sharing a day) of C(q, a) x compositions of
    the L = k - q s free days into q - a positive gaps x P(2q - a days occupied, q (s-1) empty).
    """
    s = np.asarray(s, dtype=np.float64)
    L = k - q * s
    e = q * (s - 1.0)
    acc = np.full(s.shape, -np.inf)
    for a in range(q + 1):
        lt = math.log(math.comb(q, a)) + _log_compositions(L, q - a) + _log_occupancy(2 * q - a, e, n, k)
        acc = np.logaddexp(acc, lt)
    return np.exp(acc + math.log(k) - math.log(q))


_GL_X, _GL_W = np.polynomial.legendre.leggauss(24)
_DIRECT_SUM_MAX = 20_000


def _sum_over_s(q: int, n: int, k: float) -> float:
    """sum_{s >= 1} E C(N_s, q): term by term when short, else quadrature + Euler-Maclaurin."""
    smax = math.floor(k / q)
    if smax < 1:
        return 0.0
    scale = k / (q * max(n - 2 * q, 1))  # e-folding length of the summand in s
    lim = int(min(smax, math.ceil(90.0 * scale) + 16))
    if lim <= _DIRECT_SUM_MAX:
        return float(_pattern_moment(q, np.arange(1, lim + 1, dtype=np.float64), n, k).sum())
    head = 256
    total = float(_pattern_moment(q, np.arange(1, head + 1, dtype=np.float64), n, k).sum())
    a, b = head + 0.5, lim + 0.5
    panels = max(64, int(8 * (b - a) / scale) + 1)
    edges = np.linspace(a, b, panels + 1)
    mid, half = 0.5 * (edges[1:] + edges[:-1]), 0.5 * (edges[1:] - edges[:-1])
    x = (mid[:, None] + half[:, None] * _GL_X[None, :]).ravel()
    w = (half[:, None] * _GL_W[None, :]).ravel()
    total += float(np.dot(w, _pattern_moment(q, x, n, k)))
    # midpoint Euler-Maclaurin: sum_{s=A}^{B} f(s) = int_{A-1/2}^{B+1/2} f - [f'(B+1/2) - f'(A-1/2)]/24 + ...
    fd = _pattern_moment(q, np.array([a - 1.0, a + 1.0, b - 1.0, b + 1.0]), n, k)
    total -= ((fd[3] - fd[2]) / 2.0 - (fd[1] - fd[0]) / 2.0) / 24.0
    return total


def _zero_part(n: int, k: float) -> float:
    """E (N_0 - 1)^+, N_0 = n - (number of distinct birthdays): E N_0 - P(N_0 >= 1)."""
    if n > k:
        raise ValueError("zero-spacing term needs n <= k")
    # E N_0 = n - k (1 - (1 - 1/k)^n) = sum_{i >= 2} (-1)^i C(n, i) k^(1-i); series when n/k is small
    if n * n < 1e-3 * k:
        e_n0, term, i, sign = 0.0, n * (n - 1) / (2.0 * k), 2, 1.0
        while term > 1e-18 * e_n0:
            e_n0 += sign * term
            term *= (n - i) / ((i + 1) * k)
            i, sign = i + 1, -sign
    else:
        e_n0 = n + k * math.expm1(n * math.log1p(-1.0 / k))
    log_distinct = float(np.sum(np.log1p(-np.arange(n, dtype=np.float64) / k)))
    p_any = -math.expm1(log_distinct)
    return max(e_n0 - p_any, 0.0)


@lru_cache(maxsize=64)
@kept  # computed once per machine
def wide_mean(n: int, cells: int) -> float:
    """Exact E[R] for n i.i.d. uniform birthdays in ``cells`` days (circular spacings).

    Exact up to floating-point rounding, quadrature error (relative ~1e-12) and an alternating
    series stopped when a term is below 1e-15 of the total.  Agrees with ``birthday.birthday_mean``
    where that is accurate, and with enumeration of all k^n configurations for small k, n (tests).
    """
    n, k = int(n), float(cells)
    if n < 2 or cells < 2 or n > cells:
        raise ValueError(f"wide_mean needs 2 <= n <= cells, got n={n}, cells={cells}")
    total = _zero_part(n, k)
    for q in range(2, n + 1):
        if q > k:
            break
        tq = _sum_over_s(q, n, k)
        total += tq if q % 2 == 0 else -tq
        if tq < 1e-15 * max(abs(total), 1e-300):
            break
    return total


# ------------------------------------------------------------------ the check


def _validate(t: int, b: int, n: int) -> None:
    if t < 1 or t > 8:
        raise InputError(f"{KEY}: t must be in 1..8, got {t}")
    if b < 1 or b > 32 or t * b > 64:
        raise InputError(f"{KEY}: need 1 <= b <= 32 and t*b <= 64 (cells are uint64), got t={t}, b={b}")
    if n < 2 or n > MAX_POINTS_API:
        raise InputError(f"{KEY}: points per sample n must be in 2..2^22, got {n}")
    if n > 1 << (t * b):
        raise InputError(f"{KEY}: n={n} points exceed the 2^{t * b} cells")


def check_birthday_spacings_wide(data: np.ndarray, t: int = 2, b: int = 26, n: int = 1 << 18,
                                 n_words: int | None = None) -> CheckResult:
    """Birthday spacings on t-tuples of the top b bits of words, n points per sample.

    H0: the first ``n_words`` words (all when None) are i.i.d. uniform 32-bit integers.  Each
    sample takes n t consecutive words; points are non-overlapping t-tuples, cells the
    concatenated top b bits (2^(t b) cells).  Statistic: total number of repeated spacings over
    all complete samples, tested against Poisson(samples * :func:`wide_mean`); both tails.
    """
    t, b, n = int(t), int(b), int(n)
    _validate(t, b, n)
    a = np.asarray(data).ravel()
    if n_words is not None:
        n_words = int(n_words)
        if n_words < 0 or n_words > a.size:
            raise InputError(f"{KEY}: asked for {n_words} words, {a.size} available")
        a = a[:n_words]
    if a.dtype != np.uint32:
        raise InputError(f"{KEY}: needs 32-bit words (uint32), got {a.dtype}")
    samples = a.size // (n * t)
    if samples < 1:
        raise InputError(f"{KEY} with n={n} points of t={t} words needs at least {n * t} words, got {a.size}",
                         hint="use more data or a smaller n")
    bits = t * b
    r = spacing_repeats(a, n, bits, 32 - b, t)
    total = int(r.sum())
    mean1 = wide_mean(n, 1 << bits)
    mu = samples * mean1
    right, left = poisson_tails(total, mu)
    return CheckResult(
        name=check_id(KEY, {"t": t, "b": b}), statistic=float(total), p_value=right, p_left=left,
        null=f"poisson(mu={mu:.6g})", kind="discrete", n=samples * n * t,
        details={"samples": samples, "points": n, "cells": f"2^{bits}", "mean_per_sample": mean1,
                 "lambda_asymptotic": wide_lambda(n, 1 << bits),
                 "per_sample": r.tolist() if samples <= 64 else None},
        pooled={"observed": total, "mu": mu},
    )


def default_variants(n_words: int) -> list[dict]:
    """Parameters for ``n_words`` words: per t in DIMENSIONS, samples of n = min(n_words // t, 2^20)
    points, b the largest with n^3 / (4 * 2^(t b)) >= LAMBDA_MIN (= 1/2) and t b <= 64; a t is
    left out when that gives fewer than 2^MIN_CELL_BITS (2^40) cells."""
    out = []
    for t in DIMENSIONS:
        n = min(n_words // t, MAX_POINTS)
        if n < 2:
            continue
        # largest b with 2^(t b) <= n^3 / (4 LAMBDA_MIN), in exact integer arithmetic
        cap = int(Fraction(n**3) / (4 * Fraction(LAMBDA_MIN)))
        b = min((cap.bit_length() - 1) // t, 32, 64 // t)
        if t * b < MIN_CELL_BITS:
            continue
        samples = n_words // (n * t)
        out.append({"t": t, "b": b, "n": n, "n_words": samples * n * t})
    return out


register(CheckSpec(
    key=KEY, family="classic",
    sized=("b",),  # bits per coordinate, from the data available
    title="birthday spacings in t dimensions with large cell counts (L'Ecuyer & Simard 2001)",
    view="words32", kind="discrete", func=check_birthday_spacings_wide,
    values_needed=lambda p: int(p["n_words"]), default_params=default_variants, both_tails=True,
    source=SOURCE,
    notes="pairs, triples, quadruples of word prefixes; one sample of up to 2^20 points per segment, "
          "2^40..2^64 cells (lambda >= 1/2, as many cells as possible: sees lattices of up to ~2^50 "
          "points); exact mean; pooled: Poisson observed/mu",
))
