"""Serial tests, non-overlapping and overlapping (Knuth TAOCP Vol. 2 §3.3.2 B; Good 1953)."""

from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from rngassay.checks.classic.serial import (
    bins_for,
    check_serial,
    check_serial_overlapping,
    nonoverlapping_counts,
    overlapping_counts,
)
from rngassay.checks.registry import REGISTRY
from rngassay.errors import InputError
from rngassay.generators import make_generator

E_BITS = Path(__file__).resolve().parents[3] / "reference_streams" / "e.bin"


def pcg(seed, n):
    return np.random.Generator(np.random.PCG64(seed)).random(n)


def bits_as_uniforms(bits):
    """Bit b -> uniform b/2 + 1/4, so that floor(2 u) = b (v = 2 bins reproduce the bits)."""
    return np.asarray(bits, dtype=np.float64) / 2 + 0.25


def test_nist_serial_example_first_difference():
    # NIST SP 800-22 Rev. 1a §2.11.8: eps = 0011011101, m = 3 -> del psi2_3 = 1.6, P1 = 0.808792
    # (check-values.md §1).  The same statistic: v = 2 bins, circular overlapping 3-tuples.
    u = bits_as_uniforms([int(c) for c in "0011011101"])
    r = check_serial_overlapping(u, d=3, v=2)
    assert r.statistic == pytest.approx(1.6, abs=1e-12)
    assert r.p_value == pytest.approx(0.808792, abs=1e-6)
    assert r.details["psi2_d"] == pytest.approx(2.8, abs=1e-12)  # §2.11.8: psi2_3 = 2.8
    assert r.details["psi2_d_minus_1"] == pytest.approx(1.2, abs=1e-12)  # psi2_2 = 1.2


def test_nist_appendix_b_e_serial_m16():
    # NIST SP 800-22 Rev. 1a Appendix B: first 10^6 bits of e, serial m = 16: P1 = 0.766182
    # (check-values.md §2; bits file described in reference_streams/README.md)
    bits = np.unpackbits(np.fromfile(E_BITS, dtype=np.uint8))
    r = check_serial_overlapping(bits_as_uniforms(bits), d=16, v=2)
    assert r.p_value == pytest.approx(0.766182, abs=1e-6)
    assert r.null == f"chi2(df={2**16 - 2**15})"


def test_nonoverlapping_matches_histogramdd_and_scipy():
    u = pcg(3, 30_000)
    r = check_serial(u, d=3, v=5)
    t = u.reshape(-1, 3)
    counts = np.histogramdd(t, bins=(5, 5, 5), range=[(0, 1)] * 3)[0].ravel()
    ref = stats.chisquare(counts)  # scipy.stats reference, 124 d.o.f.
    assert r.statistic == pytest.approx(ref.statistic, rel=1e-12)
    assert r.p_value == pytest.approx(ref.pvalue, rel=1e-9)
    assert r.details["tuples"] == 10_000


def test_overlapping_counts_brute_force():
    rng = np.random.Generator(np.random.PCG64(4))
    s = rng.integers(0, 3, 50).astype(np.int32)
    c = overlapping_counts(s, 3, 3)
    ref = np.zeros(27, np.int64)
    for i in range(50):  # the definition: circular 3-tuples, first symbol most significant
        ref[9 * s[i] + 3 * s[(i + 1) % 50] + s[(i + 2) % 50]] += 1
    assert np.array_equal(c, ref)
    c2 = nonoverlapping_counts(s, 2, 3)
    ref2 = np.bincount(3 * s[0:50:2] + s[1:50:2], minlength=9)
    assert np.array_equal(c2, ref2)


def test_randu_fails_in_three_dimensions():
    # RANDU: x_{k+2} = 6 x_{k+1} - 9 x_k (mod 2^31), so its triples lie on 15 planes
    # (Knuth §3.3.4; check-values.md §5).  Its outputs are < 2^31: scale by 2^-31 here so that
    # only the plane structure is tested, not the missing top bit.
    n = 2**18
    u_randu = make_generator("randu", 1).read(4 * n).view("<u4") * 2.0**-31
    u_pcg = pcg(2024, n)
    v = bins_for(n, 3)  # the default rule: 16 bins, 4096 cells, 64 per cell
    assert v == 16
    for f in (check_serial_overlapping, check_serial):
        bad = f(u_randu, d=3, v=v)
        good = f(u_pcg, d=3, v=v)
        assert bad.p_value < 1e-10
        assert good.p_value > 1e-3 and good.p_left > 1e-3
    # ... while in 2 dimensions RANDU looks fine at this resolution (pairs are not on few lines)
    assert check_serial_overlapping(u_randu, d=2, v=64).p_value > 1e-3


def test_power_lcg_low_bits():
    # low byte of an LCG mod 2^32 moved to the top: period 256 (Knuth §3.2.1.1, from memory)
    w = make_generator("lcg32", 1).read(4 * 50_000).view("<u4")
    u = (w & np.uint32(0xFF)) * 2.0**-8 + (w >> np.uint32(8)) * 2.0**-32
    assert check_serial(u, d=2, v=16).p_value < 1e-50
    assert check_serial_overlapping(u, d=2, v=16).p_value < 1e-50


def test_naive_overlapping_chi2_is_not_calibrated_but_first_difference_is():
    # why the first difference: the plain chi-square of overlapping tuples has the right mean
    # (v^d - 1) but about twice the variance (Good 1953), so its p-values pile up at both ends.
    # Seen here for v = 2, d = 3: variance ~34 instead of 14 over 400 fixed-seed replicates.
    v, d, n = 2, 3, 400
    naive, delta = [], []
    for s in range(400):
        u = pcg(s, n)
        c = overlapping_counts((u * v).astype(np.int32), d, v)
        naive.append(stats.chi2.sf(np.sum((c - n / v**d) ** 2) / (n / v**d), v**d - 1))
        delta.append(check_serial_overlapping(u, d=d, v=v).p_value)
    assert stats.kstest(naive, "uniform").pvalue < 1e-4
    assert stats.kstest(delta, "uniform").pvalue > 1e-3


@pytest.mark.parametrize("d,v", [(2, 8), (3, 4), (4, 2)])
def test_calibration(d, v):
    # 200 PCG64 replicates: right and left p-values uniform (KS p > 1e-3; fixed seeds)
    n = 20 * v**d
    ov = [check_serial_overlapping(pcg(100 + s, n), d=d, v=v) for s in range(200)]
    no = [check_serial(pcg(900 + s, d * n), d=d, v=v) for s in range(200)]
    for rs in (ov, no):
        assert stats.kstest([r.p_value for r in rs], "uniform").pvalue > 1e-3
        assert stats.kstest([r.p_left for r in rs], "uniform").pvalue > 1e-3


def test_bad_parameters():
    with pytest.raises(InputError):
        check_serial_overlapping(pcg(1, 100), d=1, v=4)
    with pytest.raises(InputError):
        check_serial(pcg(1, 100), d=30, v=4)


def test_registry_defaults():
    assert REGISTRY["serial"].default_params(50) == []
    p = REGISTRY["serial overlapping"].default_params(8 << 20)
    assert [(q["d"], q["v"]) for q in p] == [(2, 512), (3, 64), (4, 16)]
    for q in p:
        assert 8 << 20 >= 10 * q["v"] ** q["d"]
    p = REGISTRY["serial"].default_params(100_000)
    assert [(q["d"], q["v"]) for q in p] == [(2, 64), (3, 8)]
