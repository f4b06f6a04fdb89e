"""Tail counts beyond extreme quantiles of a transformed target, and the exact-endpoint count.

**tail count** — the uniforms are transformed to the normal target (``ndtri``) and the values below
its ``q``-quantile (``side=lower``) or above its ``1 - q``-quantile (``side=upper``) are counted.
H0: i.i.d. uniforms of the claimed resolution, so the count is Binomial(n, p) exactly, with
``p = P(U < q)`` or ``P(U >= 1 - q)`` on the claimed grid (:func:`lower_tail_probability`,
:func:`upper_tail_probability`; p = q up to one grid step).  Both tails of the exact binomial law
count: too many extreme values flag a generator that over-produces values near 0 or 1; too few
flag clipping (uniforms kept away from 0 and 1) or a resolution too coarse to reach the tail.
``pooled = {"observed": k, "n": n, "p": p}``: the battery adds the counts of its replicates
(a sum of binomial counts with a common p is binomial).

For an exact transform the count equals the number of uniforms below q (above 1 - q): the target
only changes where the threshold is evaluated, which is why the battery uses one target (normal,
symmetric, both tails) rather than several; the per-distribution tail counts of a supplier's own
variates are in ``rngassay fit``.

Tail levels: q = 1e-5 and 1e-7, each when one replicate expects at least 0.25 values beyond it
(n q >= 0.25): with the battery's >= 4 replicates the pooled count then expects >= 1, and the
upper tail (excess) is informative at once; a deficit becomes significant once the pooled
expectation reaches ~7 (P(0) = e^-7 ~ 1e-3).  At the default 64 MiB budget one replicate holds
2^18 uniforms: 1e-5 qualifies (2.6 expected per replicate, 84 pooled), 1e-7 needs 2.5·10^6
uniforms per replicate.

**exact endpoints** — the number of exact 0.0 values (and, with ``closed=True``, of 1.0 values:
impossible for validated [0, 1) input, possible for PIT values), which the quantile functions of
unbounded targets send to ±infinity (``-ln(U)`` too).  H0: uniforms of the claimed resolution, so
the count is Binomial(n, 2^-bits) per endpoint, Poisson to within n 2^-2bits; the Poisson law is
used (``pooled = {"observed", "mu"}``).  Right tail only: a generator that never returns 0.0 (an
open-interval convention) is not flawed.

Resolution (``resolution_bits``): see :mod:`._common`; ``None`` (the default) infers 16, 32 or 53 bits from the sample's
grid.  53-bit uniforms make a single 0.0 a p ~ n 2^-53 event; 32-bit ones (``<u4`` words) a
p ~ n 2^-32 event.  A caller that knows the stream's format should pass its resolution.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit
from scipy import special

from rngassay.checks.classic.frequency import need, result_name, uniforms
from rngassay.checks.registry import CheckSpec, SharedTable, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError
from rngassay.stats import binomial_tails, poisson_tails

from ._common import FULL_BITS, lower_tail_probability, resolve_bits, upper_tail_probability

#: Tail levels of the battery's tail counts.
TAIL_LEVELS = (1e-5, 1e-7)
#: A level is used when one replicate expects at least this many values beyond it.
MIN_EXPECTED_PER_REPLICATE = 0.25


def normal_thresholds(q: float) -> tuple[float, float]:
    """(z_lo, z_hi): the standard normal q- and (1-q)-quantiles, ndtri(q) and -ndtri(q)."""
    z = float(special.ndtri(q))
    return z, -z


def count_beyond(x: np.ndarray, threshold: float, side: str) -> int:
    """#{x < threshold} (lower) or #{x > threshold} (upper)."""
    if side == "lower":
        return int(np.count_nonzero(x < threshold))
    return int(np.count_nonzero(x > threshold))


def binomial_count_p(k: int, n: int, p: float) -> tuple[float, float]:
    """Exact binomial tails (P(K >= k), P(K <= k)) of a tail count; n = 0 gives (1, 1)."""
    if n == 0:
        return 1.0, 1.0
    return binomial_tails(k, n, p)


def check_tail_count(data: np.ndarray, q: float = 1e-5, side: str = "lower", target: str = "normal",
                     resolution_bits: int | None = None, n: int | None = None) -> CheckResult:
    """Count of transformed values beyond the target's extreme quantile (module docstring).

    H0: i.i.d. uniforms of the claimed resolution; the count is Binomial(n, p), p the grid
    probability of the tail.  Exact binomial tails, both meaningful.
    """
    q = _tail_params(target, q, side)
    u = uniforms(data, n, "tail count")
    need(u.size, 1, "tail count")
    b, inferred = resolve_bits(u, resolution_bits)
    near = u[u < 2.0 * q] if side == "lower" else u[u > 1.0 - 2.0 * q]
    return _tail_result(near, int(u.size), q, side, target, resolution_bits, b, inferred)


