"""Birthday spacings with large cell counts (L'Ecuyer & Simard 2001, from memory): exact mean, null, power."""

import itertools
import math
from fractions import Fraction

import numpy as np
import pytest
from scipy import stats

from rngassay.checks.classic import birthday_wide as bw
from rngassay.checks.classic.birthday import birthday_mean, spacing_repeats
from rngassay.checks.classic.birthday_wide import (
    check_birthday_spacings_wide,
    default_variants,
    wide_lambda,
    wide_mean,
)
from rngassay.checks.registry import REGISTRY, check_id
from rngassay.errors import InputError
from rngassay.generators import make_generator
from rngassay.stats import pool_poisson


def repeats_of(cells, k):
    """R by the definition: sorted cells, circular spacings, sorted, equal neighbours counted.

    The wrap-around spacing is y_1 + k - y_n (k when all cells coincide), taken mod 2^64 when
    k = 2^64 (the kernel's unsigned arithmetic; all cells equal has probability n 2^-64 there)."""
    y = sorted(cells)
    last = y[0] + k - y[-1] if k < 1 << 64 else (y[0] - y[-1]) % (1 << 64)
    sp = sorted([y[i + 1] - y[i] for i in range(len(y) - 1)] + [last])
    return sum(1 for j in range(1, len(sp)) if sp[j] == sp[j - 1])


