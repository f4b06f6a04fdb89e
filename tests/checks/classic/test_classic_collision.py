"""Collision test (Knuth TAOCP Vol. 2 §3.3.2 I)."""

from fractions import Fraction

import numpy as np
import pytest
from scipy import stats

from rngassay.checks.classic.collision import (
    _conv_power,
    check_collision,
    collision_counts,
    collision_mean,
    collision_pmf,
    collision_sum_tails,
    collision_tails,
    collision_variance,
)
from rngassay.checks.registry import REGISTRY
from rngassay.errors import InputError


def stirling2(n, k):
    s = [[0] * (k + 1) for _ in range(n + 1)]
    s[0][0] = 1
    for i in range(1, n + 1):
        for j in range(1, min(i, k) + 1):
            s[i][j] = j * s[i - 1][j] + s[i - 1][j - 1]
    return s[n][k]


def knuth_closed_form(c, n, m):
    """Knuth §3.3.2 I: P(c collisions) = m(m-1)...(m-n+c+1)/m^n * S(n, n-c) (check-values.md §5: Stirling numbers)."""
    occupied = n - c
    falling = 1
    for i in range(occupied):
        falling *= m - i
    return Fraction(falling * stirling2(n, occupied), m**n)


@pytest.mark.parametrize("n,m", [(12, 50), (30, 1000), (40, 64)])
def test_pmf_matches_stirling_closed_form(n, m):
    p = collision_pmf(n, m)
    for c in range(n):
        exact = knuth_closed_form(c, n, m)
        if exact > Fraction(1, 10**280):
            assert p[c] == pytest.approx(float(exact), rel=1e-11, abs=0), c
    assert p.sum() == pytest.approx(1.0, abs=1e-13)


def test_knuth_table_2_20_urns_2_14_balls():
    # Knuth §3.3.2 I, m = 2^20 urns, n = 2^14 balls [memory]: P(collisions <= c) for
    # c = 101, 108, 119, 126, 134, 145, 153 is .009, .043, .244, .476, .742, .946, .989 (3 decimals).
    table = {101: 0.009, 108: 0.043, 119: 0.244, 126: 0.476, 134: 0.742, 145: 0.946, 153: 0.989}
    for c, pr in table.items():
        _, left = collision_tails(c, 1 << 14, 1 << 20)
        assert left == pytest.approx(pr, abs=5e-4), c


def test_mean_variance_closed_forms():
    # E[C] = n - m(1 - (1 - 1/m)^n) (expected empty urns: m (1-1/m)^n; common practice), and the variance
    # of the number of empty urns; compared with the moments of the exact law
    for n, m in ((1 << 14, 1 << 20), (200, 1000), (50, 60)):
        p = collision_pmf(n, m)
        c = np.arange(p.size)
        mu = float((p * c).sum())
        var = float((p * (c - mu) ** 2).sum())
        assert collision_mean(n, m) == pytest.approx(mu, rel=1e-10)
        assert collision_variance(n, m) == pytest.approx(var, rel=1e-7)
    # Knuth's approximation n^2/(2m) = 128 for the default sizes
    assert collision_mean(1 << 14, 1 << 20) == pytest.approx(128, rel=0.01)


def test_saddlepoint_against_exact_convolution():
    # Lugannani-Rice (Daniels 1987) on the exact law vs the exact 16-fold convolution, both tails,
    # from the centre to 1e-150
    n, m, k = 1 << 14, 1 << 20, 16
    q, off = _conv_power(collision_pmf(n, m), k)
    for s in (1000, 1600, 1900, 2030, 2040, 2100, 2300, 2600, 3500):
        i = s - off
        ex_r, ex_l = q[i:].sum(), q[: i + 1].sum()
        sr, sl = collision_sum_tails(s, k, n, m, method="saddlepoint")
        assert sr == pytest.approx(ex_r, rel=1e-3), s
        assert sl == pytest.approx(ex_l, rel=1e-3), s
    # "auto" is exact at this size
    assert collision_sum_tails(2100, k, n, m) == (pytest.approx(q[2100 - off:].sum(), rel=1e-12),
                                                  pytest.approx(q[: 2101 - off].sum(), rel=1e-12))