def _tail_params(target: str, q: float, side: str) -> float:
    if target != "normal":
        raise InputError(f"tail count: target must be 'normal', got {target!r}")
    if side not in ("lower", "upper"):
        raise InputError(f"tail count: side must be 'lower' or 'upper', got {side!r}")
    q = float(q)
    if not 0.0 < q < 0.5:
        raise InputError(f"tail count: q must be in (0, 0.5), got {q}")
    return q


def _tail_result(near: np.ndarray, m: int, q: float, side: str, target: str, resolution_bits: int | None, b: int,
                 inferred: bool) -> CheckResult:
    """The tail count from the values near the tail (below 2q, or above 1 - 2q, in stream order) of m uniforms."""
    z_lo, z_hi = normal_thresholds(q)
    # only values near the tail can cross the threshold: transform those (ndtri is monotone)
    if side == "lower":
        with np.errstate(divide="ignore"):
            x = special.ndtri(near)
        k = count_beyond(x, z_lo, "lower")
        p = lower_tail_probability(q, b)
        thr = z_lo
    else:
        x = special.ndtri(near)
        k = count_beyond(x, z_hi, "upper")
        p = upper_tail_probability(q, b)
        thr = z_hi
    right, left = binomial_count_p(k, m, p)
    return CheckResult(
        name=result_name("tail count", {"target": target, "q": q, "side": side, "resolution_bits": resolution_bits}),
        statistic=float(k), p_value=right, p_left=left, null=f"binomial(n={m}, p={p:.6g})",
        kind="discrete", n=m, pooled={"observed": k, "n": m, "p": p},
        details={"threshold": thr, "expected": m * p, "bits": b, "bits_inferred": inferred},
    )


def check_exact_endpoints(data: np.ndarray, resolution_bits: int | None = None, closed: bool = False,
                          n: int | None = None) -> CheckResult:
    """Count of exact 0.0 (and 1.0 when ``closed``) values against the claimed resolution.

    H0: i.i.d. uniforms on the 2^-bits grid of [0, 1) (``closed``: of [0, 1], each endpoint with
    probability 2^-bits), so the count is Poisson(n 2^-bits) (per endpoint) to within n 2^-2bits.
    Right tail only.
    """
    u = uniforms(data, n, "exact endpoints")
    need(u.size, 1, "exact endpoints")
    b, inferred = resolve_bits(u, resolution_bits)
    zeros = int(np.count_nonzero(u == 0.0))
    ones = int(np.count_nonzero(u == 1.0))
    return _endpoints_result(zeros, ones, int(u.size), b, inferred, resolution_bits, closed)


def _endpoints_result(zeros: int, ones: int, m: int, b: int, inferred: bool, resolution_bits: int | None,
                      closed: bool) -> CheckResult:
    ends = 2 if closed else 1
    mu = m * ends * 2.0**-b
    k = zeros + ones
    right, _left = poisson_tails(k, mu)
    return CheckResult(
        name=result_name("exact endpoints", {"resolution_bits": resolution_bits, "closed": closed or None}),
        statistic=float(k), p_value=right, null=f"poisson(mu={mu:.6g})", kind="discrete", n=m,
        pooled={"observed": k, "mu": mu},
        details={"zeros": zeros, "ones": ones, "bits": b, "bits_inferred": inferred,
                 "expected": mu},
    )


# --------------------------------------------------------------------------- the shared table

NEAR = 2.0 * max(TAIL_LEVELS)  # the table keeps the values within 2 q_max of 0 and of 1


@njit(cache=True, nogil=True)
def _extremes(u, lo_lim, hi_lim, scale, cap):
    """One pass: the values below lo_lim and above hi_lim (in stream order, at most ``cap`` of each) and the OR
    of floor(u * scale) as uint64. ok = False when more than ``cap`` are near a tail or a scaled value is
    outside [0, 2^64) (NaN included): the caller then takes the checks' function forms."""
    lo = np.empty(cap, dtype=np.float64)
    hi = np.empty(cap, dtype=np.float64)
    nlo = 0
    nhi = 0
    acc = np.uint64(0)
    for i in range(u.size):
        x = u[i]
        f = math.floor(x * scale)
        if not (f >= 0.0 and f < 18446744073709551616.0):
            return lo[:0], hi[:0], np.uint64(0), False
        acc |= np.uint64(f)
        if x < lo_lim:
            if nlo == cap:
                return lo[:0], hi[:0], np.uint64(0), False
            lo[nlo] = x
            nlo += 1
        elif x > hi_lim:
            if nhi == cap:
                return lo[:0], hi[:0], np.uint64(0), False
            hi[nhi] = x
            nhi += 1
    return lo[:nlo], hi[:nhi], acc, True


