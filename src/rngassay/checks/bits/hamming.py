"""Hamming-weight dependency check: are the bit counts of consecutive words independent?

Purpose
-------
Scrambled linear generators (a GF(2)-linear engine followed by a non-linear output function such as
``+`` or ``*``) pass the rank and linear-complexity checks on their upper bits, yet the Hamming
weights (numbers of one bits) of consecutive outputs are slightly dependent.  Blackman and Vigna
proposed a test aimed at exactly this (D. Blackman, S. Vigna (2021), "Scrambled linear pseudorandom
number generators", ACM Trans. Math. Softw. 47(4)).

What is from memory and what is ours
------------------------------------
The paper could not be consulted while writing this module.  Recalled from it [from memory, not
checked]: each w-bit output is reduced to a *trit* by comparing its Hamming weight with w/2
(below, equal, above); the trits of k consecutive outputs form a signature with 3^k possible
values; the signature counts are transformed with a Kronecker power of a small 3 x 3 matrix, so
that every transformed entry has expectation 0 under the null, and the most extreme normalised
entry is judged with a correction for the number of entries; in the paper the test is run on
ever larger samples until a fixed, very small p-value threshold is crossed.  Everything below
(the middle *band* instead of the exact median, overlapping windows, the particular orthogonal
basis and its variances, the first-difference statistic, the pooling, the default parameters) is
this module's own, not a copy of the published procedure, and need not coincide with it;
``band=0`` gives the median split as recalled.

Trits and their exact law
-------------------------
Input: words (the ``words64`` view; ``w = 32`` splits each 64-bit word into its two 32-bit halves,
low half first, which for a little-endian 32-bit stream is the stream order).  Each w-bit word gets
the trit ``t = 0`` if its Hamming weight is below ``w/2 - band``, ``1`` if within ``band`` of w/2,
``2`` if above ``w/2 + band``.

Null hypothesis: the words are i.i.d. uniform on {0, 1}^w.  Then the weight is Binomial(w, 1/2) and
the trits are i.i.d. with the exact probabilities

    P(t = 1) = p = sum_{|j - w/2| <= band} C(w, j) / 2^w,      P(t = 0) = P(t = 2) = q = (1 - p) / 2

computed from exact integers (w = 64, band 0: p = 0.0993467...; band 3: p = 0.6182672...).

Default band: the largest half-width below one standard deviation sqrt(w)/2 of the weight -- 3 for
w = 64 (p = 0.618), 2 for w = 32 (p = 0.623).  Measured on xorshift128+ (test module): the dependency
sits in the component "ms.s" below, and its z grows from 6.3 with the median split to 19.9 with
band 3 on the same 2^32 words, a factor of about 10 in data; the band also leaves no rare cells
(the median split's middle class has probability 0.099, and tables with few expected counts in
such cells have measurably heavy chi-square tails).

Walsh-type components
---------------------
On one trit the functions

    f0 = (1, 1, 1),  f1 = (-1, 0, 1) ("s": side of the band),  f2 = (p, -2q, p) ("m": p - [t = 1])

are orthogonal under the trit law pi = (q, p, q), with E f1 = E f2 = 0, Var f1 = 2q, Var f2 = 2pq.
Their tensor products F_j (j in {0,1,2}^k, first word first) are orthogonal under pi^(x k).  The
words are read in *overlapping* windows (u_i, ..., u_{i+k-1}), i = 0 .. N-1 with N = words - k + 1,
and S_j = sum_i F_j(window i), z_j = S_j / sqrt(N V_j), V_j = prod Var f_{j_i}.  Labels such as
``"ms.s"`` name j: word 1 through f2, words 2 and 4 through f1, word 3 not involved.

Exact null moments: take the components whose *last* word is involved (j_k != 0), 2 * 3^(k-1) of
them.  For windows i < i' the product F_j(window i) F_j'(window i') contains the factor
f_{j'_k}(u_{i'+k-1}) and nothing else of that word, so its expectation is 0; within one window the
tensor basis is orthogonal.  Hence these z_j have mean 0, variance 1 and are pairwise uncorrelated,
exactly, for every N (the tests confirm it by exact enumeration).  The other components are shifts
of lower-order ones and are correlated with them; they are left out.  The windows are k-dependent,
so the z_j are asymptotically jointly normal (central limit theorem for m-dependent sequences,
Hoeffding & Robbins 1948 [from memory]) and, being uncorrelated, asymptotically independent N(0, 1).

Statistic (the p-value)
-----------------------
D = sum over the 2 * 3^(k-1) components with j_k != 0 of z_j^2, right tail of chi2(2 * 3^(k-1)).
D equals Good's first difference psi2_k - psi2_{k-1} of the overlapping trit tuples (psi2 = Pearson's
sum over the window table against the product law, psi2_{k-1} on the table's margin; Parseval in the
basis), the statistic rngassay's serial-overlapping check uses (Good 1953, J. Roy. Statist. Soc. B
15), here with unequal cell probabilities.  E[D] = d.o.f. exactly.

How good the chi-square tail is was measured (test module): with >= 4,000 windows and >= 100
expected in the rarest cell the shares of p-values below 1e-2 ... 1e-5 match; with 10 expected in
the rarest cell or only a few hundred windows the tail is heavier (e.g. 1.7e-3 below 1e-3).  So
every call needs >= 4,000 windows and >= 5 expected in the rarest cell, and the battery's default
parameters >= 100.

``details`` also names the largest |z_j| of the family with its Sidak-corrected two-sided normal
p-value -- the closest this module comes to the published "most extreme transformed entry" summary.
It is a diagnostic only, not the check's p-value.

Second level
------------
The replicates' overlapping window tables add up (``pooled={"overlapping_counts", "k", "w", "band",
"windows", "words"}``); the registry's ``pool`` (:func:`pool_tables`) recomputes D on the summed table: the
S_j add up and their variances add up exactly (N V_j with N the total number of windows), so a
steady small dependency meets all the data of a run at once.  (The key is not "counts": a plain
chi-square on summed overlapping counts would be wrong.)

Why this form: disjoint windows with a Pearson chi-square on all 3^k cells (a multinomial table)
and the max-|z| statistic were tried as well.  Overlapping windows give k times more windows from
the same words, and the first difference keeps only the 2 * 3^(k-1) components that carry new
information (54 d.o.f. instead of 80 for k = 4).  When the signal sits in one component, as for
xorshift128+, max |z| alone would need about half the data of D, but its normal tail is unreliable
for the rarer components at the first level, while D's tail was measured.

Measured power (battery style, tables pooled; see the test module): a stream whose words echo the
previous word's weight with probability 1/4 fails at 64 KiB; Marsaglia's xorshift32 at 4 MiB
(p ~ 2e-11); xoroshiro128+ and xorshift128+ pass at 64 MiB; xorshift128+ fails at 8 GiB (k = 4,
w = 64: p = 1.6e-8, component "ms.s" z = 8.9; 4 GiB gives p = 1.4e-3); xoroshiro128+ showed nothing
at 32 GiB.
Cost: one numba pass (hardware popcount, no temporaries), about 0.4-0.8 ms per MiB for w = 64 and
0.7-2 ms per MiB for w = 32 on one core.
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
from numba import njit

from rngassay.checks.registry import CheckSpec, check_id, register
from rngassay.checks.result import CheckResult
from rngassay.stats import chi2_tails, normal_two_sided

from ._common import popcount64

KEY = "hamming weight dependency"
SOURCE = ("D. Blackman, S. Vigna (2021), Scrambled linear pseudorandom number generators, ACM Trans. "
          "Math. Softw. 47(4): Hamming-weight dependency test (recalled from memory; see module doc); "
          "statistic: Good (1953), J. Roy. Statist. Soc. B 15, first difference on overlapping tuples")

#: Word widths the check understands.
WIDTHS = (32, 64)
#: Largest window (3^10 = 59,049 cells).
MAX_K = 10
#: Smallest expected count of the rarest window signature (common practice); enforced on every call.
MIN_EXPECTED = 5.0
#: The same for the battery's default parameters.
DEFAULT_MIN_EXPECTED = 100.0
#: Fewest windows on any call: below a few thousand windows the upper tail of D is measurably heavier
#: than chi-square (P(p < 1e-3) = 1.5e-3 at 1,000 windows, 1.0e-3 at 4,096; see the test module).
MIN_WINDOWS = 4000
#: Windows the battery runs by default, for each word width.
DEFAULT_KS = (2, 3, 4)
DEFAULT_WIDTHS = (64, 32)

_LABELS = ".sm"


# --------------------------------------------------------------------------- exact null law


def default_band(w: int) -> int:
    """The largest half-width below one standard deviation sqrt(w)/2 of the weight: 3 for w = 64, 2 for w = 32."""
    return _check_band(None, _check_w(w))


def trit_probabilities_exact(w: int, band: int | None = None) -> tuple[Fraction, Fraction, Fraction]:
    """Exact (P(weight < w/2 - band), P(|weight - w/2| <= band), P(weight > w/2 + band)) of a
    uniform w-bit word (weight ~ Binomial(w, 1/2)); ``band=None`` takes :func:`default_band`."""
    w = _check_w(w)
    band = _check_band(band, w)
    h = w // 2
    mid = Fraction(sum(math.comb(w, j) for j in range(h - band, h + band + 1)), 2**w)
    side = (1 - mid) / 2
    return side, mid, side


def trit_probabilities(w: int, band: int | None = None) -> np.ndarray:
    """The trit probabilities (q, p, q) as float64 (each rounded once from the exact fraction)."""
    return np.array([float(x) for x in trit_probabilities_exact(w, band)])


def signature_probabilities(k: int, w: int, band: int | None = None) -> np.ndarray:
    """Probabilities of the 3^k window signatures (first word most significant), product law."""
    k = _check_k(k)
    pi = trit_probabilities(w, band)
    out = np.ones(1)
    for _ in range(k):
        out = np.multiply.outer(out, pi).ravel()
    return out


def trit_basis(w: int, band: int | None = None) -> tuple[np.ndarray, np.ndarray]:
    """(f, var): rows f0, f1, f2 of the orthogonal basis on one trit (columns = trit 0, 1, 2) and
    their variances (1, 2q, 2pq) under the trit law."""
    q, p, _ = trit_probabilities(w, band)
    f = np.array([[1.0, 1.0, 1.0], [-1.0, 0.0, 1.0], [p, -2.0 * q, p]])
    var = np.array([1.0, 2.0 * q, 2.0 * p * q])
    return f, var


def component_label(j: int, k: int) -> str:
    """Label of component j (base-3 digits, first word first): '.' not involved, 's' sign, 'm' middle."""
    digits = []
    for _ in range(k):
        digits.append(_LABELS[j % 3])
        j //= 3
    return "".join(reversed(digits))


def dependency_components(k: int) -> np.ndarray:
    """Boolean mask over the 3^k components: True where the last word is involved (j_k != 0)."""
    k = _check_k(k)
    return np.arange(3**k) % 3 != 0


def walsh_z(counts: np.ndarray, k: int, w: int, band: int | None = None) -> np.ndarray:
    """Normalised Walsh-type sums z_j = S_j / sqrt(N V_j) of a table of N windows, all 3^k components
    (z_0 = 0).  ``counts`` -- the 3^k window-signature counts (first word most significant)."""
    k = _check_k(k)
    c = np.asarray(counts, dtype=np.float64)
    if c.size != 3**k:
        raise ValueError(f"hamming weight dependency: {c.size} counts given, a window of k={k} has {3**k}")
    N = float(c.sum())
    if N <= 0:
        raise ValueError("hamming weight dependency: no windows counted")
    f, var = trit_basis(w, band)
    t = c.reshape((3,) * k)
    v = np.ones(())
    for axis in range(k):
        t = np.moveaxis(np.tensordot(f, t, axes=([1], [axis])), 0, axis)
        v = np.multiply.outer(v, var)
    z = t.ravel() / np.sqrt(N * v.ravel())
    z[0] = 0.0  # S_0 = N: the total, not a contrast
    return z


def first_difference(counts: np.ndarray, k: int, w: int, band: int | None = None) -> tuple[float, int, np.ndarray]:
    """(D, d.o.f., z): D = sum of z_j^2 over the components with j_k != 0 (Good's first difference
    psi2_k - psi2_{k-1} of the window table), d.o.f. = 2 * 3^(k-1), and all z_j."""
    z = walsh_z(counts, k, w, band)
    fam = dependency_components(k)
    return float(np.sum(z[fam] ** 2)), int(np.count_nonzero(fam)), z


def sidak_normal(z_abs: float, m: int) -> float:
    """P(max of m independent |N(0,1)| >= z_abs) = 1 - (1 - 2 Q(z_abs))^m, without cancellation."""
    p2 = normal_two_sided(z_abs)
    if p2 >= 1.0:
        return 1.0
    return float(min(1.0, -math.expm1(m * math.log1p(-p2))))


def min_units(k: int, w: int, band: int | None = None, min_expected: float = MIN_EXPECTED) -> int:
    """Fewest w-bit words for >= MIN_WINDOWS windows in which the rarest window signature expects
    >= min_expected windows."""
    p_rare = float(min(trit_probabilities_exact(w, band)))
    return max(MIN_WINDOWS, int(math.ceil(min_expected / p_rare**k))) + k - 1


# --------------------------------------------------------------------------- kernel


@njit(cache=True, inline="always")
def _trit(x, u, mode, lo, hi):
    """Trit of unit u (0: weight < lo, 1: lo <= weight <= hi, 2: weight > hi): mode 0 one element per
    unit, 1 uint64 halves (low first), 2 uint32 pairs."""
    if mode == 0:
        h = np.int64(popcount64(np.uint64(x[u])))
    elif mode == 1:  # shift by 0 or 32 without a branch
        h = np.int64(popcount64((np.uint64(x[u >> 1]) >> np.uint64((u & 1) << 5)) & np.uint64(0xFFFFFFFF)))
    else:
        h = np.int64(popcount64(np.uint64(x[2 * u]))) + np.int64(popcount64(np.uint64(x[2 * u + 1])))
    return (h >= lo) + (h > hi)


@njit(cache=True)
def _window_counts(x, k, mode, lo, hi):
    """Counts of the 3^k signatures of the overlapping windows (units i .. i+k-1, i = 0 .. U-k).

    mode 0: every element is one unit (uint64 with w = 64, uint32 with w = 32)
    mode 1: uint64 elements split into two 32-bit units, low half first (w = 32)
    mode 2: uint32 elements combined in pairs into one 64-bit unit, low half first (w = 64)
    Trit 0 / 1 / 2 for a unit weight below lo / in [lo, hi] / above hi.
    """
    if mode == 1:
        units = x.size * 2
    elif mode == 2:
        units = x.size // 2
    else:
        units = x.size
    counts = np.zeros(3**k, dtype=np.int64)
    if units < k:
        return counts
    top = 1
    for _ in range(k - 1):
        top *= 3
    idx = 0
    for u in range(k - 1):
        idx = idx * 3 + _trit(x, u, mode, lo, hi)
    for u in range(k - 1, units):
        idx = idx * 3 + _trit(x, u, mode, lo, hi)
        counts[idx] += 1
        idx -= _trit(x, u - k + 1, mode, lo, hi) * top  # drop the window's first unit (recomputed, no buffer)
    return counts


def window_counts(words: np.ndarray, k: int, w: int, band: int | None = None) -> tuple[np.ndarray, int]:
    """(counts of the 3^k signatures of the overlapping k-windows, number of input elements read)
    for uint64 or uint32 words.

    w = 64 on uint32 input: consecutive pairs form one 64-bit word (low half first, as the
    ``words64`` view makes them); w = 32 on uint64 input: each word is two 32-bit words, low half first.
    """
    k, w = _check_k(k), _check_w(w)
    band = _check_band(band, w)
    x = _as_words(words)
    if x.dtype == np.uint64:
        mode = 0 if w == 64 else 1
    else:
        mode = 0 if w == 32 else 2
    counts = _window_counts(x, k, mode, w // 2 - band, w // 2 + band)
    used = {0: x.size, 1: x.size, 2: x.size // 2 * 2}[mode]
    return counts, used


# --------------------------------------------------------------------------- the check


def _result(counts: np.ndarray, k: int, w: int, band: int, used: int) -> CheckResult:
    N = int(counts.sum())
    D, df, z = first_difference(counts, k, w, band)
    right, _left = chi2_tails(D, df)
    fam = np.flatnonzero(dependency_components(k))
    order = fam[np.argsort(-np.abs(z[fam]), kind="stable")[:3]]
    top = [{"component": component_label(int(j), k), "z": float(z[j])} for j in order]
    pi = trit_probabilities(w, band)
    details = {
        "k": k, "w": w, "band": band, "windows": N, "words": int(used),
        "trit_probs": pi.tolist(),
        "expected_in_rarest_cell": N * float(pi.min()) ** k,
        "max_component": top[0]["component"], "max_abs_z": abs(top[0]["z"]),
        "max_component_p_sidak": sidak_normal(abs(top[0]["z"]), df),
        "top_components": top,
    }
    return CheckResult(
        name=check_id(KEY, {"k": k, "w": w, "band": band}), statistic=D, p_value=float(right),
        null=f"chi2(df={df})", kind="continuous", n=int(used), details=details,
        pooled={"overlapping_counts": counts.tolist(), "k": k, "w": w, "band": band, "windows": N,
                "words": int(used)},
    )


def hamming_weight_dependency(words: np.ndarray, n_words: int | None = None, k: int = 3, w: int = 64,
                              band: int | None = None) -> CheckResult:
    """Hamming-weight dependency check on overlapping windows of k consecutive w-bit words.

    H0: the words are i.i.d. uniform w-bit words, so their trits (weight below w/2 - band, within
    band of w/2, above w/2 + band) are i.i.d. with probabilities (q, p, q) from Binomial(w, 1/2).
    Statistic: the sum D of the squared normalised Walsh-type components whose last word is involved
    (Good's first difference on the overlapping trit windows, see module doc); right tail of
    chi2(2 * 3^(k-1)).  ``details`` names the largest component; ``pooled`` carries the window table
    for :func:`pool_tables`.

    words   -- uint64 (the ``words64`` view) or uint32 array
    n_words -- use the first n_words elements of ``words`` (None: all)
    k       -- window length, 1..10 (k = 1 tests the trit frequencies alone)
    w       -- word width, 32 or 64
    band    -- half-width of the middle class, 0 <= band < w/2; 0 is the median split of the
               published test (as recalled); None takes :func:`default_band` (3 for w = 64, 2 for w = 32)

    Needs >= 4,000 windows in which the rarest window signature expects >= 5 (:func:`min_units`).
    """
    k, w = _check_k(k), _check_w(w)
    band = _check_band(band, w)
    x = _as_words(words)
    if n_words is not None:
        n = int(n_words)
        if n < 0 or n > x.size:
            raise ValueError(f"hamming weight dependency: n_words={n} but {x.size} words were given")
        x = x[:n]
    per_element = 64 // w if x.dtype == np.uint64 else 32 / w
    have = int(x.size * per_element)
    need = min_units(k, w, band)
    if have < need:
        raise ValueError(f"hamming weight dependency: k={k} w={w} band={band} needs at least {need} words of "
                         f"{w} bits (>= {MIN_WINDOWS} windows, >= {MIN_EXPECTED:g} expected in the rarest of "
                         f"{3**k} cells), got {have}")
    counts, used = window_counts(x, k, w, band)
    return _result(counts, k, w, band, used)


def pool_tables(pooled: list[dict]) -> CheckResult:
    """Second level: D on the replicates' overlapping window tables added up.

    Each replicate's S_j is a sum over its windows with mean 0 and variance N_r V_j, independent of
    the other replicates, so on the summed table z_j = sum S_j / sqrt(N V_j) keeps mean 0, variance 1
    and the components stay uncorrelated: D on the sum is chi2(2 * 3^(k-1)) asymptotically, the
    statistic of all the windows at once.
    """
    if not pooled:
        raise ValueError("hamming weight dependency: nothing to pool")
    k, w, band = int(pooled[0]["k"]), int(pooled[0]["w"]), int(pooled[0]["band"])
    if any((int(p["k"]), int(p["w"]), int(p["band"])) != (k, w, band) for p in pooled):
        raise ValueError("hamming weight dependency: replicates with different k, w or band cannot be pooled")
    counts = np.sum([np.asarray(p["overlapping_counts"], dtype=np.int64) for p in pooled], axis=0)
    if counts.size != 3**k:
        raise ValueError(f"hamming weight dependency: pooled tables have {counts.size} cells, k={k} needs {3**k}")
    used = sum(int(p.get("words", 0)) for p in pooled)
    return _result(counts, k, w, band, used)


# --------------------------------------------------------------------------- validation


def _check_k(k) -> int:
    try:
        kk = int(k)
    except (TypeError, ValueError):
        raise ValueError(f"hamming weight dependency: window k must be an integer, got {k!r}") from None
    if kk != k or not 1 <= kk <= MAX_K:
        raise ValueError(f"hamming weight dependency: window k must be an integer in 1..{MAX_K}, got {k!r}")
    return kk


def _check_w(w) -> int:
    if w not in WIDTHS:
        raise ValueError(f"hamming weight dependency: word width w must be 32 or 64, got {w!r}")
    return int(w)


def _check_band(band, w: int) -> int:
    if band is None:
        return int(math.ceil(math.sqrt(w) / 2.0)) - 1
    try:
        bb = int(band)
    except (TypeError, ValueError):
        raise ValueError(f"hamming weight dependency: band must be an integer, got {band!r}") from None
    if bb != band or not 0 <= bb < w // 2:
        raise ValueError(f"hamming weight dependency: band must be an integer in 0..{w // 2 - 1} for w={w}, "
                         f"got {band!r}")
    return bb


def _as_words(words) -> np.ndarray:
    x = np.asarray(words)
    if x.dtype not in (np.uint64, np.uint32):
        raise ValueError(f"hamming weight dependency: needs uint64 or uint32 words, got dtype {x.dtype}")
    return np.ascontiguousarray(x.reshape(-1))


# --------------------------------------------------------------------------- registry


def _defaults(n: int) -> list[dict]:
    """k = 2, 3, 4 for w = 64 and w = 32 (32-bit halves of the words64 view), band = default_band(w),
    each when one replicate has >= 4,000 windows and the rarest window signature expects >= 100 of
    them (w = 64, k = 4: 75,353 words64, 589 KiB); every word of the replicate is read."""
    out = []
    for w in DEFAULT_WIDTHS:
        units = n if w == 64 else 2 * n
        band = default_band(w)
        for k in DEFAULT_KS:
            if units >= min_units(k, w, band, DEFAULT_MIN_EXPECTED):
                out.append({"n_words": n, "k": k, "w": w, "band": band})
    return out


register(CheckSpec(
    key=KEY, family="bits",
    title="Hamming-weight dependency of consecutive words (trits of the weight, overlapping k-word windows)",
    view="words64", kind="continuous", func=hamming_weight_dependency,
    values_needed=lambda p: int(p["n_words"]), default_params=_defaults, both_tails=False, source=SOURCE,
    pool=pool_tables,
    notes=("trit = weight below / within / above a band of half-width band around w/2 (exact binomial "
           "probabilities; band 3 for w = 64, 2 for w = 32: within one standard deviation); overlapping windows "
           "of k words; Good's first difference (the Walsh-type components whose last word is involved, exactly "
           "uncorrelated) against chi2(2 * 3^(k-1)); replicates pooled by adding window tables; k = 2, 3, 4 for "
           "w = 64 and w = 32 (32-bit halves, low first), each with >= 4,000 windows and >= 100 expected in "
           "the rarest cell per replicate; details name the largest component. Measured: xorshift128+ fails "
           "near 8 GiB (k=4 w=64)"),
    # six variants cost about 5 ms per MiB together: capped like the other non-counting checks above 64 MiB
    # until the one-pass engine makes them share a pass
))
