"""Collision test (Knuth §3.3.2 I): balls thrown into many more urns than balls.

H0: the uniforms are i.i.d. U[0, 1).  Each ball is a t-tuple of consecutive uniforms, and its urn
is ``sum_j floor(d U_j) d^j`` (j < t), one of ``m = d^t`` urns.  With n balls (m >> n) the
number of *collisions* (balls that land in an already occupied urn) has the exact law

    P(C = c) = m (m-1) ... (m-n+c+1) / m^n * S(n, n-c)        (S: Stirling numbers, 2nd kind)

computed here by the recurrence Knuth describes (one ball at a time; a ball collides with
probability occupied/m), in floating point, exactly up to rounding (relative error ~ n 1e-16).
Too many collisions show clustering; too few (left tail) an over-regular spread, as a lattice
or a short period in the tuples gives: both tails are evidence.

A run of the check throws ``samples`` independent sets of n balls and uses the total number of
collisions.  The law of the total is the ``samples``-fold convolution of the exact law: computed
exactly by direct convolution when ``samples <= EXACT_SUM_MAX`` and otherwise by the
Lugannani-Rice saddlepoint approximation for lattice sums (second continuity correction,
Daniels 1987) built on the *exact* single-sample law; against the exact convolution its tail
p-values agree to 1e-4 relative or better from the centre down to 1e-150 (measured at 2, 4 and 16
samples; the tests require 1e-3 at 16 samples, the smallest count where it is used is 17).

Pooling across replicates at the second level: ``pooled`` gives the total ``observed``, its exact
mean ``mu`` and variance ``var`` and ``samples``.  Sums of totals can be tested exactly with
:func:`collision_sum_tails` (the law only depends on the total number of samples).  A Poisson
approximation Poisson(mu) is cruder: the exact variance is below the mean (by 2.1% for
n = 2^14, m = 2^20, where the pooled Poisson test is therefore slightly conservative).

Method: D. E. Knuth, TAOCP Vol. 2, 3rd ed., §3.3.2 I (collision test).
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
from numba import njit
from scipy import optimize, special

from rngassay.checks.registry import CheckSpec, check_id, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError
from rngassay.stats import P_FLOOR, clip_p

KNUTH_COLLISION = "Knuth, TAOCP Vol. 2, 3rd ed., §3.3.2 I (collision test)"

#: Up to this many samples the law of the total is an exact convolution; beyond, saddlepoint.
EXACT_SUM_MAX = 16
#: Default urns and balls: Knuth's example, m = 2^20 urns, n = 2^14 balls (about 128 collisions).
DEFAULT_URNS = 1 << 20
DEFAULT_BALLS = 1 << 14
_UNDERFLOW = 1e-300  # probabilities below this are dropped in the recurrence (all p-values < P_FLOOR*1e8)

# ------------------------------------------------------------------ the exact law


@njit(cache=True)
def _collision_pmf(balls, urns):
    """pmf of the number of collisions, by the one-ball-at-a-time recurrence (entries < 1e-300 dropped)."""
    p = np.zeros(balls + 1, dtype=np.float64)
    p[0] = 1.0
    lo = 0
    hi = 0
    fm = float(urns)
    for t in range(balls):  # t balls are already in the urns; ball t+1 is thrown now
        for c in range(hi, lo - 1, -1):
            x = p[c]
            if x == 0.0:
                continue
            q = (t - c) / fm  # occupied urns / m
            moved = x * q
            p[c] = x * (1.0 - q)
            p[c + 1] += moved
        if p[hi + 1] >= 1e-300:
            hi += 1
        else:
            p[hi + 1] = 0.0
        while lo < hi and p[lo] < 1e-300:
            p[lo] = 0.0
            lo += 1
    return p


@lru_cache(maxsize=16)
def collision_pmf(balls: int, urns: int) -> np.ndarray:
    """Exact (to rounding) pmf of the number of collisions of ``balls`` balls in ``urns`` urns.

    Entry c is P(C = c) for c = 0..balls; probabilities below 1e-300 are returned as 0.
    Read-only array (cached).
    """
    balls, urns = int(balls), int(urns)
    if balls < 1 or urns < 1:
        raise ValueError("balls and urns must be >= 1")
    p = _collision_pmf(balls, urns)
    p.setflags(write=False)
    return p


def collision_mean(balls: int, urns: int) -> float:
    """Exact E[C] = n - m (1 - (1 - 1/m)^n) (the expected number of empty urns is m (1-1/m)^n)."""
    n, m = float(balls), float(urns)
    return n + m * math.expm1(n * math.log1p(-1.0 / m))


def collision_variance(balls: int, urns: int) -> float:
    """Exact Var[C] = Var[empty urns] = m(m-1)(1-2/m)^n + m(1-1/m)^n - m^2 (1-1/m)^(2n).

    Evaluated without cancellation: with a = (1-1/m)^n, (1-2/m)^n - a^2 = a^2 expm1(n log1p(-1/(m-1)^2))
    since (1-2/m)/(1-1/m)^2 = 1 - 1/(m-1)^2.
    """
    n, m = float(balls), float(urns)
    if m < 2:
        return 0.0
    la = n * math.log1p(-1.0 / m)
    a = math.exp(la)
    b_minus_a2 = a * a * math.expm1(n * math.log1p(-1.0 / (m - 1.0) ** 2))
    return m * (m - 1.0) * b_minus_a2 + m * a * (-math.expm1(la))


def collision_tails(c: int, balls: int, urns: int) -> tuple[float, float]:
    """Exact ``(P(C >= c), P(C <= c))`` for one set of ``balls`` balls in ``urns`` urns."""
    p = collision_pmf(balls, urns)
    c = int(c)
    if c < 0:
        return 1.0, P_FLOOR
    if c > balls:
        return P_FLOOR, 1.0
    return clip_p(float(p[c:].sum())), clip_p(float(p[: c + 1].sum()))


# ------------------------------------------------------------------ the law of a sum


def _conv_power(p: np.ndarray, k: int) -> tuple[np.ndarray, int]:
    """k-fold convolution of a pmf (trimmed to its nonzero range): (pmf, offset of index 0)."""
    nz = np.flatnonzero(p)
    lo, hi = int(nz[0]), int(nz[-1])
    q = p[lo : hi + 1]
    out = q.copy()
    for _ in range(k - 1):
        out = np.convolve(out, q)
        out[out < _UNDERFLOW * 1e-8] = 0.0
    return out, k * lo


@lru_cache(maxsize=32)
def _sum_law(balls: int, urns: int, k: int) -> tuple[np.ndarray, int]:
    """The exact law of the sum of ``k`` samples' collisions (:func:`_conv_power`), made once per process:
    every replicate of a check has the same (balls, urns, k), and the convolutions cost far more than the
    counting. Read-only."""
    q, off = _conv_power(collision_pmf(balls, urns), k)
    q.flags.writeable = False
    return q, off


def _tilted(logp: np.ndarray, c: np.ndarray, theta: float) -> tuple[float, float, float]:
    """log M(theta), mean and variance of the tilted law."""
    z = logp + theta * c
    zmax = z.max()
    w = np.exp(z - zmax)
    sw = w.sum()
    mean = float((w * c).sum() / sw)
    var = float((w * (c - mean) ** 2).sum() / sw)
    return float(zmax + math.log(sw)), mean, var


def _log_mills(w: float) -> float:
    return math.log(math.sqrt(math.pi / 2.0) * float(special.erfcx(w / math.sqrt(2.0))))


def _saddle_right(p: np.ndarray, k: int, s: int) -> float:
    """Lugannani-Rice approximation of P(S >= s), S the sum of k i.i.d. copies of pmf p.

    Lattice version with the second continuity correction (Daniels 1987, Int. Statist. Rev. 55,
    37-48): the saddlepoint solves K'(theta) = s - 1/2 and u = 2 sinh(theta/2) sqrt(K''(theta)).
    Assumes s - 1/2 lies strictly inside (k min, k max) of the support.
    """
    nz = np.flatnonzero(p)
    c = nz.astype(np.float64)
    logp = np.log(p[nz])
    target = (s - 0.5) / k
    mean0 = _tilted(logp, c, 0.0)[1]
    if abs(target - mean0) < 1e-9:
        return 0.5
    f = lambda th: _tilted(logp, c, th)[1] - target  # noqa: E731
    if target > mean0:
        lo_t, hi_t = 0.0, 1.0
        while f(hi_t) < 0:
            hi_t *= 2.0
    else:
        lo_t, hi_t = -1.0, 0.0
        while f(lo_t) > 0:
            lo_t *= 2.0
    th = optimize.brentq(f, lo_t, hi_t, xtol=1e-15, rtol=1e-14, maxiter=500)
    logm, _, var = _tilted(logp, c, th)
    kk = k * logm
    arg = 2.0 * (th * (s - 0.5) - kk)
    w = math.copysign(math.sqrt(max(arg, 0.0)), th)
    u = 2.0 * math.sinh(th / 2.0) * math.sqrt(k * var)
    if abs(w) < 1e-6 or abs(u) < 1e-12:
        return 0.5
    if w > 0:
        # P = phi(w) (Mills(w) - 1/w + 1/u), in logs so that nothing underflows early
        bracket = math.exp(_log_mills(w)) - 1.0 / w + 1.0 / u
        if bracket <= 0:
            return P_FLOOR
        logp_ = -0.5 * w * w - 0.5 * math.log(2.0 * math.pi) + math.log(bracket)
        return math.exp(logp_) if logp_ > -745 else 0.0
    # w < 0: P = 1 - Q(|w|) + phi(w)(1/u - 1/w) = 1 - phi(|w|)(Mills(|w|) - 1/|w| + 1/|u|)
    aw, au = -w, -u
    bracket = math.exp(_log_mills(aw)) - 1.0 / aw + 1.0 / au
    return 1.0 - math.exp(-0.5 * aw * aw - 0.5 * math.log(2.0 * math.pi)) * bracket


def collision_sum_tails(total: int, samples: int, balls: int, urns: int,
                        method: str = "auto") -> tuple[float, float]:
    """``(P(T >= total), P(T <= total))`` for T the sum of collisions over ``samples`` independent sets.

    method: "exact" (direct convolution of the exact law), "saddlepoint", or "auto" (exact for
    samples <= EXACT_SUM_MAX).
    """
    k, total = int(samples), int(total)
    if k < 1:
        raise ValueError("samples must be >= 1")
    p = collision_pmf(balls, urns)
    if k == 1:
        return collision_tails(total, balls, urns)
    if method == "exact" or (method == "auto" and k <= EXACT_SUM_MAX):
        q, off = _sum_law(balls, urns, k)
        i = total - off
        if i < 0:
            return 1.0, P_FLOOR
        if i >= q.size:
            return P_FLOOR, 1.0
        return clip_p(float(q[i:].sum())), clip_p(float(q[: i + 1].sum()))
    if method not in ("auto", "saddlepoint"):
        raise ValueError(f"unknown method {method!r}")
    nz = np.flatnonzero(p)
    lo, hi = int(nz[0]) * k, int(nz[-1]) * k
    # the support of the sum (up to dropped < 1e-300 mass) is [lo, hi]
    if total > hi:
        right = 0.0
    elif total <= lo:
        right = 1.0
    else:
        right = _saddle_right(p, k, total)
    if total < lo:
        left = 0.0
    elif total >= hi:
        left = 1.0
    else:
        # P(T <= t) = P(T' >= k*max - t) for the reflected law
        pr = p[: int(nz[-1]) + 1][::-1].copy()
        left = _saddle_right(pr, k, hi - total)
    return clip_p(right), clip_p(left)


# ------------------------------------------------------------------ kernel


@njit(cache=True)
def _collisions(u, d, t, balls, samples):
    """Collisions in each of ``samples`` sets of ``balls`` balls (urn of a ball: t uniforms, base d)."""
    urns = 1
    for _ in range(t):
        urns *= d
    occ = np.zeros((urns + 63) // 64, dtype=np.uint64)
    cells = np.empty(balls, dtype=np.int64)
    out = np.empty(samples, dtype=np.int64)
    fd = float(d)
    one = np.uint64(1)
    for s in range(samples):
        base = s * balls * t
        coll = 0
        for i in range(balls):
            cell = 0
            mult = 1
            for j in range(t):
                y = int(u[base + i * t + j] * fd)
                if y >= d:
                    y = d - 1
                elif y < 0:
                    y = 0
                cell += y * mult
                mult *= d
            cells[i] = cell
            word = cell >> 6
            bit = one << np.uint64(cell & 63)
            if occ[word] & bit:
                coll += 1
            else:
                occ[word] |= bit
        for i in range(balls):
            occ[cells[i] >> 6] = np.uint64(0)
        out[s] = coll
    return out


def collision_counts(u: np.ndarray, d: int, t: int, balls: int) -> np.ndarray:
    """Collision count of each complete set of ``balls`` balls made from ``u`` (t uniforms per ball)."""
    a = np.ascontiguousarray(np.asarray(u, dtype=np.float64).ravel())
    samples = a.size // (balls * t)
    return _collisions(a, int(d), int(t), int(balls), samples)


# ------------------------------------------------------------------ the check


def check_collision(data: np.ndarray, d: int = DEFAULT_URNS, t: int = 1, balls: int = DEFAULT_BALLS,
                    n: int | None = None) -> CheckResult:
    """Collision test (Knuth §3.3.2 I) on the first ``n`` uniforms (all when None).

    H0: i.i.d. U[0, 1) uniforms.  Balls are t-tuples of consecutive uniforms, urn
    ``sum_j floor(d U_j) d^j`` among m = d^t; ``balls`` per set, as many complete sets as the data
    allow.  Statistic: total collisions; exact two-sided law (see the module docstring).
    """
    d, t, balls = int(d), int(t), int(balls)
    if d < 2 or t < 1:
        raise InputError(f"collision: need d >= 2 and t >= 1, got d={d}, t={t}")
    urns = d**t
    if urns > 1 << 32:
        raise InputError(f"collision: d^t = {urns} urns is more than 2^32")
    if not 2 <= balls <= urns:
        raise InputError(f"collision: balls must be in 2..d^t, got {balls}")
    a = np.asarray(data).ravel()
    if n is not None:
        n = int(n)
        if n < 0 or n > a.size:
            raise InputError(f"collision: asked for {n} values, {a.size} available")
        a = a[:n]
    samples = a.size // (balls * t)
    if samples < 1:
        raise InputError(f"collision with {balls} balls of t={t} needs at least {balls * t} values, "
                         f"got {a.size}", hint="use more data")
    counts = collision_counts(a, d, t, balls)
    total = int(counts.sum())
    right, left = collision_sum_tails(total, samples, balls, urns)
    mu = collision_mean(balls, urns)
    var = collision_variance(balls, urns)
    return CheckResult(
        name=check_id("collision", {"d": d, "t": t, "balls": balls}), statistic=float(total),
        p_value=right, p_left=left,
        null=f"exact law of collisions: {samples} x ({balls} balls in {urns} urns)",
        kind="discrete", n=samples * balls * t,
        details={"samples": samples, "urns": urns, "expected": samples * mu,
                 "sd": math.sqrt(samples * var),
                 "per_sample": counts.tolist() if samples <= 64 else None,
                 "law": "exact convolution" if samples <= EXACT_SUM_MAX else "saddlepoint on the exact law"},
        pooled={"observed": total, "mu": samples * mu, "var": samples * var, "samples": samples,
                "balls": balls, "urns": urns},
    )


def pool_collisions(pooled: list[dict]) -> CheckResult:
    """All replicates at once: the total of their collision counts against the exact law of the total of
    all their samples (the law depends only on the number of samples, balls and urns)."""
    p0 = pooled[0]
    balls, urns = int(p0["balls"]), int(p0["urns"])
    total = sum(int(p["observed"]) for p in pooled)
    samples = sum(int(p["samples"]) for p in pooled)
    right, left = collision_sum_tails(total, samples, balls, urns)
    return CheckResult(name="collision", statistic=float(total), p_value=right, p_left=left,
                       null=f"exact law of collisions: {samples} x ({balls} balls in {urns} urns)", kind="discrete",
                       n=samples * balls)


#: Default variants (d, t), all with m = d^t = 2^20 urns and 2^14 balls (Knuth's example sizes):
#: one coordinate (top 20 bits), pairs, 4-tuples, and Knuth's 20-dimensional binary version.
COLLISION_VARIANTS = ((1 << 20, 1), (1 << 10, 2), (1 << 5, 4), (2, 20))


def _defaults(n: int) -> list[dict]:
    out = []
    for d, t in COLLISION_VARIANTS:
        per = DEFAULT_BALLS * t
        k = n // per
        if k >= 1:
            out.append({"d": d, "t": t, "balls": DEFAULT_BALLS, "n": k * per})
    return out


register(CheckSpec(
    key="collision", family="classic", windows=("reversed",), title="collision test (Knuth 3.3.2 I)", view="uniforms",
    kind="discrete", func=check_collision, values_needed=lambda p: int(p["n"]),
    default_params=_defaults, both_tails=True, source=KNUTH_COLLISION, pool=pool_collisions,
    notes="2^14 balls in 2^20 urns per set; variants t = 1, 2, 4, 20; exact law of the total; "
          "pooled: the total over all replicates against the exact law of all their samples",
))
