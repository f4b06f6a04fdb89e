"""Equidistribution, byte and 16-bit frequency checks (Knuth TAOCP Vol. 2 §3.3.2 A)."""

import numpy as np
import pytest
from scipy import stats

from rngassay.checks.classic.frequency import (
    check_byte_frequency,
    check_equidistribution,
    check_u16_frequency,
)
from rngassay.checks.registry import REGISTRY
from rngassay.errors import InputError
from rngassay.generators import make_generator


def pcg(seed, n):
    return np.random.Generator(np.random.PCG64(seed)).random(n)


def pcg_bytes(seed, n):
    return np.random.Generator(np.random.PCG64(seed)).integers(0, 256, n, dtype=np.uint8)


def test_equidistribution_matches_scipy_chisquare():
    u = pcg(1, 5000)
    r = check_equidistribution(u, d=16)
    counts = np.histogram(u, bins=16, range=(0.0, 1.0))[0]
    ref = stats.chisquare(counts)  # scipy.stats reference: Pearson chi-square, 15 d.o.f.
    assert r.statistic == pytest.approx(ref.statistic, rel=1e-12)
    assert r.p_value == pytest.approx(ref.pvalue, rel=1e-9)
    assert r.p_left == pytest.approx(stats.chi2.cdf(ref.statistic, 15), rel=1e-9)
    assert r.null == "chi2(df=15)"
    assert r.name == "equidistribution d=16"


def test_equidistribution_chi2_percentage_point():
    # d = 11 bins with E = 10000 values each and deviations +-1, +-1, +-2, +-200, +-227, 0:
    # X2 = 2 (1 + 1 + 4 + 40000 + 51529) / 10000 = 18.307, the upper 5% point of chi2 with 10 d.o.f.
    # (Abramowitz & Stegun table 26.8; check-values.md §6) -> right tail 0.05.
    dev = np.array([1, -1, 1, -1, 2, -2, 200, -200, 227, -227, 0])
    counts = 10_000 + dev
    u = np.repeat((np.arange(11) + 0.5) / 11, counts)
    r = check_equidistribution(u, d=11)
    assert r.statistic == pytest.approx(18.307, abs=1e-9)
    assert r.p_value == pytest.approx(0.05, abs=2e-5)
    assert r.p_left == pytest.approx(0.95, abs=2e-5)


def test_byte_frequency_counts_and_scipy():
    b = pcg_bytes(2, 100_000)
    r = check_byte_frequency(b)
    ref = stats.chisquare(np.bincount(b, minlength=256))  # scipy.stats reference
    assert r.statistic == pytest.approx(ref.statistic, rel=1e-12)
    assert r.p_value == pytest.approx(ref.pvalue, rel=1e-9)
    assert r.null == "chi2(df=255)"


def test_u16_frequency_is_little_endian_byte_pairs():
    # every 16-bit value exactly 11 times, except value 0x0201 (bytes 01 02) 12 times and
    # 0x0102 (bytes 02 01) 10 times: only the little-endian reading sees that pair of cells
    vals = np.repeat(np.arange(65536, dtype=np.uint16), 11)
    vals = np.concatenate([vals[vals != 0x0102], np.full(10, 0x0102, np.uint16), np.array([0x0201], np.uint16)])
    b = vals.astype("<u2").view(np.uint8)
    r = check_u16_frequency(b)
    assert r.statistic == pytest.approx((1 + 1) / 11)  # two cells off by one, E = 11
    assert r.details["commonest"] == [0x0201, 12]
    assert r.details["rarest"] == [0x0102, 10]


def test_too_little_data_is_input_error():
    with pytest.raises(InputError):
        check_u16_frequency(np.zeros(1000, np.uint8))
    with pytest.raises(InputError):
        check_equidistribution(np.zeros(10), d=16)


def test_calibration_equidistribution_and_bytes():
    # 200 PCG64 replicates each: p-values uniform, KS p > 1e-3 (a false failure has probability 1e-3
    # for a correct check; the seeds are fixed so the outcome is reproducible)
    p_eq = [check_equidistribution(pcg(s, 3000), d=16).p_value for s in range(200)]
    p_eq_left = [check_equidistribution(pcg(s, 3000), d=16).p_left for s in range(200)]
    p_b = [check_byte_frequency(pcg_bytes(1000 + s, 20_000)).p_value for s in range(200)]
    assert stats.kstest(p_eq, "uniform").pvalue > 1e-3
    assert stats.kstest(p_eq_left, "uniform").pvalue > 1e-3
    assert stats.kstest(p_b, "uniform").pvalue > 1e-3


def test_calibration_u16():
    p = [check_u16_frequency(pcg_bytes(5000 + s, 2 * 65536 * 5)).p_value for s in range(200)]
    assert stats.kstest(p, "uniform").pvalue > 1e-3


def test_power_randu_top_bit_and_lcg_low_bits():
    # RANDU words are < 2^31, so w * 2^-32 never reaches 0.5 (Knuth §3.3.4; check-values.md §5)
    w = make_generator("randu", 1).read(4 * 10_000).view("<u4")
    assert check_equidistribution(w * 2.0**-32, d=16).p_value < 1e-100
    # the low 16 bits of an LCG mod 2^32 have period 2^16 (Knuth §3.2.1.1, from memory): four full
    # periods are perfectly equidistributed -- a fit too good, seen in the left tail
    w = make_generator("lcg32", 1).read(4 * 2**18).view("<u4")
    r = check_equidistribution((w & np.uint32(0xFFFF)) * 2.0**-16, d=16)
    assert r.statistic == 0.0 and r.p_left < 1e-100


def test_power_biased_bytes():
    # bits with P(1) = 1/2 + 1/1024: byte values are no longer equally likely; noncentrality
    # about 3e-5 per byte, so 16 MiB gives ~500 on 255 d.o.f.
    b = make_generator("biased", 1).read(16 << 20)
    assert check_byte_frequency(b).p_value < 1e-20
    # the 16-bit version on lcg32 bytes: the low half-word of every word runs through all 2^16
    # values once per period, so half the pairs are perfectly even: a fit far too good
    b = make_generator("lcg32", 1).read(4 << 20)
    assert check_u16_frequency(b).p_left < 1e-20


def test_registry_defaults_scale_with_data():
    spec = REGISTRY["equidistribution"]
    assert spec.default_params(100) == []
    assert spec.default_params(10_000) == [{"n": 10_000, "d": 16}, {"n": 10_000, "d": 256}]
    big = spec.default_params(8 << 20)
    assert big[-1]["d"] == 65536
    assert REGISTRY["16-bit frequency"].default_params(1000) == []
    assert REGISTRY["16-bit frequency"].default_params(2_000_001) == [{"n": 2_000_000}]
    for key in ("equidistribution", "byte frequency", "16-bit frequency"):
        s = REGISTRY[key]
        assert s.family == "classic" and s.both_tails and s.kind == "continuous"
        for p in s.default_params(4 << 20):
            assert s.values_needed(p) == p["n"]