def pcg_words(seed, size):
    """``size`` i.i.d. 32-bit words: PCG64 outputs (numpy) split into halves."""
    return np.random.PCG64(seed).random_raw((size + 1) // 2).view(np.uint32)[:size].copy()


# ------------------------------------------------------------------ POSIX drand48, written out here

DRAND48_A, DRAND48_C, M48 = 0x5DEECE66D, 0xB, (1 << 48) - 1  # The Open Group Base Specifications, drand48


def drand48_words(count, state=0x1234ABCD330E):
    """x <- (a x + c) mod 2^48 (POSIX drand48 constants); each new state's bits 47..16 as a word
    (what mrand48 returns, read unsigned).  Vectorised by jumping ahead: x_{i+j} = A_j x_i + C_j."""
    block = 1 << 14
    A = np.empty(block, np.uint64)
    C = np.empty(block, np.uint64)
    a_j, c_j = 1, 0
    for j in range(block):
        a_j, c_j = (a_j * DRAND48_A) & M48, (c_j * DRAND48_A + DRAND48_C) & M48
        A[j], C[j] = a_j, c_j
    out = np.empty(count, np.uint64)
    x = state
    for i in range(0, count, block):
        k = min(block, count - i)
        v = (A[:k] * np.uint64(x) + C[:k]) & np.uint64(M48)  # uint64 wraps mod 2^64; 2^48 divides 2^64
        out[i : i + k] = v
        x = int(v[-1])
    return (out >> np.uint64(16)).astype(np.uint32)


def test_inline_drand48_matches_the_recurrence():
    # first words against the scalar recurrence; and the repo's lcg48 generator (same definition)
    w = drand48_words(40_000, state=5)
    x = 5
    for i in range(40_000):
        x = (DRAND48_A * x + DRAND48_C) & M48
        if i < 20 or i > 39_990:
            assert int(w[i]) == x >> 16
    ref = make_generator("lcg48", 0).read(4 * 1000).view("<u4")  # state = seed XOR a (its docstring)
    assert np.array_equal(drand48_words(1000, state=DRAND48_A), ref)


# ------------------------------------------------------------------ exact mean


@pytest.mark.parametrize("n,k", [(3, 8), (4, 8), (4, 10), (5, 6), (6, 7), (5, 9), (3, 40), (4, 21)])
def test_exact_mean_matches_enumeration(n, k):
    # outside check: all k^n equally likely birthday vectors enumerated
    total = sum(repeats_of(b, k) for b in itertools.product(range(k), repeat=n))
    assert wide_mean(n, k) == pytest.approx(float(Fraction(total, k**n)), rel=1e-12, abs=1e-14)


@pytest.mark.parametrize("n,bits,ref", [(512, 24, 1.98532146), (4096, 30, None)])
def test_exact_mean_agrees_with_the_plain_check(n, bits, ref):
    # birthday.birthday_mean is exact where its log-gamma differences keep their precision (k <= 2^30)
    got = wide_mean(n, 1 << bits)
    assert got == pytest.approx(birthday_mean(n, 1 << bits), rel=1e-6)
    if ref is not None:  # the figure birthday's tests pin (direct sums)
        assert got == pytest.approx(ref, rel=1e-8)


@pytest.mark.parametrize("n", [100, 1000, 1 << 18])
def test_exact_mean_limit_of_many_cells(n):
    # [derived] as k -> infinity the n circular spacings of n points, scaled by k, are Dirichlet(1,...,1);
    # two of them (D_1, D_2) have density (n-1)(n-2)(1-x-y)^(n-3), so the density of D_1 - D_2 at 0 is
    # (n-1)/2 and P(S_1 = S_2) ~ (n-1)/(2k): k E[R] -> C(n,2)(n-1)/2 = n (n-1)^2 / 4.  At k = 2^64
    # the next correction is of relative size n^2/k < 4e-9.
    k = 1 << 64
    assert wide_mean(n, k) * k == pytest.approx(n * (n - 1) ** 2 / 4, rel=1e-8)


def test_exact_mean_against_simulation():
    # n = 128 points in 2^16 cells (n^2/k = 1/4: E[R] = 7.463 is 6.7% below lambda = 8); 2^15
    # samples simulated with numpy alone (not this module's kernel); fixed seed, 4 standard errors
    # (one standard error is 0.015, so lambda is 36 of them away).
    rng = np.random.Generator(np.random.PCG64(2024))
    n, k, S = 128, 1 << 16, 1 << 15
    y = np.sort(rng.integers(0, k, size=(S, n)), axis=1)
    sp = np.concatenate([np.diff(y, axis=1), y[:, :1] + k - y[:, -1:]], axis=1)
    sp.sort(axis=1)
    r = (np.diff(sp, axis=1) == 0).sum(axis=1)
    se = r.std() / math.sqrt(S)
    assert abs(r.mean() - wide_mean(n, k)) < 4 * se
    assert abs(r.mean() - wide_lambda(n, k)) > 20 * se


def test_asymptotic_mean_error_is_negligible_at_the_defaults():
    # criterion: |E R - lambda| / lambda times the pooled mean of 64 replicates must be well under
    # one standard deviation of the pooled total (here: below 1%).  Measured: relative error <= 2e-4.
    for words in (26_008, 1 << 18, 1 << 19):
        for p in default_variants(words):
            n, k = p["n"], 1 << (p["t"] * p["b"])
            lam, mean = wide_lambda(n, k), wide_mean(n, k)
            rel = abs(mean - lam) / lam
            pooled = 64 * mean
            assert rel < 2e-4
            assert rel * pooled < 0.01 * math.sqrt(pooled)


# ------------------------------------------------------------------ kernel (birthday.spacing_repeats reused)


@pytest.mark.parametrize("t,b,n", [(2, 26, 300), (3, 17, 200), (4, 12, 150), (2, 32, 100), (4, 16, 64), (3, 21, 90)])
def test_cells_and_counts_match_the_definition(t, b, n):
    # kept bits from a small range (so that spacings repeat often), random bits below them
    rng = np.random.Generator(np.random.PCG64(11))
    kept = rng.integers(0, 6, size=20 * n * t, dtype=np.uint64)
    w = ((kept << np.uint64(32 - b)) | (pcg_words(12, kept.size) & np.uint32((1 << (32 - b)) - 1))).astype(np.uint32)
    got = check_birthday_spacings_wide(w, t=t, b=b, n=n).details["per_sample"]
    assert sum(got) > 0
    for s in range(20):
        ws = [int(x) for x in w[s * n * t : (s + 1) * n * t]]
        cells = [sum((ws[i * t + j] >> (32 - b)) << (b * (t - 1 - j)) for j in range(t)) for i in range(n)]
        assert got[s] == repeats_of(cells, 1 << (t * b))


def test_kernel_counts_repeats_of_structured_cells():
    # 2^12 points on an arithmetic progression of cells i * (2^30 + 5) (words built so that the
    # top 26 bits of each pair give that cell): n - 1 equal spacings and a different wrap-around one
    n, t, b = 4096, 2, 26
    i = np.arange(n, dtype=np.uint64)
    cell = i * np.uint64(1 << 30) + i * np.uint64(5)
    hi = (cell >> np.uint64(b)) << np.uint64(32 - b)
    lo = (cell & np.uint64((1 << b) - 1)) << np.uint64(32 - b)
    w = np.empty(2 * n, np.uint32)
    w[0::2], w[1::2] = hi, lo
    r = check_birthday_spacings_wide(w, t=t, b=b, n=n)
    assert r.statistic == n - 2  # n - 1 equal values: n - 2 repeats
    assert r.p_value < 1e-100 and r.p_left == pytest.approx(1.0)


# ------------------------------------------------------------------ null: PCG64 words


def test_null_counts_follow_poisson():
    # n = 2^13 pairs of the top 17 bits (2^34 cells, lambda = 8), 2048 samples of PCG64 words
    # (fixed seed): chi-square of the per-sample counts against Poisson(E R) on classes <= 2, 3..14,
    # >= 15 (all expected >= 10), p > 1e-3; variance/mean within 0.12 of 1 (4 standard errors).
    n, t, b, S = 1 << 13, 2, 17, 2048
    w = pcg_words(77, S * n * t)
    r = spacing_repeats(w, n, t * b, 32 - b, t).astype(float)  # per-sample counts (the check's kernel)
    assert check_birthday_spacings_wide(w, t=t, b=b, n=n).statistic == r.sum()
    mu = wide_mean(n, 1 << (t * b))
    edges = [3] + list(range(4, 16))
    cls = np.digitize(r, edges)  # 0: r <= 2, ..., last: r >= 15
    obs = np.bincount(cls, minlength=len(edges) + 1)
    cdf = stats.poisson.cdf(np.array(edges) - 1, mu)
    probs = np.diff(np.concatenate([[0.0], cdf, [1.0]]))
    assert (probs * S).min() >= 10
    assert stats.chisquare(obs, probs * S).pvalue > 1e-3
    assert r.var() / r.mean() == pytest.approx(1.0, abs=0.12)
    assert abs(r.mean() - mu) < 4 * math.sqrt(mu / S)


@pytest.mark.slow
def test_null_false_alarms_of_pooled_totals():
    # the battery's second level: 200 runs, each pooling 4 replicates of the default variants at
    # 2^16 words (t=2 b=22, t=3 b=14, t=4 b=10; lambda 0.5 .. 1) on PCG64 words (fixed seeds).
    # Per variant: the number of runs with pooled two-sided p < 0.01 must not exceed the binomial
    # (200, 0.01) 99.9% point (8), and the grand total over the runs must pass Poisson(sum mu).
    words = 1 << 16
    variants = default_variants(words)
    assert [(p["t"], p["b"]) for p in variants] == [(2, 22), (3, 14), (4, 10)]
    limit = int(stats.binom.ppf(0.999, 200, 0.01))
    for p in variants:
        low, obs_all, mu_all = 0, [], []
        for run in range(200):
            obs, mus = [], []
            for rep in range(4):
                res = check_birthday_spacings_wide(pcg_words([run, rep, p["t"]], words), **p)
                obs.append(res.pooled["observed"])
                mus.append(res.pooled["mu"])
            _, _, right, left = pool_poisson(obs, mus)
            low += min(1.0, 2 * min(right, left)) < 0.01
            obs_all += obs
            mu_all += mus
        assert low <= limit, (p, low)
        _, _, right, left = pool_poisson(obs_all, mu_all)
        assert min(1.0, 2 * min(right, left)) > 1e-3, p


def test_null_default_variants_at_two_mib():
    # 16 replicates of the 2 MiB-segment defaults (n = 2^18 pairs in 2^52 cells, ...) on PCG64
    # (fixed seed): pooled two-sided p > 1e-3 for each variant
    gen = make_generator("pcg64", 3)
    variants = default_variants(1 << 19)
    res = {i: [] for i in range(len(variants))}
    for _ in range(16):
        w = gen.read(2 << 20).view("<u4")
        for i, p in enumerate(variants):
            res[i].append(check_birthday_spacings_wide(w, **p).pooled)
    for i, rs in res.items():
        _, _, right, left = pool_poisson([r["observed"] for r in rs], [r["mu"] for r in rs])
        assert min(1.0, 2 * min(right, left)) > 1e-3, variants[i]


# ------------------------------------------------------------------ power


def test_drand48_pairs_of_top_26_bits_one_sample_of_8_mib():
    # the issue author's measurement, reproduced: non-overlapping pairs of the top 26 bits
    # (k = 2^52), n = 2^20 points (8 MiB of words), lambda = 64.  drand48: 666 repeats (author: 700);
    # PCG64 words: 68 (author: 55 and 71 with another 64-bit generator).
    r = check_birthday_spacings_wide(drand48_words(1 << 21), t=2, b=26, n=1 << 20)
    assert r.details["lambda_asymptotic"] == 64.0
    assert r.statistic > 500 and r.p_value < 1e-100
    s = check_birthday_spacings_wide(pcg_words(5, 1 << 21), t=2, b=26, n=1 << 20)
    assert s.p_two_sided > 1e-3


def test_drand48_fails_the_default_variant_at_8_mib():
    # the battery at --budget 8MiB: 4 replicates of 2 MiB, t=2 b=26 n=2^18 (lambda = 1 per sample).
    # drand48 gives ~11 repeats per sample (a lattice of 2^48 points in 2^52 cells); measured here 40
    # of 4 (p 3e-26; the repo's lcg48 generator, seed 0, through the battery: 59, p 8e-49).
    p = default_variants(1 << 19)[0]
    assert (p["t"], p["b"], p["n"]) == (2, 26, 1 << 18)
    w = drand48_words(4 << 19)
    obs, mus = [], []
    for rep in range(4):
        res = check_birthday_spacings_wide(w[rep << 19 : (rep + 1) << 19], **p)
        obs.append(res.pooled["observed"])
        mus.append(res.pooled["mu"])
    total, mu, right, _ = pool_poisson(obs, mus)
    assert total > 30 and right < 1e-20


def test_drand48_at_one_mib_segments():
    # --budget >= 128 MiB gives non-cheap checks 1 MiB per segment: t=2 b=25 n=2^17 (2^50 cells,
    # lambda = 1/2); 16 such replicates of drand48: measured 41 against 8 (p 1e-16; the repo's lcg48,
    # seed 0: 25, p 1e-6); the battery at --budget 1GiB (64 replicates) gave p 9e-58.  Asserted: p < 1e-4.
    p = default_variants(1 << 18)[0]
    assert (p["t"], p["b"], p["n"]) == (2, 25, 1 << 17)
    w = drand48_words(16 << 18)
    obs, mus = [], []
    for rep in range(16):
        res = check_birthday_spacings_wide(w[rep << 18 : (rep + 1) << 18], **p)
        obs.append(res.pooled["observed"])
        mus.append(res.pooled["mu"])
    _, _, right, _ = pool_poisson(obs, mus)
    assert right < 1e-4


@pytest.mark.parametrize("gen", ["minstd", "randu", "lcg32"])
def test_small_lcgs_fail_every_variant(gen):
    # LCGs with 31/32-bit states (repo generators, published definitions): the t-tuples lie on a
    # lattice of at most 2^32 points in 2^48..2^52 cells; one 2 MiB sample gives 2e4..2e5 repeats
    # where 0.6..2 are expected.  minstd and randu are shifted left one bit first, so that their
    # always-zero top bit is not what is caught.
    w = make_generator(gen, 1).read(2 << 20).view("<u4")
    if gen in ("minstd", "randu"):
        w = w << np.uint32(1)
    for p in default_variants(1 << 19):
        r = check_birthday_spacings_wide(w, **p)
        assert r.statistic > 1000 and r.p_value < 1e-100, (gen, p, r.statistic)


def test_xorshift32_fails_on_pairs():
    # 2^32 states, not a lattice: pairs still take at most 2^32 values in 2^52 cells; measured
    # 182 and 203 repeats (seeds 1, 2) where 1 is expected.  Triples: 29, 40 of 0.59; quadruples
    # only 13 of 2 (p ~ 2e-7), not asserted.
    w = make_generator("xorshift32", 1).read(2 << 20).view("<u4")
    p = default_variants(1 << 19)[0]
    assert check_birthday_spacings_wide(w, **p).p_value < 1e-100


def test_pcg64_passes_the_default_variants():
    w = make_generator("pcg64", 9).read(2 << 20).view("<u4")
    for p in default_variants(1 << 19):
        assert check_birthday_spacings_wide(w, **p).p_two_sided > 1e-3


# ------------------------------------------------------------------ registry, defaults, errors


def test_default_variants():
    assert default_variants(26_007) == []  # fewer than 13,004 pairs: cells would be below 2^40
    v = default_variants(26_008)
    assert [(p["t"], p["b"]) for p in v] == [(2, 20)]
    at2mib = default_variants(1 << 19)
    assert [(p["t"], p["b"], p["n"]) for p in at2mib] == [(2, 26, 1 << 18), (3, 17, 174_762), (4, 12, 1 << 17)]
    for words in (26_008, 100_000, 1 << 18, 1 << 19, 1 << 21, 1 << 24):
        for p in default_variants(words):
            n, t, b = p["n"], p["t"], p["b"]
            lam = wide_lambda(n, 1 << (t * b))
            assert 0.5 <= lam < 0.5 * 2**t and 40 <= t * b <= 64 and n <= bw.MAX_POINTS
            assert p["n_words"] % (n * t) == 0 and p["n_words"] <= words
    big = default_variants(1 << 24)  # 64 MiB of words: samples of 2^20 points, several per run
    assert big[0]["n"] == 1 << 20 and big[0]["n_words"] == 8 * (1 << 21)


def test_registry_entry_and_id():
    spec = REGISTRY["birthday spacings wide"]
    assert spec.view == "words32" and spec.kind == "discrete" and spec.both_tails and spec.family == "classic"
    p = default_variants(1 << 19)[0]
    assert spec.values_needed(p) == p["n_words"]
    from rngassay.battery.plan import display_id  # sample sizes and b (chosen from the data) stay out of the id

    assert display_id(spec, p) == ("birthday spacings wide t=2", "b=26")
    r = check_birthday_spacings_wide(pcg_words(1, 1 << 16), t=2, b=22, n=1 << 14)
    assert r.name == check_id("birthday spacings wide", {"t": 2, "b": 22})
    assert r.details["samples"] == 2 and r.n == 1 << 16
    mu = 2 * wide_mean(1 << 14, 1 << 44)
    assert r.pooled == {"observed": int(r.statistic), "mu": pytest.approx(mu)}
    assert r.p_value == pytest.approx(stats.poisson.sf(r.statistic - 1, mu), rel=1e-9)  # scipy reference
    assert r.p_left == pytest.approx(stats.poisson.cdf(r.statistic, mu), rel=1e-9)


@pytest.mark.parametrize("kwargs,data", [
    ({"t": 2, "b": 33}, None), ({"t": 3, "b": 22}, None), ({"t": 0, "b": 10}, None),
    ({"t": 2, "b": 26, "n": 1}, None), ({"t": 2, "b": 4, "n": 1000}, None),
    ({"t": 2, "b": 26, "n": 1000}, np.zeros(1999, np.uint32)),
    ({"t": 2, "b": 26, "n": 1000}, np.zeros(4000, np.float64)),
    ({"t": 2, "b": 26, "n": 1000, "n_words": 5000}, None),
])
def test_bad_parameters(kwargs, data):
    w = pcg_words(0, 4000) if data is None else data
    with pytest.raises(InputError) as e:
        check_birthday_spacings_wide(w, **kwargs)
    assert "\n" not in str(e.value) and "birthday spacings wide" in str(e.value)
