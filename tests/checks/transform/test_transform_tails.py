"""Tail counts and exact endpoints: grid probabilities, normal tail areas, exact binomial/Poisson laws, power."""

import math
from fractions import Fraction

import numpy as np
import pytest
from scipy import stats

from rngassay.checks.catalog import load_all
from rngassay.checks.transform._common import lower_tail_probability, resolve_bits, upper_tail_probability
from rngassay.checks.transform.tails import check_exact_endpoints, check_tail_count, normal_thresholds
from rngassay.stats import pool_binomial, pool_poisson


def pcg(seed):
    return np.random.Generator(np.random.PCG64(seed))


# check-values.md §6, Abramowitz & Stegun 26.2 [printed+reproduced]: Q(z) = P(Z > z)
AS_Q = {3: 1.3499e-3, 4: 3.1671e-5, 5: 2.8665e-7, 6: 9.8659e-10}


@pytest.mark.parametrize("z", sorted(AS_Q))
def test_normal_thresholds_reproduce_abramowitz_stegun(z):
    # check-values.md §6, A&S 26.2: the q-quantile thresholds of the tail-count path at q = Q(z)
    lo, hi = normal_thresholds(AS_Q[z])
    assert lo == pytest.approx(-z, abs=2e-4) and hi == pytest.approx(z, abs=2e-4)


def test_grid_tail_probabilities_are_exact():
    # exact formula: #{k : k 2^-b < q} = ceil(q 2^b), #{k : k 2^-b >= 1 - q} = floor(q 2^b) (fractions)
    for q in (1e-5, 1e-7):
        for b in (16, 24, 32, 53):
            m = 2**b
            qf = Fraction(q)
            lo = Fraction(-((-qf * m).__floor__()), m)  # ceil
            hi = Fraction((qf * m).__floor__(), m)
            assert lower_tail_probability(q, b) == float(lo)
            assert upper_tail_probability(q, b) == float(hi)
    assert lower_tail_probability(1e-7, 16) == 2.0**-16  # only k = 0 lies below 1e-7


def test_tail_count_law_is_exact_binomial():
    # reference: scipy.stats.binom tails of the count
    u = pcg(1).random(200000)
    u[:7] = 1e-6  # 7 values surely below 1e-5, plus the random ones
    r = check_tail_count(u, q=1e-5, side="lower")
    k = int(np.count_nonzero(u < 1e-5))
    p = lower_tail_probability(1e-5, 53)
    assert r.statistic == k and r.kind == "discrete"
    assert r.p_value == pytest.approx(stats.binom.sf(k - 1, u.size, p), rel=1e-10)
    assert r.p_left == pytest.approx(stats.binom.cdf(k, u.size, p), rel=1e-10)
    assert r.pooled == {"observed": k, "n": u.size, "p": p}


def test_upper_side_counts_values_near_one():
    u = pcg(2).random(100000)
    u[:50] = 1 - 1e-6
    r = check_tail_count(u, q=1e-5, side="upper")
    assert r.statistic == np.count_nonzero(u >= 1 - 1e-5) and r.p_value < 1e-40


def test_pooled_tail_counts_follow_their_law():
    # discrete calibration: 64 replicates of 2^17 uniforms, the pooled count against Binomial (fixed seeds)
    for side in ("lower", "upper"):
        rs = [check_tail_count(pcg(300 + i).random(1 << 17), q=1e-5, side=side) for i in range(64)]
        k, n, right, left = pool_binomial([r.pooled["observed"] for r in rs], [r.pooled["n"] for r in rs],
                                          rs[0].pooled["p"])
        assert min(right, left) > 1e-4


def test_clipping_is_caught_by_too_few_extremes():
    # uniforms kept inside [1e-4, 1 - 1e-4]: none beyond 1e-5 where 42 are expected; P(0) = e^-42
    u = np.clip(pcg(3).random(1 << 22), 1e-4, 1 - 1e-4)
    for side in ("lower", "upper"):
        r = check_tail_count(u, q=1e-5, side=side)
        assert r.statistic == 0 and r.p_left < 1e-15 and r.p_value == 1.0


def test_resolution_ladder():
    rng = pcg(4)
    w32 = rng.integers(0, 2**32, 4096, dtype=np.uint64).astype(np.float64) * 2.0**-32
    w16 = rng.integers(0, 2**16, 4096, dtype=np.uint64).astype(np.float64) * 2.0**-16
    f32 = rng.random(4096, dtype=np.float32).astype(np.float64)
    f64 = rng.random(4096)
    assert resolve_bits(w32, None) == (32, True)
    assert resolve_bits(w16, None) == (16, True)
    assert resolve_bits(f32, None) == (32, True)  # float32 grid 2^-24 lies on the 2^-32 grid
    assert resolve_bits(f64, None) == (53, True)
    assert resolve_bits(f64, 24) == (24, False)


def test_exact_endpoints_law():
    # 53-bit: a single 0.0 among n values has probability ~ n 2^-53 (exact Poisson tail, scipy reference)
    u = pcg(5).random(100000)
    assert check_exact_endpoints(u).p_value == 1.0
    u[3] = 0.0
    r = check_exact_endpoints(u)
    mu = u.size * 2.0**-53
    assert r.statistic == 1 and r.p_value == pytest.approx(stats.poisson.sf(0, mu), rel=1e-9)
    assert r.p_value < 1e-10
    # declared 32-bit resolution: one zero is a 2e-5 event, not evidence
    assert check_exact_endpoints(u, resolution_bits=32).p_value == pytest.approx(-math.expm1(-u.size * 2.0**-32), rel=1e-9)
    # closed interval (PIT values): 1.0 counts too
    u[4] = 1.0
    assert check_exact_endpoints(u, resolution_bits=53, closed=True).statistic == 2


def test_exact_endpoints_calibration_on_a_coarse_grid():
    # 16-bit uniforms: zeros ~ Poisson(n / 2^16); pooled over 40 replicates against Poisson (fixed seeds)
    rs = [check_exact_endpoints(pcg(400 + i).integers(0, 2**16, 1 << 16).astype(np.float64) * 2.0**-16)
          for i in range(40)]
    assert all(r.details["bits"] == 16 for r in rs)
    total, mu, right, left = pool_poisson([r.pooled["observed"] for r in rs], [r.pooled["mu"] for r in rs])
    assert mu == pytest.approx(40.0) and min(right, left) > 1e-4


def test_tail_defaults_follow_the_documented_rule():
    spec = load_all()["tail count"]
    assert spec.default_params(10000) == []
    got = spec.default_params(1 << 18)
    assert [(p["q"], p["side"]) for p in got] == [(1e-5, "lower"), (1e-5, "upper")]
    got = spec.default_params(4_000_000)
    assert {p["q"] for p in got} == {1e-5, 1e-7} and spec.kind == "discrete" and spec.both_tails
