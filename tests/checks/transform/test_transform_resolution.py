"""Resolution check: expected repeats, the float32 figure of check-values.md §7, calibration, power."""

import mpmath
import numpy as np
import pytest
from scipy import stats

import rngassay
from rngassay.checks.transform._common import expected_repeats
from rngassay.checks.transform.resolution import check_float_resolution, count_repeats
from rngassay.generators import make_generator
from rngassay.stats import pool_poisson


def pcg(seed):
    return np.random.Generator(np.random.PCG64(seed))


@pytest.mark.parametrize("n,bits", [(100_000, 24), (262_144, 32), (100_000, 53), (1 << 20, 16), (5, 53)])
def test_expected_repeats_exact_formula(n, bits):
    # Knuth TAOCP Vol. 2 §3.3.2 I: E[collisions] = n - m (1 - (1 - 1/m)^n), evaluated with mpmath (60 digits)
    mpmath.mp.dps = 60
    m = mpmath.mpf(2) ** bits
    exact = n - m * (1 - (1 - 1 / m) ** n)
    assert expected_repeats(n, bits) == pytest.approx(float(exact), rel=1e-9)


def test_float32_figure_of_check_values():
    # check-values.md §7: among 1e5 float32 draws about n(n-1)/2 / 2^24 ~ 298 repeats; 53-bit about 5.5e-7
    n = 100_000
    pairs = n * (n - 1) / 2 / 2**24  # ~298, the figure check-values.md gives
    # our exact mean counts repeated values (n - distinct): below the pair count by the triples, ~ n^3 / (6 m^2)
    assert expected_repeats(n, 24) == pytest.approx(pairs - n**3 / (6 * 2**48), rel=1e-4)
    assert expected_repeats(n, 53) == pytest.approx(5.55e-7, rel=1e-2)
    # observed repeats among 1e5 float32 draws: within a generous Poisson band (6 sd; fixed seed)
    c = count_repeats(pcg(1).random(n, dtype=np.float32).astype(np.float64))
    mu = expected_repeats(n, 24)
    assert abs(c - mu) < 6 * np.sqrt(mu)


def test_float32_grade_uniforms_are_caught_and_doubles_are_not():
    f32 = pcg(2).random(1 << 17, dtype=np.float32).astype(np.float64)
    r = check_float_resolution(f32)
    assert r.details["bits"] == 32 and r.p_value < 1e-10  # about 512 repeats where 2 are expected
    r = check_float_resolution(pcg(3).random(1 << 17))
    assert r.details["bits"] == 53 and r.statistic == 0 and r.p_value == 1.0
    assert check_float_resolution(f32, resolution_bits=24).p_value > 1e-6  # judged at its own resolution it is fine


def test_pooled_repeats_on_a_32_bit_grid_follow_poisson():
    # discrete calibration: 50 replicates of 2^17 32-bit uniforms (E ~ 2 each); pooled count vs Poisson
    rs = []
    for i in range(50):
        w = pcg(500 + i).integers(0, 2**32, 1 << 17, dtype=np.uint64)
        rs.append(check_float_resolution(w.astype(np.float64) * 2.0**-32))
    total, mu, right, left = pool_poisson([r.pooled["observed"] for r in rs], [r.pooled["mu"] for r in rs])
    assert mu == pytest.approx(50 * expected_repeats(1 << 17, 32))
    assert min(right, left) > 1e-4


def test_too_few_repeats_of_a_full_period_generator():
    # a 32-bit LCG never repeats within its period: 2^20 outputs have no repeat where ~128 are expected
    w = make_generator("lcg32", 1).read(4 << 20).view("<u4").astype(np.float64) * 2.0**-32
    r = check_float_resolution(w)
    assert r.statistic == 0 and r.p_left < 1e-40


def test_p_values_against_scipy_poisson():
    u = pcg(4).random(1000, dtype=np.float32).astype(np.float64)
    u[10:20] = u[0]  # ten forced repeats
    r = check_float_resolution(u, resolution_bits=53)
    c = count_repeats(u)
    mu = expected_repeats(u.size, 53)
    assert r.p_value == pytest.approx(stats.poisson.sf(c - 1, mu), rel=1e-9)  # scipy.stats reference


@pytest.fixture(scope="module")
def float_files(tmp_path_factory):
    d = tmp_path_factory.mktemp("res")
    f32 = d / "float32_as_f8.bin"
    f64 = d / "doubles.bin"
    rng = pcg(20)
    rng.random(1 << 20, dtype=np.float32).astype("<f8").tofile(f32)  # float32-grade values stored as <f8
    rng.random(1 << 20).astype("<f8").tofile(f64)
    return f32, f64


def test_power_requirement_float32_as_f8_fails_at_8_mib(float_files):
    # brief requirement: float32-grade uniforms given as <f8 fail within 8 MiB (p < 1e-10); sound doubles pass
    f32, f64 = float_files
    r = rngassay.assay(str(f32), fmt="<f8", budget="8MiB", checks=["transform"], workers=1)
    assert r.verdict == "fail" and min(c.p_value for c in r.checks) < 1e-10
    r = rngassay.assay(str(f64), fmt="<f8", budget="8MiB", checks=["transform"], workers=1)
    assert r.verdict == "pass" and min(c.p_value for c in r.checks) > 1e-6
