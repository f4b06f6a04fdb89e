"""Close-pairs test: how many pairs of points in the t-dimensional unit torus lie closer than r.

H0: the uniforms are i.i.d. U[0, 1).  A *point* is a non-overlapping t-tuple of consecutive
uniforms (t = 2..5), read as a point of the unit torus [0, 1)^t.  The distance is the L-infinity
torus distance ``d(x, y) = max_j min(|x_j - y_j|, 1 - |x_j - y_j|)``.  C counts the unordered pairs
of the n points of a sample with ``d < r``.

Exact mean and variance: for two independent uniform points on the torus, ``P(d < r) = (2r)^t``
exactly when r <= 1/2 (the set of y within r of x is a cube of side 2r around x, wrapped), so
``E C = C(n, 2) (2r)^t``.  For three points i, j, l the events "j near i" and "l near i" are
independent (given x_i each is a cube around x_i), so the pair indicators are pairwise
independent and ``Var C = C(n, 2) p (1 - p)`` exactly, p = (2r)^t: variance/mean = 1 - p.
The law of C is approximately Poisson(E C): C is a sum of many rare, pairwise independent
indicators, and the Poisson limit for the number of short distances holds when n -> infinity
with E C fixed (B. W. Silverman, T. Brown (1978), "Short distances, flat triangles and Poisson
limits", J. Appl. Probab. 15, 815-825 [from memory]).  The dependence that remains comes from
triangles of mutually close points, of which ``(2/3) (3/4)^t E^2 / n`` are expected (0.003 at the
default sizes, 0.09 at the smallest n the defaults use); a simulation in the tests measures
the variance/mean ratio and the false-alarm rate of the pooled p-values.

r is chosen from the target mean ``mu``: ``r = (mu / C(n, 2))^(1/t) / 2``, so E C = mu.  The
data are assumed to be on a grid much finer than r: on a grid of 2^-w the per-coordinate
probability is off by at most 2^-w / (2r) relative (w = 53 or 32 for the byte and word views:
below 1e-5 at the default sizes; for float32 data, w = 24, about 0.2% per coordinate at a 2 MiB
segment, i.e. at most 0.13 standard deviations of a 64 MiB run's pooled total in two dimensions).

Both tails: too few close pairs is what a lattice whose shortest vector is longer than r
produces, too many what a lattice packed in few hyperplanes (RANDU in three dimensions) or a
clustered generator produces.  The total over all complete samples of a run is tested against
Poisson(samples mu); ``pooled = {"observed": total, "mu": samples * E C}``.

Method: P. L'Ecuyer, J.-F. Cordeau, R. Simard (2000), "Close-point spatial tests and their
application to random number generators", Operations Research 48(2), 308-317 [from memory]: they
use the jump distances of the nearest pairs; this module implements the simplest member of that
family, the count of pairs below a fixed distance, with its exact mean.

Measured power (default variants, mu = 32, segments of 262,144 uniforms; PCG64 passes):
a generator's own uniforms x/m -- RANDU: no close pair at all in 2 dimensions (P = e^-32 per
sample) and 50-200 times too many in 3..5 (its 15 planes), from one sample; minstd: too few in 2
and 3 dimensions (0.6-0.8 of the mean; p 4e-4 and 2e-8 over 8 samples, 3e-18 and 9e-33 over 32);
Numerical Recipes' lcg32: 1.7 times too many 4-tuples (p ~1e-25 over 8 samples); drand48
(lcg48-doubles): not caught at 64 MiB, its 2^48-point lattice being far finer than r.  Through the
battery's byte view (53-bit uniforms from pairs of 32-bit words) RANDU and minstd fail trivially
(every value below 1/2); lcg32 fails at --budget 64MiB (4-tuples p 4e-23, triples 6e-12) but not
at 8MiB; lcg48, xorshift32 and lagfib are not caught at 8 or 64 MiB.

Kernel: points are bucketed in a grid of g^t cells of side 1/g >= r (about two cells per point)
by a counting sort; each point is compared with the points of its own cell and of the neighbour
cells it lies within r of (on average 1.0 to 3.7 cells at the default sizes), so a sample costs
O(n).
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from rngassay.checks.registry import CheckSpec, check_id, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError
from rngassay.stats import poisson_tails

KEY = "close pairs"
SOURCE = ("L'Ecuyer, Cordeau & Simard (2000), Close-point spatial tests and their application to random "
          "number generators, Oper. Res. 48(2), 308-317 [from memory]; Poisson limit: Silverman & Brown "
          "(1978), J. Appl. Probab. 15 [from memory]")

#: Dimensions of the default variants.
DIMENSIONS = (2, 3, 4, 5)
#: Expected close pairs per sample in the default variants.
DEFAULT_MU = 32.0
#: Fewest points per sample in the default variants (keeps expected triangles below 0.1).
MIN_POINTS = 1 << 12
#: Most points per sample (memory: about 8 t + 24 bytes per point, plus the cell table).
MAX_POINTS = 1 << 21
#: Largest dimension accepted.
MAX_T = 8


def close_pair_probability(r: float, t: int) -> float:
    """P(L-infinity torus distance of two independent uniform points in [0,1)^t < r) = (2r)^t, r <= 1/2."""
    if not 0.0 < r <= 0.5:
        raise ValueError(f"r must be in (0, 1/2], got {r}")
    return (2.0 * r) ** t


def radius_for(mu: float, n: int, t: int) -> float:
    """The r with C(n, 2) (2r)^t = mu."""
    pairs = n * (n - 1) / 2.0
    return 0.5 * (mu / pairs) ** (1.0 / t)


def grid_side(n: int, t: int, r: float) -> int:
    """Cells per axis: about 2n cells in all, each side 1/g >= r, and g >= 3 (distinct neighbours)."""
    g = max(1, int(math.floor((2.0 * n) ** (1.0 / t))))
    while (g + 1) ** t <= 2 * n:
        g += 1
    while g > 1 and g**t > 2 * n:
        g -= 1
    g = min(g, int(math.floor(1.0 / r)))
    return max(g, 3)


# ------------------------------------------------------------------ kernel


@njit(cache=True)
def _close_pairs(u, t, n, samples, r, g):
    """Close pairs (L-infinity torus distance < r) in each sample of n points of t coordinates."""
    ncell = 1
    for _ in range(t):
        ncell *= g
    start = np.zeros(ncell + 1, dtype=np.int64)
    cell = np.empty(n, dtype=np.int64)
    pts = np.empty((n, t), dtype=np.float64)  # coordinates sorted by cell
    cc = np.empty(t, dtype=np.int64)  # cell coordinates of the current point
    lo = np.empty(t, dtype=np.int64)  # per axis: first offset (-1 or 0)
    hi = np.empty(t, dtype=np.int64)  # per axis: last offset (0 or +1)
    off = np.empty(t, dtype=np.int64)
    strides = np.empty(t, dtype=np.int64)
    st = 1
    for d in range(t - 1, -1, -1):
        strides[d] = st
        st *= g
    fg = float(g)
    rg = r * fg
    margin = 1e-9  # a neighbour cell taken in doubt only costs time: the distance test is exact
    out = np.empty(samples, dtype=np.int64)
    for s in range(samples):
        base = s * n * t
        start[:] = 0
        for i in range(n):
            c = 0
            for d in range(t):
                ci = int(u[base + i * t + d] * fg)
                if ci >= g:
                    ci = g - 1
                elif ci < 0:
                    ci = 0
                c = c * g + ci
            cell[i] = c
            start[c + 1] += 1
        for c in range(ncell):
            start[c + 1] += start[c]
        for i in range(n):  # counting sort (start[c] is advanced, then restored below)
            c = cell[i]
            p = start[c]
            for d in range(t):
                pts[p, d] = u[base + i * t + d]
            start[c] = p + 1
        for c in range(ncell, 0, -1):
            start[c] = start[c - 1]
        start[0] = 0
        ordered = 0  # close pairs counted from both ends
        for p in range(n):
            c = 0
            for d in range(t):
                y = pts[p, d] * fg
                ci = int(y)
                if ci >= g:
                    ci = g - 1
                elif ci < 0:
                    ci = 0
                cc[d] = ci
                c = c * g + ci
                f = y - ci
                lo[d] = -1 if f < rg + margin else 0
                hi[d] = 1 if f > 1.0 - rg - margin else 0
                off[d] = lo[d]
            # odometer over the neighbour offsets
            while True:
                nc = 0
                for d in range(t):
                    x = cc[d] + off[d]
                    if x < 0:
                        x += g
                    elif x >= g:
                        x -= g
                    nc += x * strides[d]
                for q in range(start[nc], start[nc + 1]):
                    if q == p:
                        continue
                    close = True
                    for d in range(t):
                        dd = abs(pts[p, d] - pts[q, d])
                        if dd > 0.5:
                            dd = 1.0 - dd
                        if dd >= r:
                            close = False
                            break
                    if close:
                        ordered += 1
                d = 0
                while d < t:
                    if off[d] < hi[d]:
                        off[d] += 1
                        break
                    off[d] = lo[d]
                    d += 1
                if d == t:
                    break
        out[s] = ordered // 2
    return out


def close_pair_counts(u: np.ndarray, t: int, n: int, r: float) -> np.ndarray:
    """Number of close pairs (L-infinity torus distance < r) in each complete sample of n t-tuples."""
    a = np.ascontiguousarray(np.asarray(u, dtype=np.float64).ravel())
    samples = a.size // (n * t)
    g = grid_side(n, t, r)
    return _close_pairs(a, int(t), int(n), samples, float(r), g)


# ------------------------------------------------------------------ the check


def check_close_pairs(data: np.ndarray, t: int = 2, mu: float = DEFAULT_MU, n: int | None = None,
                      n_values: int | None = None, r: float | None = None) -> CheckResult:
    """Close-pairs test on the first ``n_values`` uniforms (all when None).

    H0: i.i.d. U[0, 1) uniforms.  Samples of n points (non-overlapping t-tuples; when n is None,
    all the points the data hold, at most MAX_POINTS); C = pairs at L-infinity torus distance < r,
    with r from ``mu`` (E C = mu) unless r is given.  Statistic: total C over the samples, tested
    against Poisson(samples C(n,2) (2r)^t); both tails.
    """
    t = int(t)
    if t < 1 or t > MAX_T:
        raise InputError(f"{KEY}: t must be in 1..{MAX_T}, got {t}")
    a = np.asarray(data).ravel()
    if a.dtype.kind != "f":
        raise InputError(f"{KEY}: needs uniforms (floats in [0, 1)), got {a.dtype}")
    if n_values is not None:
        n_values = int(n_values)
        if n_values < 0 or n_values > a.size:
            raise InputError(f"{KEY}: asked for {n_values} values, {a.size} available")
        a = a[:n_values]
    n = min(a.size // t, MAX_POINTS) if n is None else int(n)
    if n < 2 or n > MAX_POINTS:
        raise InputError(f"{KEY}: points per sample n must be in 2..{MAX_POINTS}, got {n}",
                         hint="use more data" if n < 2 else "use a smaller n")
    samples = a.size // (n * t)
    if samples < 1:
        raise InputError(f"{KEY} with n={n} points of t={t} needs at least {n * t} values, got {a.size}",
                         hint="use more data or a smaller n")
    id_params = {"t": t, "mu": mu} if r is None else {"t": t, "r": r}
    if r is None:
        mu = float(mu)
        if not mu > 0 or not math.isfinite(mu):
            raise InputError(f"{KEY}: mu must be a positive number, got {mu}")
        r = radius_for(mu, n, t)
    r = float(r)
    if not 0.0 < r <= 1.0 / 3.0:
        raise InputError(f"{KEY}: r must be in (0, 1/3], got {r:.6g}",
                         hint="ask for a smaller mu or use more points")
    a = a[: samples * n * t]
    if a.size and not (float(a.min()) >= 0.0 and float(a.max()) < 1.0):  # also rejects NaN
        raise InputError(f"{KEY}: values must lie in [0, 1)")
    counts = close_pair_counts(a, t, n, r)
    total = int(counts.sum())
    p = close_pair_probability(r, t)
    mean1 = n * (n - 1) / 2.0 * p
    mu_total = samples * mean1
    right, left = poisson_tails(total, mu_total)
    return CheckResult(
        name=check_id(KEY, id_params), statistic=float(total), p_value=right, p_left=left,
        null=f"poisson(mu={mu_total:.6g})", kind="discrete", n=samples * n * t,
        details={"samples": samples, "points": n, "r": r, "distance": "L-infinity on the torus",
                 "mean_per_sample": mean1, "variance_per_sample": mean1 * (1.0 - p),
                 "per_sample": counts.tolist() if samples <= 64 else None},
        pooled={"observed": total, "mu": mu_total},
    )


def default_variants(n_values: int) -> list[dict]:
    """Per t in DIMENSIONS: one sample of all the points the values allow (at most MAX_POINTS),
    mu = DEFAULT_MU; [] for a t with fewer than MIN_POINTS points."""
    out = []
    for t in DIMENSIONS:
        n = min(n_values // t, MAX_POINTS)
        if n < MIN_POINTS:
            continue
        samples = n_values // (n * t)
        out.append({"t": t, "mu": DEFAULT_MU, "n": n, "n_values": samples * n * t})
    return out


register(CheckSpec(
    key=KEY, family="classic", title="close-pairs test on the torus (L'Ecuyer, Cordeau & Simard 2000)",
    view="uniforms", kind="discrete", func=check_close_pairs, values_needed=lambda p: int(p["n_values"]),
    default_params=default_variants, both_tails=True, source=SOURCE,
    notes="non-overlapping t-tuples (t = 2..5) as points of the unit torus; pairs at L-infinity torus "
          "distance < r with C(n,2)(2r)^t = 32 per sample (exact mean and variance); Poisson law; "
          "pooled: Poisson observed/mu",
))
