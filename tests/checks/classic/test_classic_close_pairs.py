"""Close-pairs test on the unit torus (L'Ecuyer, Cordeau & Simard 2000, from memory): law, kernel, null, power."""

import math

import numpy as np
import pytest
from scipy import stats

from rngassay.checks.classic import close_pairs as cp
from rngassay.checks.classic.close_pairs import (
    check_close_pairs,
    close_pair_counts,
    close_pair_probability,
    default_variants,
    grid_side,
    radius_for,
)
from rngassay.checks.registry import REGISTRY
from rngassay.errors import InputError
from rngassay.generators import make_generator
from rngassay.stats import pool_poisson


def brute_counts(u, t, n, r):
    """Close pairs of each sample by the definition: all pairs, L-infinity torus distance < r."""
    out = []
    for s in range(u.size // (n * t)):
        P = u[s * n * t : (s + 1) * n * t].reshape(n, t)
        D = np.abs(P[:, None, :] - P[None, :, :])
        D = np.minimum(D, 1.0 - D).max(axis=2)
        out.append(int((D[np.triu_indices(n, 1)] < r).sum()))
    return np.array(out)


def pcg_uniforms(seed, size):
    return np.random.Generator(np.random.PCG64(seed)).random(size)  # (u64 >> 11) 2^-53: the views' convention


# ------------------------------------------------------------------ the exact law of one pair


@pytest.mark.parametrize("t,r", [(1, 0.3), (2, 0.1), (3, 0.15), (5, 0.3)])
def test_pair_probability_against_simulation(t, r):
    # [derived] P(d < r) = (2r)^t for r <= 1/2 (the torus ball of L-infinity radius r is a cube of
    # side 2r); checked on 10^6 independent pairs (numpy only), 4 standard errors, fixed seed
    rng = np.random.Generator(np.random.PCG64(t))
    x, y = rng.random((10**6, t)), rng.random((10**6, t))
    d = np.abs(x - y)
    d = np.minimum(d, 1.0 - d).max(axis=1)
    p = close_pair_probability(r, t)
    assert p == pytest.approx((2 * r) ** t)
    assert abs((d < r).mean() - p) < 4 * math.sqrt(p * (1 - p) / 10**6)


def test_pair_probability_one_dimension_by_integration():
    # t = 1: P(min(|x-y|, 1-|x-y|) < r) = integral of the density 2 (1 - z) of |x - y| over
    # [0, r) and (1 - r, 1]  = 2r - r^2 + r^2 = 2r  (scipy.integrate as the reference)
    from scipy import integrate

    for r in (0.01, 0.25, 0.5):
        a = integrate.quad(lambda z: 2 * (1 - z), 0, r)[0] + integrate.quad(lambda z: 2 * (1 - z), 1 - r, 1)[0]
        assert close_pair_probability(r, 1) == pytest.approx(a, rel=1e-12)


def test_radius_gives_the_target_mean():
    for n, t, mu in [(131072, 2, 32.0), (52428, 5, 32.0), (4096, 3, 8.0)]:
        r = radius_for(mu, n, t)
        assert n * (n - 1) / 2 * close_pair_probability(r, t) == pytest.approx(mu, rel=1e-12)
        g = grid_side(n, t, r)
        assert g >= 3 and 1.0 / g >= r and g**t <= max(2 * n, 3**t)


# ------------------------------------------------------------------ kernel


@pytest.mark.parametrize("t", [1, 2, 3, 4, 5])
@pytest.mark.parametrize("n,r", [(500, 0.05), (300, 0.2), (1000, 0.01), (64, 1 / 3)])
def test_kernel_matches_all_pairs(t, n, r):
    u = pcg_uniforms(100 * t + n, 3 * n * t)
    assert np.array_equal(close_pair_counts(u, t, n, r), brute_counts(u, t, n, r))


def test_kernel_wraps_around_the_torus():
    # points close only through the wrap (0.001 and 0.999 on every axis), and on cell edges
    u = np.array([0.001, 0.999, 0.999, 0.001, 0.5, 0.5, 0.5 + 2e-3, 0.5 - 2e-3, 0.25, 0.75], dtype=np.float64)
    assert close_pair_counts(u, 2, 5, 0.005)[0] == brute_counts(u, 2, 5, 0.005)[0] == 2


# ------------------------------------------------------------------ null: PCG64


# calibration: t = 4 and 5 take longest (~5 s each) and are marked slow; t = 2, 3 stay in the fast run
@pytest.mark.parametrize("t", [2, 3, pytest.param(4, marks=pytest.mark.slow), pytest.param(5, marks=pytest.mark.slow)])
def test_null_counts_follow_poisson(t):
    # 1000 samples of n = 4096 points (the smallest the defaults use) with mu = 32, PCG64 uniforms,
    # fixed seed.  Mean within 4 standard errors of mu; variance/mean within 0.18 of the exact
    # 1 - p (4 standard errors of a sample variance ratio at S = 1000); chi-square of the counts
    # against Poisson(32) on classes <= 22, 23..41, >= 42 (all expected >= 10), p > 1e-3.
    n, S, mu = 4096, 1000, 32.0
    r = radius_for(mu, n, t)
    counts = np.concatenate([close_pair_counts(pcg_uniforms([t, k], 100 * n * t), t, n, r) for k in range(S // 100)])
    assert counts.size == S
    p = close_pair_probability(r, t)
    assert abs(counts.mean() - mu) < 4 * math.sqrt(mu / S)
    assert counts.var(ddof=1) / counts.mean() == pytest.approx(1 - p, abs=0.18)
    edges = np.arange(23, 43)
    obs = np.bincount(np.digitize(counts, edges), minlength=edges.size + 1)
    probs = np.diff(np.concatenate([[0.0], stats.poisson.cdf(edges - 1, mu), [1.0]]))
    assert (probs * S).min() >= 10
    assert stats.chisquare(obs, probs * S).pvalue > 1e-3


@pytest.mark.slow
def test_null_false_alarms_of_pooled_totals():
    # the battery's second level: 200 runs, each pooling 4 replicates of n = 8192 points, t = 2..5,
    # mu = 32, on PCG64 uniforms (fixed seeds).  Per t: runs with pooled two-sided p < 0.01 must
    # not exceed the binomial(200, 0.01) 99.9% point (8); the grand total must pass Poisson(sum mu)
    # at 1e-3; and the variance/mean ratio of the 800 counts must be within 0.2 of 1.
    limit = int(stats.binom.ppf(0.999, 200, 0.01))
    n = 8192
    for t in (2, 3, 4, 5):
        r = radius_for(32.0, n, t)
        low, allc = 0, []
        for run in range(200):
            c = close_pair_counts(pcg_uniforms([run, t, 5], 4 * n * t), t, n, r)
            _, _, right, left = pool_poisson(c, [32.0] * 4)
            low += min(1.0, 2 * min(right, left)) < 0.01
            allc.append(c)
        allc = np.concatenate(allc)
        assert low <= limit, (t, low)
        _, _, right, left = pool_poisson(allc, [32.0] * allc.size)
        assert min(1.0, 2 * min(right, left)) > 1e-3, t
        assert allc.var(ddof=1) / allc.mean() == pytest.approx(1.0, abs=0.2)


def test_pcg64_passes_the_default_variants_at_two_mib():
    # 4 replicates of a 2 MiB segment (262,144 uniforms; the battery at --budget 8MiB), fixed seed
    gen = make_generator("pcg64", 4)
    variants = default_variants(1 << 18)
    res = {p["t"]: [] for p in variants}
    for _ in range(4):
        u = (gen.read(2 << 20).view("<u8") >> np.uint64(11)) * 2.0**-53
        for p in variants:
            res[p["t"]].append(check_close_pairs(u, **p).pooled)
    for t, rs in res.items():
        _, _, right, left = pool_poisson([x["observed"] for x in rs], [x["mu"] for x in rs])
        assert min(1.0, 2 * min(right, left)) > 1e-3, t


# ------------------------------------------------------------------ power: lattice generators


def natural_uniforms(gen, seed, count):
    """The generator's own uniforms x / m (repo generators, published definitions)."""
    m = {"randu": 2.0**31, "minstd": 2.0**31 - 1, "lcg32": 2.0**32}[gen]
    return make_generator(gen, seed).read(4 * count).view("<u4") / m


def test_randu_one_sample():
    # RANDU (Knuth 3.3.4: triples on 15 planes): one 2 MiB sample (262,144 uniforms).  In three
    # dimensions the points crowd on the planes: ~1760 close pairs where 32 are expected (measured
    # 14105 of 256 over 8 samples).  In two dimensions its lattice's shortest vector is longer than
    # r = 3e-5: no close pair at all, P(C = 0) = e^-32 = 1.3e-14.
    u = natural_uniforms("randu", 1, 1 << 18)
    by_t = {p["t"]: check_close_pairs(u, **p) for p in default_variants(1 << 18)}
    assert by_t[3].statistic > 500 and by_t[3].p_value < 1e-100
    assert by_t[4].p_value < 1e-100 and by_t[5].p_value < 1e-100
    assert by_t[2].statistic == 0 and by_t[2].p_left == pytest.approx(math.exp(-32.0), rel=1e-9)


def pooled_over(gen, seed, samples):
    g = {"minstd": 2.0**31 - 1, "lcg32": 2.0**32}[gen]
    stream = make_generator(gen, seed)
    variants = default_variants(1 << 18)
    res = {p["t"]: [] for p in variants}
    for _ in range(samples):
        u = stream.read(4 << 18).view("<u4") / g
        for p in variants:
            res[p["t"]].append(check_close_pairs(u, **p).pooled)
    return {t: pool_poisson([x["observed"] for x in rs], [x["mu"] for x in rs]) for t, rs in res.items()}


def test_minstd_too_few_close_pairs():
    # minstd (Park & Miller 1988) as x / (2^31 - 1), 8 samples of 262,144 uniforms (8 MiB of its
    # words): too few close pairs in 2 and 3 dimensions, measured 204 and 172 of 256 (seed 1;
    # seeds 2, 3: 209/173, 190/145); 32 samples: 760 and 668 of 1024 (p 3e-18, 9e-33)
    res = pooled_over("minstd", 1, 8)
    assert res[3][3] < 1e-6  # left tail
    assert res[2][3] < 1e-2


def test_lcg32_too_many_close_pairs_in_four_dimensions():
    # Numerical Recipes' 32-bit LCG as x / 2^32, 8 samples: 439 of 256 close 4-tuples (seed 1;
    # seeds 2, 3: 440, 432), p ~ 1e-25; 2 dimensions: too few (181 of 256, p 5e-7)
    res = pooled_over("lcg32", 1, 8)
    assert res[4][2] < 1e-15  # right tail
    assert res[2][3] < 1e-4


# ------------------------------------------------------------------ registry, defaults, errors


def test_default_variants():
    assert default_variants(2 * 4096 - 1) == []
    assert [p["t"] for p in default_variants(2 * 4096)] == [2]
    v = default_variants(1 << 18)  # a 2 MiB segment of byte input
    assert [(p["t"], p["n"]) for p in v] == [(2, 131072), (3, 87381), (4, 65536), (5, 52428)]
    for size in (8192, 100_000, 1 << 18, 1 << 20, 1 << 24):
        for p in default_variants(size):
            assert p["mu"] == 32.0 and cp.MIN_POINTS <= p["n"] <= cp.MAX_POINTS
            assert p["n_values"] % (p["n"] * p["t"]) == 0 and p["n_values"] <= size
    assert default_variants(1 << 24)[0]["n"] == cp.MAX_POINTS  # 2^23 pairs possible: samples of 2^21


def test_registry_entry_and_result():
    spec = REGISTRY["close pairs"]
    assert spec.view == "uniforms" and spec.kind == "discrete" and spec.both_tails and spec.family == "classic"
    from rngassay.battery.plan import display_id

    p = default_variants(1 << 18)[1]
    assert display_id(spec, p) == ("close pairs t=3 mu=32", "") and spec.values_needed(p) == p["n_values"]
    u = pcg_uniforms(3, 3 * 2000 + 5)
    res = check_close_pairs(u, t=3, n=1000, mu=20.0)
    assert res.name == "close pairs t=3 mu=20"
    assert res.details["samples"] == 2 and res.n == 2 * 3 * 1000
    assert res.details["per_sample"] == brute_counts(u, 3, 1000, res.details["r"]).tolist()
    assert res.pooled == {"observed": int(res.statistic), "mu": pytest.approx(40.0)}
    assert res.p_value == pytest.approx(stats.poisson.sf(res.statistic - 1, 40.0), rel=1e-9)  # scipy reference
    assert res.p_left == pytest.approx(stats.poisson.cdf(res.statistic, 40.0), rel=1e-9)
    fixed = check_close_pairs(u, t=2, r=0.001)
    assert fixed.name == "close pairs t=2 r=0.001" and fixed.details["samples"] == 1
    assert fixed.pooled["mu"] == pytest.approx(3002 * 3001 / 2 * 0.002**2)


@pytest.mark.parametrize("kwargs,data", [
    ({"t": 0}, None), ({"t": 9}, None), ({"t": 2, "n": 1}, None), ({"t": 2, "n": 5000}, None),
    ({"t": 2, "mu": 0.0}, None), ({"t": 2, "mu": float("nan")}, None), ({"t": 2, "r": 0.4}, None),
    ({"t": 2, "n": 100, "mu": 1e6}, None), ({"t": 2, "n_values": 10**6}, None),
    ({"t": 2}, np.arange(1000, dtype=np.uint32)), ({"t": 2}, np.full(1000, 1.0)),
    ({"t": 2}, np.full(1000, np.nan)), ({"t": 2}, np.full(1000, -0.1)),
])
def test_bad_parameters(kwargs, data):
    u = pcg_uniforms(0, 1000) if data is None else data
    with pytest.raises(InputError) as e:
        check_close_pairs(u, **kwargs)
    assert "\n" not in str(e.value) and "close pairs" in str(e.value)
