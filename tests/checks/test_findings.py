"""Findings in words (rngassay.checks.findings): p-values against scipy.stats, power on reference generators
built from their published definitions, and calibration on sound streams.

Calibration design: a run reports a finding only at p <= 1e-6 / m (Bonferroni over its m tests), so a sound
stream shows any finding with probability at most 1e-6; the 50 sound streams below (fixed seeds) are
therefore all expected clean, and a false failure of that test has probability at most 5e-5.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from rngassay.checks import findings as F
from rngassay.generators import SHORT_PERIOD_BYTES, make_generator
from rngassay.generators.lagfib import LAGFIB_LONG, LAGFIB_SHORT
from rngassay.intake.formats import parse_format


def _vals(b: np.ndarray | bytes, fmt: str) -> np.ndarray:
    f = parse_format(fmt)
    raw = np.frombuffer(bytes(b), dtype=np.uint8)
    return raw if f.itemsize == 1 else raw.view(f.dtype)


def _diagnose(b, fmt: str):
    return F.diagnose(_vals(b, fmt), parse_format(fmt))[0]


def _one(found, kind: str, test: str):
    got = [f for f in found if f.kind == kind and f.test == test]
    assert len(got) == 1, [(f.kind, f.test, f.sentence) for f in found]
    return got[0]


# ------------------------------------------------------------------------------------------- calibration


@pytest.mark.parametrize("seed", range(50))
def test_sound_streams_have_no_findings(seed):
    """numpy default_rng (PCG64) with fixed seeds, 512 KiB each, in the formats the tool reads most."""
    rng = np.random.default_rng(20261203 + seed)
    fmt = ("u1", "<u4", "<u8", "<f8", "<u2")[seed % 5]
    if fmt == "<f8":
        vals = rng.random(1 << 16)
    else:
        vals = _vals(rng.bytes(1 << 19), fmt)
    found, m = F.diagnose(vals, parse_format(fmt))
    assert found == [], [f.sentence for f in found]
    assert m > 100  # the tests really ran


def test_sound_dice_text_have_no_findings():
    f = parse_format("text", "1:6")
    vals = np.random.default_rng(7).integers(1, 7, 200_000)
    assert F.diagnose(vals, f)[0] == []


# ------------------------------------------------------------------------------------------- p-values


def test_lane_frequency_p_is_scipy_binomtest():
    # reference: scipy.stats.binomtest (two-sided; for p = 1/2 the law is symmetric, so the doubled smaller
    # tail the tool uses is the same number)
    rng = np.random.default_rng(11)
    w = rng.integers(0, 2**32, 4096, dtype=np.uint64)
    w[rng.random(4096) < 0.1] |= np.uint64(1 << 5)  # bit 5 set more often than half
    lanes = F.Lanes(w, 32, "32-bit word", "test")
    found, tests = F.lane_findings(lanes)
    assert tests == 64
    f5 = next(f for f in found if f.test == "frequency" and f.where["lane"] == 5)
    c = int(np.count_nonzero(w & np.uint64(1 << 5)))
    assert f5.stats["ones"] == c
    assert f5.p_value == pytest.approx(stats.binomtest(c, 4096, 0.5).pvalue, rel=1e-9)


def test_equal_at_lag_p_is_scipy_binom_sf():
    rng = np.random.default_rng(12)
    x = rng.integers(0, 2**32, 1 << 14, dtype=np.uint64)
    x[7::9] = x[0:-7:9][: x[7::9].size]  # every 9th value repeats the one 7 before it
    found, _ = F.lag_findings(x, 2.0**32, 32)
    eq = next(f for f in found if f.test == "equal")
    assert eq.where["lag"] == 7
    c = int(np.count_nonzero(x[7:] == x[:-7]))
    assert eq.stats["count"] == c
    # reference: scipy.stats.binom.sf(c - 1, n - L, 2^-32), the exact right tail
    assert eq.p_value == pytest.approx(max(stats.binom.sf(c - 1, x.size - 7, 2.0**-32), 2.2250738585072014e-308))


def test_serial_correlation_z_and_p_against_numpy_and_scipy():
    rng = np.random.default_rng(13)
    y = rng.integers(0, 2**32, 1 << 14).astype(np.float64)
    x = np.floor((y + np.roll(y, 3)) / 2).astype(np.uint64)  # correlation 1/2 at lag 3
    found, _ = F.lag_findings(x, 2.0**32, 32)
    c = next(f for f in found if f.test == "correlation")
    assert c.where["lag"] == 3
    v = x.astype(np.float64) - x.mean()
    z = float(np.dot(v[3:], v[:-3])) / (float(np.dot(v, v)) / v.size) / math.sqrt(v.size - 3)
    assert c.stats["z"] == pytest.approx(z, rel=1e-9)
    assert c.stats["correlation"] == pytest.approx(0.5, abs=0.03)
    assert c.p_value == pytest.approx(max(2 * stats.norm.sf(abs(z)), 2.2250738585072014e-308), rel=1e-6)


def test_relation_counts_and_p_against_scipy():
    rng = np.random.default_rng(14)
    x = rng.integers(0, 2**32, 1 << 13, dtype=np.uint64)
    idx = np.arange(40, x.size, 50)  # a few positions tied as x[i] = x[i-3] xor x[i-11]
    x[idx] = x[idx - 3] ^ x[idx - 11]
    found, _ = F.lag_findings(x, 2.0**32, 32)
    r = next(f for f in found if f.test == "relation")
    assert r.where["lags"] == [3, 11] and "xor" in r.where["relation"]
    c = int(np.count_nonzero(x[11:] == (x[8:-3] ^ x[:-11])))
    assert r.stats["count"] == c
    assert r.p_value == pytest.approx(stats.binom.sf(c - 1, x.size - 11, 2.0**-32), rel=1e-9)


def test_grid_p_is_the_exact_law():
    # exact law (fraction grid check): P(all n i.i.d. uniforms on the 2^-53 grid lie on 2^-r) with one bit of
    # tolerance = 2^(-n (52 - r)); n = 40 values on a 2^-50 grid: 2^-80
    u = np.random.default_rng(15).integers(0, 2**50, 40) * 2.0**-50
    g = F.grid_finding(u, parse_format("<f8"))
    assert g is not None and g.where == {"grid_bits": 50, "claimed_bits": 53}
    assert g.p_value == pytest.approx(2.0**-80, rel=1e-12)


# ------------------------------------------------------------------------------------------- power


def test_lcg32_low_lanes_have_period_two_to_the_k_plus_one():
    # published fact (Knuth, TAOCP vol. 2, 3rd ed., section 3.2.1.1, from memory): bit k of an LCG modulo
    # 2^32 has period at most 2^(k+1); with an odd increment and a = 1 mod 4 exactly 2^(k+1)
    g = make_generator("lcg32", 5)
    found = _diagnose(g.read(1 << 21), "<u4")
    lane = _one(found, "lane", "periodic")
    lanes, periods = lane.stats["lanes"], lane.stats["periods"]
    assert lanes[0] == 0 and periods[0] == 2 and lane.exact
    assert all(p == 2 ** (k + 1) for k, p in zip(lanes, periods))
    assert lanes == list(range(len(lanes))) and len(lanes) >= 17  # every lane whose period fits twice in 2^19
    assert "bit 0 every 2" in lane.sentence


def test_short_period_generator_period_found_exactly():
    g = make_generator("short-period", 9)
    found = _diagnose(g.read(2 * SHORT_PERIOD_BYTES + 4096), "u1")
    per = _one(found, "period", "period")
    assert per.where == {"period": SHORT_PERIOD_BYTES, "start": 0, "unit": "byte"} and per.exact
    assert not [f for f in found if f.kind == "lag"]


def test_period_with_a_prefix_found_with_its_start():
    rng = np.random.default_rng(16)
    block = rng.bytes(1000)
    data = rng.bytes(123) + block * 40
    per = _one(_diagnose(data, "u1"), "period", "period")
    assert per.where["period"] == 1000
    # the prefix's last byte equals the block's last byte with probability 1/256: then S is one earlier
    s = 123
    while s > 0 and data[s - 1] == data[s - 1 + 1000]:
        s -= 1
    assert per.where["start"] == s


def test_float32_resolution_claimed_as_f8_grid_found():
    w = np.random.default_rng(17).integers(0, 2**32, 1 << 16, dtype=np.uint64)
    u = w * 2.0**-32  # 32-bit uniforms written as doubles
    g = _one(F.diagnose(u, parse_format("<f8"))[0], "grid", "grid")
    assert g.where == {"grid_bits": 32, "claimed_bits": 53}


def test_lcg48_doubles_grid_found():
    g = make_generator("lcg48-doubles", 3)
    assert _one(_diagnose(g.read(1 << 20), "<f8"), "grid", "grid").where["grid_bits"] == 48


def test_lagfib_lags_found():
    g = make_generator("lagfib", 4)
    found = _diagnose(g.read(1 << 21), "<u4")
    rel = _one(found, "lag", "relation")
    assert rel.where["lags"] == [LAGFIB_SHORT, LAGFIB_LONG]
    assert rel.where["relation"] == f"x[i] = x[i-{LAGFIB_SHORT}] + x[i-{LAGFIB_LONG}]"
    # the lowest bit is an LFSR with primitive polynomial x^17 + x^12 + 1: period 2^17 - 1 (generator docstring)
    lane = _one(found, "lane", "periodic")
    assert lane.stats["lanes"][0] == 0 and lane.stats["periods"][0] == 2**17 - 1


def test_stuck_bit_found_exactly():
    w = np.random.default_rng(18).integers(0, 2**32, 1 << 16, dtype=np.uint32) | np.uint32(1)
    lane = _one(_diagnose(w.astype("<u4").tobytes(), "<u4"), "lane", "constant")
    assert lane.where["lane"] == 0 and lane.exact
    assert lane.evidence == "bit 0 of every <u4 value is 1 in all 65536 <u4 values"


def test_randu_constant_lanes():
    # RANDU x <- 65539 x mod 2^31 with an odd seed: x = 1 or 3 mod 8 (65539 = 3 mod 8), so bit 0 is 1 and bit 2
    # is 0 in every word, and bit 31 is 0 (31-bit values in 32-bit words)
    found = _diagnose(make_generator("randu", 1).read(1 << 20), "<u4")
    lane = _one(found, "lane", "constant")
    assert lane.stats["lanes"] == [0, 2, 31] and lane.stats["ones"][0] > 0 and lane.stats["ones"][1:] == [0, 0]


def test_die_with_a_short_period_found_in_values():
    f = parse_format("text", "1:6")
    rng = np.random.default_rng(19)
    vals = np.concatenate([rng.integers(1, 7, 50), np.tile(rng.integers(1, 7, 777), 20)])
    per = _one(F.diagnose(vals, f)[0], "period", "period")
    assert per.where["period"] == 777 and per.where["unit"] == "value" and per.where["start"] <= 50


def test_ranged_words_are_read_as_their_range_not_as_floats():
    # words declaring 1..2^31-2 (a multiplicative generator's outputs): the lag tests take x - LO in K = 2^31 - 2
    # values; before, the search treated them as floats and overflowed a cast
    import warnings

    from rngassay.checks.findings import symbols
    from rngassay.intake.formats import parse_format

    fmt = parse_format("<u4", "1:2147483646")
    x = np.array([1, 2, 2147483646, 77], dtype="<u4")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        got, K, b = symbols(x, fmt)
    assert got.tolist() == [0, 1, 2147483645, 76] and K == 2147483646.0 and b is None
    got, K, b = symbols(np.array([5, 6], dtype="<u4"), parse_format("<u4", "4:65539"))
    assert got.tolist() == [1, 2] and K == 65536.0 and b == 16