def test_counts_match_set_reference():
    rng = np.random.Generator(np.random.PCG64(4))
    u = rng.random(3 * 1000 * 2 + 5)
    got = collision_counts(u, d=64, t=2, balls=1000)
    for s in range(3):
        block = u[s * 2000 : (s + 1) * 2000].reshape(1000, 2)
        cells = np.floor(block[:, 0] * 64) + 64 * np.floor(block[:, 1] * 64)
        assert got[s] == 1000 - np.unique(cells).size


def test_check_result_fields():
    u = np.random.Generator(np.random.PCG64(5)).random((1 << 14) * 3 + 7)
    r = check_collision(u)
    assert r.kind == "discrete" and r.n == 3 * (1 << 14)
    assert r.name == "collision d=1048576 t=1 balls=16384"
    assert r.details["samples"] == 3
    right, left = collision_sum_tails(int(r.statistic), 3, 1 << 14, 1 << 20)
    assert (r.p_value, r.p_left) == (right, left)
    assert r.pooled["observed"] == int(r.statistic)
    assert r.pooled["mu"] == pytest.approx(3 * collision_mean(1 << 14, 1 << 20))


@pytest.mark.slow
def test_calibration_pcg64_exact_law():
    # discrete statistic: 300 single-sample counts (2^14 balls, 2^20 urns, t = 2) from PCG64 against
    # the exact law, chi-square on classes with expected >= 10, p > 1e-3; and their total against the
    # exact law of the sum (saddlepoint), two-sided p > 1e-3 (fixed seed)
    rng = np.random.Generator(np.random.PCG64(2024))
    n, m = 1 << 14, 1 << 20
    counts = np.array([check_collision(rng.random(2 * n), d=1024, t=2).statistic for _ in range(300)], int)
    p = collision_pmf(n, m)
    cdf = np.cumsum(p)
    inner = sorted({int(np.searchsorted(cdf, q)) + 1 for q in np.arange(1, 10) / 10})  # ~ deciles
    edges = [0, *inner, n + 1]
    obs = np.array([np.sum((counts >= a) & (counts < b)) for a, b in zip(edges[:-1], edges[1:])])
    exp = np.array([p[a:b].sum() for a, b in zip(edges[:-1], edges[1:])]) * counts.size
    assert exp.min() >= 10
    assert stats.chisquare(obs, exp).pvalue > 1e-3
    right, left = collision_sum_tails(int(counts.sum()), counts.size, n, m)
    assert min(1.0, 2 * min(right, left)) > 1e-3


def test_detects_too_many_and_too_few_collisions():
    rng = np.random.Generator(np.random.PCG64(6))
    # only 2^18 distinct values: 4x the collisions of 2^20 urns
    u = np.floor(rng.random(1 << 16) * 2**18) / 2**18
    r = check_collision(u)
    assert r.p_value < 1e-10 and r.p_left > 0.5
    # a Weyl sequence frac(i * golden ratio) spreads too evenly: far too few collisions
    w = np.mod(np.arange(1 << 16) * 0.6180339887498949, 1.0)
    r = check_collision(w)
    assert r.p_left < 1e-10 and r.p_value > 0.5


def test_registry_defaults_and_errors():
    spec = REGISTRY["collision"]
    assert spec.view == "uniforms" and spec.kind == "discrete" and spec.both_tails
    assert spec.default_params((1 << 14) - 1) == []
    ps = spec.default_params(1 << 19)
    assert {(p["d"], p["t"]) for p in ps} == {(1 << 20, 1), (1 << 10, 2), (1 << 5, 4), (2, 20)}
    for p in ps:
        assert p["n"] % (p["balls"] * p["t"]) == 0 and spec.values_needed(p) <= 1 << 19
        assert p["d"] ** p["t"] == 1 << 20
    with pytest.raises(InputError):
        check_collision(np.zeros(100))
    with pytest.raises(InputError):
        check_collision(np.zeros(1 << 15), d=1)
    with pytest.raises(InputError):
        check_collision(np.zeros(1 << 15), d=1 << 20, t=2)