def _extremes_table(u: np.ndarray, n: int, view: str) -> tuple | None:
    """(n, values below 2 q_max, values above 1 - 2 q_max, OR of floor(u 2^53)) of the first n uniforms: the
    tail counts, the endpoint count and the grid their resolution is judged on all follow from it."""
    if view != "uniforms" or n < 1:
        return None
    u = np.ascontiguousarray(uniforms(u, n, "tail count"), dtype=np.float64)
    cap = int(u.size * 4 * NEAR) + 1024  # 4 times the null's expectation, and room for small samples
    lo, hi, acc, ok = _extremes(u, NEAR, 1.0 - NEAR, 2.0**FULL_BITS, cap)
    return (int(u.size), lo, hi, int(acc)) if ok else None


# the values near 0 and 1 and the grid: the four tail counts and the exact endpoints from one pass
EXTREMES = SharedTable("uniform extremes", _extremes_table)


def _bits_from_table(acc53: int, resolution_bits: int | None) -> tuple[int, bool] | None:
    """resolve_bits for a given resolution, from the OR of floor(u 2^53): floor(u 2^b) = floor(u 2^53) >> (53 - b)
    and OR commutes with the shift. None (inference from the data) is left to the function form."""
    if resolution_bits is None:
        return None
    b = int(resolution_bits)
    if not 1 <= b <= FULL_BITS:
        raise InputError(f"resolution_bits must be in 1..{FULL_BITS}, got {resolution_bits}")
    from rngassay.intake.views import grid_from_or

    return min(b, max(1, grid_from_or(acc53 >> (FULL_BITS - b), b))), False


def tail_from_table(table: tuple, params: dict) -> CheckResult | None:
    """The tail count from the shared table (None when its parameters need the function form)."""
    m, lo, hi, acc = table
    q = _tail_params(params.get("target", "normal"), params.get("q", 1e-5), params.get("side", "lower"))
    if 2.0 * q > NEAR:
        return None
    need(m, 1, "tail count")
    bits = _bits_from_table(acc, params.get("resolution_bits"))
    if bits is None:
        return None
    near = lo[lo < 2.0 * q] if params.get("side", "lower") == "lower" else hi[hi > 1.0 - 2.0 * q]
    return _tail_result(near, m, q, params.get("side", "lower"), params.get("target", "normal"),
                        params.get("resolution_bits"), *bits)


def endpoints_from_table(table: tuple, params: dict) -> CheckResult | None:
    """The exact-endpoint count from the shared table (None when its parameters need the function form)."""
    m, lo, hi, acc = table
    need(m, 1, "exact endpoints")
    bits = _bits_from_table(acc, params.get("resolution_bits"))
    if bits is None:
        return None
    zeros, ones = int(np.count_nonzero(lo == 0.0)), int(np.count_nonzero(hi == 1.0))
    return _endpoints_result(zeros, ones, m, *bits, params.get("resolution_bits"), bool(params.get("closed", False)))


def _tail_defaults(n: int) -> list[dict]:
    """q in (1e-5, 1e-7) with n q >= 0.25, both sides of the normal target."""
    out = []
    for q in TAIL_LEVELS:
        if n * q >= MIN_EXPECTED_PER_REPLICATE:
            for side in ("lower", "upper"):
                out.append({"n": n, "target": "normal", "q": q, "side": side})
    return out


register(CheckSpec(
    key="tail count", family="transform", title="count of transformed values beyond extreme quantiles",
    view="uniforms", kind="discrete", func=check_tail_count, values_needed=lambda p: int(p["n"]),
    default_params=_tail_defaults, both_tails=True,
    source="exact binomial law of a tail count (inverse-CDF method, common practice)",
    notes="normal target, q = 1e-5 and 1e-7 when a replicate expects >= 0.25 values beyond; both sides; "
          "resolution inferred (16, 32 or 53 bits)",
    resolution_param='resolution_bits', cheap=True, table=EXTREMES, from_table=tail_from_table,
))

register(CheckSpec(
    key="exact endpoints", family="transform", title="exact 0.0 values that quantile functions send to infinity",
    view="uniforms", kind="discrete", func=check_exact_endpoints, values_needed=lambda p: int(p["n"]),
    default_params=lambda n: [{"n": n}] if n >= 1 else [], both_tails=False,
    source="Poisson law of rare grid points (common practice)",
    notes="resolution inferred from the data: 16 or 32 bits when every value lies on that grid, else 53",
    resolution_param='resolution_bits', cheap=True, table=EXTREMES, from_table=endpoints_from_table,
))
