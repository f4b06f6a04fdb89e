"""Birthday-spacings test (Marsaglia; Knuth §3.3.2 J) on bit fields of 32-bit words.

H0: the words are i.i.d. uniform 32-bit integers.  A *birthday* is a ``bits``-bit field: for
t = 1 the bits ``offset .. offset+bits-1`` of one word; for t > 1 the fields of ``bits/t`` bits at
``offset`` of t consecutive words, concatenated (first word most significant).  So there are
``N = 2^bits`` days.  Take m birthdays, sort them ``Y_1 <= ... <= Y_m``, form the m circular
spacings ``Y_2 - Y_1, ..., Y_m - Y_{m-1}, Y_1 + N - Y_m``, sort those, and let R be the number of
j with ``S_(j) = S_(j-1)`` (values repeated among the spacings).  R is asymptotically
Poisson(lambda) with ``lambda = m^3 / (4 N)`` (m = 512, N = 2^24: lambda = 2).

The asymptotic mean is 0.73% too high for m = 512, N = 2^24 (the exact mean is 1.98532): harmless for
one sample, but a total over K samples tested against Poisson(2K) drifts by 0.0147 K, i.e. by
one standard deviation at K ~ 9000 samples (18 MiB of words) and four at 256 MiB.  This module
therefore computes the *exact* mean of R (:func:`birthday_mean`): with
``N_s`` the number of spacings equal to s, ``R = sum_s (N_s - 1)^+`` and
``(N - 1)^+ = sum_{k >= 2} (-1)^k C(N, k)``; ``E C(N_s, k)`` counts placements of k
non-overlapping "occupied, s-1 empty, occupied" patterns on the circle of days, each weighted by
an exact occupancy probability (positive series in Stirling numbers); zero spacings (coinciding
birthdays) are handled separately.  The formula reproduces brute-force enumeration of all
N^m configurations for small N, m exactly (tests).  Sums over s are taken term by term, or, when
they have more than ``_DIRECT_SUM_MAX`` terms, by Gauss-Legendre quadrature with the
Euler-Maclaurin midpoint correction (the summand changes on a scale of N/(k m) >> 1).

The total R over K samples is tested against Poisson(K E[R]) (both tails: too few repeats is
what a lattice structure in low bits produces).  The Poisson shape is the asymptotic law; R's
variance is slightly below its mean: variance/mean measured on PCG64 words was 0.984, 0.987, 0.990
(m = 512, offsets 8, 4, 0; 2^16 samples each, standard error ~0.006) and 1.004 (m = 8192, 2^11
samples), so the Poisson p-values of a total are at worst slightly conservative.
``pooled = {"observed": total, "mu": K E[R]}``: sums of Poisson totals pool exactly.

Sources: G. Marsaglia (1985), "A current view of random number generators", Computer Science
and Statistics: 16th Symposium on the Interface; D. E. Knuth, TAOCP Vol. 2, 3rd ed., §3.3.2 J
and exercise 3.3.2-28 [from memory for the exercise number]; the LCG behaviour: P. L'Ecuyer,
R. Simard (2001), "On the performance of birthday spacings tests with certain families of random
number generators", Math. Comput. Simulation 55, 131-137.
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
from numba import njit
from scipy import special

from rngassay.checks.lawcache import kept
from rngassay.checks.registry import CheckSpec, check_id, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError
from rngassay.stats import poisson_tails

SOURCE = ("Marsaglia (1985) birthday spacings; Knuth, TAOCP Vol. 2, 3rd ed., §3.3.2 J; "
          "L'Ecuyer & Simard (2001) Math. Comput. Simulation 55")

_DIRECT_SUM_MAX = 20_000

# ------------------------------------------------------------------ expected number of repeats


def birthday_lambda(m: int, days: int) -> float:
    """Asymptotic Poisson mean of the number of repeated spacings: m^3 / (4 days)."""
    return float(m) ** 3 / (4.0 * float(days))


@lru_cache(maxsize=None)
def _stirling2_col(j: int, tmax: int) -> tuple[int, ...]:
    """S(t, j) for t = 0..tmax (Stirling numbers of the second kind, exact)."""
    row = [1] + [0] * j  # S(0, r)
    col = [row[j]]
    for t in range(1, tmax + 1):
        new = [0] * (j + 1)
        for r in range(1, min(t, j) + 1):
            new[r] = r * row[r] + row[r - 1]
        row = new
        col.append(row[j])
    return tuple(col)


def _log_occupancy(j: int, e: np.ndarray, m: int, n: int) -> np.ndarray:
    """log P(j given days all occupied and e (array) other given days empty), m birthdays, n days.

    P = sum_{t >= j} C(m, t) j! S(t, j) n^-t (1 - (e + j)/n)^(m - t): t birthdays fall on the j
    days and cover them, the others avoid all j + e days.  Positive terms, no cancellation.
    """
    e = np.asarray(e, dtype=np.float64)
    out = np.full(e.shape, -np.inf)
    if j > m:
        return out
    tmax = min(m, j + 80)
    col = _stirling2_col(j, tmax)
    free = n - e - j
    with np.errstate(divide="ignore", invalid="ignore"):
        lfree = np.where(free > 0, np.log1p(-(e + j) / n), -np.inf)
    lfact_j = math.lgamma(j + 1)
    for t in range(j, tmax + 1):
        lc = (math.lgamma(m + 1) - math.lgamma(t + 1) - math.lgamma(m - t + 1)
              + lfact_j + math.log(col[t]) - t * math.log(n))
        if t == m:
            term = np.where(free >= 0, lc, -np.inf)
        else:
            term = lc + (m - t) * lfree
        out = np.logaddexp(out, term)
        with np.errstate(invalid="ignore"):
            done = np.all((term - out < -50) | ~np.isfinite(out))
        if t >= j + 3 and done:
            break
    return out


def _log_compositions(L: np.ndarray, parts: int) -> np.ndarray:
    """log of the number of compositions of L (array, may be non-integer for quadrature) into positive parts."""
    L = np.asarray(L, dtype=np.float64)
    if parts == 0:
        return np.where(L == 0, 0.0, -np.inf)
    ok = L >= parts
    Ls = np.where(ok, L, parts)
    v = special.gammaln(Ls) - math.lgamma(parts) - special.gammaln(Ls - parts + 1)
    return np.where(ok, v, -np.inf)


def _pattern_moment(k: int, s: np.ndarray, m: int, n: int) -> np.ndarray:
    """E C(N_s, k) (array over s): k spacings all equal to s >= 1.

    Ordered placements of k labelled patterns (occupied day, s-1 empty days, occupied day) on the
    circle: n (first start) x (k-1)! (cyclic order) x compositions of the L = n - k s free days
    into the k gaps, a of which are 0 (adjacent patterns share a day: 2k - a occupied days).
    Divided by k! for unordered sets.
    """
    s = np.asarray(s, dtype=np.float64)
    L = n - k * s
    e = k * (s - 1.0)
    acc = np.full(s.shape, -np.inf)
    for a in range(k + 1):
        lt = (math.log(math.comb(k, a)) + _log_compositions(L, k - a)
              + _log_occupancy(2 * k - a, e, m, n))
        acc = np.logaddexp(acc, lt)
    return np.exp(acc + math.log(n) - math.log(k))


_GL_X, _GL_W = np.polynomial.legendre.leggauss(24)


def _sum_over_s(k: int, m: int, n: int) -> float:
    """sum_{s >= 1} E C(N_s, k)."""
    smax = n // k
    if smax < 1:
        return 0.0
    scale = n / (k * max(m - 2 * k, 1))  # e-folding length of the summand in s
    lim = int(min(smax, math.ceil(90.0 * scale) + 16))
    if lim <= _DIRECT_SUM_MAX:
        return float(_pattern_moment(k, np.arange(1, lim + 1), m, n).sum())
    head = 256
    total = float(_pattern_moment(k, np.arange(1, head + 1), m, n).sum())
    a, b = head + 0.5, lim + 0.5
    panels = max(64, int(8 * (b - a) / scale) + 1)
    edges = np.linspace(a, b, panels + 1)
    mid, half = 0.5 * (edges[1:] + edges[:-1]), 0.5 * (edges[1:] - edges[:-1])
    x = (mid[:, None] + half[:, None] * _GL_X[None, :]).ravel()
    w = (half[:, None] * _GL_W[None, :]).ravel()
    total += float(np.dot(w, _pattern_moment(k, x, m, n)))
    # Euler-Maclaurin, midpoint form: sum_{s=A}^{B} f(s) = int_{A-1/2}^{B+1/2} f - [f'(B+1/2) - f'(A-1/2)]/24 + ...
    fd = _pattern_moment(k, np.array([a - 1.0, a + 1.0, b - 1.0, b + 1.0]), m, n)
    total -= ((fd[3] - fd[2]) / 2.0 - (fd[1] - fd[0]) / 2.0) / 24.0
    return total


@lru_cache(maxsize=64)
@kept  # about 0.4 s for the default parameters: computed once per machine
def birthday_mean(m: int, days: int) -> float:
    """Exact E[R], R the number of repeated circular spacings of m i.i.d. uniform birthdays in ``days`` days.

    Exact up to floating-point rounding and a truncated alternating series (stopped when a term is
    below 1e-15 of the total).  See the module docstring for the derivation.
    """
    m, n = int(m), int(days)
    if m < 2 or n < 1:
        raise ValueError("need m >= 2 birthdays and at least 1 day")
    # zero spacings: N_0 = m - (number of distinct birthdays); E (N_0 - 1)^+ = E N_0 - P(N_0 >= 1)
    e_n0 = m + n * math.expm1(m * math.log1p(-1.0 / n)) if n > 1 else m - 1.0
    if m <= n:
        log_distinct = float(np.sum(np.log1p(-np.arange(m, dtype=np.float64) / n)))
        p_any = -math.expm1(log_distinct)
    else:
        p_any = 1.0
    total = e_n0 - p_any
    for k in range(2, m + 1):
        if k > n:
            break
        tk = _sum_over_s(k, m, n)
        total += tk if k % 2 == 0 else -tk
        if tk < 1e-15 * max(abs(total), 1e-300):
            break
    return total


# ------------------------------------------------------------------ kernel


@njit(cache=True)
def _radix_sort(y, tmp, cnt, bits, dbits):
    """LSD radix sort of y (uint64 keys < 2^bits) in place, digits of dbits bits.

    cnt is an int64 array (passes, 2^dbits); all digit histograms are taken in one read.
    """
    nd = np.int64(1) << dbits
    dmask = np.uint64(nd - 1)
    m = y.size
    passes = (bits + dbits - 1) // dbits
    for p in range(passes):
        for i in range(nd):
            cnt[p, i] = 0
    for i in range(m):
        v = y[i]
        for p in range(passes):
            cnt[p, np.int64((v >> np.uint64(p * dbits)) & dmask)] += 1
    src = y
    dst = tmp
    for p in range(passes):
        acc = 0
        for i in range(nd):
            c = cnt[p, i]
            cnt[p, i] = acc
            acc += c
        sh = np.uint64(p * dbits)
        for i in range(m):
            v = src[i]
            d = np.int64((v >> sh) & dmask)
            dst[cnt[p, d]] = v
            cnt[p, d] += 1
        src, dst = dst, src
    if passes % 2 == 1:
        for i in range(m):
            y[i] = src[i]


@njit(cache=True)
def _spacing_repeats(w, m, bits, offset, t, samples):
    """R for each sample: radix-sorted birthdays, circular spacings, repeats counted by a bitmap
    over small spacings (below 16 times their mean, capped at 2^22) and a hash set for the rest."""
    out = np.empty(samples, dtype=np.int64)
    b = bits // t
    mask = (np.uint64(1) << np.uint64(b)) - np.uint64(1)
    ndays = np.uint64(1) << np.uint64(bits) if bits < 64 else np.uint64(0)
    y = np.empty(m, dtype=np.uint64)
    tmp = np.empty(m, dtype=np.uint64)
    sp = np.empty(m, dtype=np.uint64)
    dbits = 8  # digit width: about log2(m), so that a histogram costs about as much as a pass
    while (np.int64(1) << (dbits + 1)) <= m and dbits < 16:
        dbits += 1
    passes = (bits + dbits - 1) // dbits
    while dbits > 1 and (bits + dbits - 2) // (dbits - 1) == passes:
        dbits -= 1  # same number of passes with smaller histograms
    cnt = np.empty((passes, np.int64(1) << dbits), dtype=np.int64)
    # bitmap for spacings < 2^bb_bits
    lm = 0
    while (np.int64(1) << (lm + 1)) <= m:
        lm += 1
    bb_bits = min(bits - lm + 4, 22)
    if bb_bits < 6:
        bb_bits = 6
    lim = np.uint64(1) << np.uint64(bb_bits)
    bmap = np.zeros((np.int64(1) << bb_bits) >> 6, dtype=np.uint64)
    # hash set (open addressing, stamped by sample) for the others
    tb = 1
    while (np.int64(1) << tb) < 2 * m:
        tb += 1
    tsize = np.int64(1) << tb
    tmask = np.uint64(tsize - 1)
    keys = np.zeros(tsize, dtype=np.uint64)
    stamp = np.zeros(tsize, dtype=np.int64)
    hshift = np.uint64(64 - tb)
    golden = np.uint64(0x9E3779B97F4A7C15)
    sh = np.uint64(offset)
    bb = np.uint64(b)
    six = np.uint64(6)
    low6 = np.uint64(63)
    one = np.uint64(1)
    for s in range(samples):
        base = s * m * t
        for i in range(m):
            v = np.uint64(0)
            for j in range(t):
                v = (v << bb) | ((np.uint64(w[base + i * t + j]) >> sh) & mask)
            y[i] = v
        _radix_sort(y, tmp, cnt, bits, dbits)
        r = 0
        st = s + 1
        for i in range(m):
            if i < m - 1:
                x = y[i + 1] - y[i]
            else:
                x = y[0] + ndays - y[m - 1]  # circular spacing (mod 2^64 when bits = 64)
            sp[i] = x
            if x < lim:
                k = np.int64(x >> six)
                bit = one << (x & low6)
                if bmap[k] & bit:
                    r += 1
                else:
                    bmap[k] |= bit
                continue
            h = (x * golden) >> hshift
            while True:
                if stamp[h] != st:
                    stamp[h] = st
                    keys[h] = x
                    break
                if keys[h] == x:
                    r += 1
                    break
                h = (h + one) & tmask
        for i in range(m):
            x = sp[i]
            if x < lim:
                bmap[np.int64(x >> six)] = np.uint64(0)
        out[s] = r
    return out


def spacing_repeats(words: np.ndarray, m: int, bits: int, offset: int = 0, t: int = 1) -> np.ndarray:
    """R for each complete sample of m birthdays (t words each) of a uint32 array."""
    w = np.ascontiguousarray(np.asarray(words).ravel(), dtype=np.uint32)
    samples = w.size // (m * t)
    return _spacing_repeats(w, int(m), int(bits), int(offset), int(t), samples)


def _validate(m: int, bits: int, offset: int, t: int) -> None:
    if m < 2:
        raise InputError(f"birthday spacings: m must be >= 2, got {m}")
    if t < 1 or bits < 1 or bits % t or bits > 64:
        raise InputError(f"birthday spacings: bits must be a multiple of t, at most 64 (bits={bits}, t={t})")
    if offset < 0 or offset + bits // t > 32:
        raise InputError(f"birthday spacings: a field of {bits // t} bits at offset {offset} "
                         "does not fit in a 32-bit word")


def check_birthday_spacings(data: np.ndarray, m: int = 512, bits: int = 24, offset: int = 8, t: int = 1,
                            n: int | None = None) -> CheckResult:
    """Birthday-spacings test on the first ``n`` 32-bit words (all when None).

    H0: i.i.d. uniform 32-bit words, so the number R of repeated spacings among m birthdays in
    2^bits days has the exact mean :func:`birthday_mean` and is approximately Poisson.  The total
    over all complete samples is tested against Poisson(K E[R]); both tails.
    """
    m, bits, offset, t = int(m), int(bits), int(offset), int(t)
    _validate(m, bits, offset, t)
    a = np.asarray(data).ravel()
    if n is not None:
        n = int(n)
        if n < 0 or n > a.size:
            raise InputError(f"birthday spacings: asked for {n} words, {a.size} available")
        a = a[:n]
    if a.dtype != np.uint32:
        raise InputError(f"birthday spacings: needs 32-bit words (uint32), got {a.dtype}")
    samples = a.size // (m * t)
    if samples < 1:
        raise InputError(f"birthday spacings needs at least {m * t} words, got {a.size}", hint="use more data")
    r = spacing_repeats(a, m, bits, offset, t)
    total = int(r.sum())
    days = 1 << bits
    mean1 = birthday_mean(m, days)
    mu = samples * mean1
    right, left = poisson_tails(total, mu)
    return CheckResult(
        name=check_id("birthday spacings", {"m": m, "bits": bits, "offset": offset, "t": t}),
        statistic=float(total), p_value=right, p_left=left, null=f"poisson(mu={mu:.6g})", kind="discrete",
        n=samples * m * t,
        details={"samples": samples, "days": f"2^{bits}", "mean_per_sample": mean1,
                 "lambda_asymptotic": birthday_lambda(m, days),
                 "per_sample": r.tolist() if samples <= 64 else None},
        pooled={"observed": total, "mu": mu},
    )


#: Default variants (m, bits, offset, t), each with lambda = m^3 / (4 * 2^bits) = 2:
#: Marsaglia's m = 512 birthdays in 2^24 days from the top, middle and low 24 bits of a word, and
#: m = 8192 in 2^36 days from the top 18 bits of two consecutive words (pairs: sees the lattice of
#: an LCG with modulus ~2^31 in two dimensions, L'Ecuyer & Simard 2001).
BIRTHDAY_VARIANTS = ((512, 24, 8, 1), (512, 24, 4, 1), (512, 24, 0, 1), (8192, 36, 14, 2))
#: Fewest samples per run of a default variant: with K samples the Poisson total has mean 2K.
BIRTHDAY_MIN_SAMPLES = 4


def _defaults(n: int) -> list[dict]:
    out = []
    for m, bits, offset, t in BIRTHDAY_VARIANTS:
        per = m * t
        k = n // per
        if k >= BIRTHDAY_MIN_SAMPLES:
            out.append({"m": m, "bits": bits, "offset": offset, "t": t, "n": k * per})
    return out


register(CheckSpec(
    key="birthday spacings", family="classic", windows=("reversed",), title="birthday-spacings test (Marsaglia; Knuth 3.3.2 J)",
    view="words32", kind="discrete", func=check_birthday_spacings, values_needed=lambda p: int(p["n"]),
    default_params=_defaults, both_tails=True, source=SOURCE,
    notes="m=512 in 2^24 days at bit offsets 8, 4, 0; m=8192 in 2^36 days from word pairs; exact mean; "
          "pooled: Poisson observed/mu",
))
