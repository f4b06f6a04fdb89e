"""Repeat detection (content-anchored windows, birthday bound on a false alarm)."""

import itertools
import math
from fractions import Fraction

import numpy as np
import pytest

from rngassay.checks.classic import repeats as rmod
from rngassay.checks.classic.repeats import check_repeats, find_repeats, log10_false_alarm_bound
from rngassay.checks.registry import REGISTRY
from rngassay.errors import InputError
from rngassay.generators import SHORT_PERIOD_BYTES, make_generator

MiB = 1 << 20


@pytest.mark.parametrize("q,w,d", [(2, 3, 1), (2, 3, 2), (3, 2, 1), (2, 4, 1), (2, 4, 3)])
def test_overlapping_windows_equal_with_probability_q_to_minus_w(q, w, d):
    # the lemma behind the bound: windows of w i.i.d. uniform symbols (alphabet q) at distance d,
    # overlapping or not, are equal with probability exactly q^-w (exhaustive enumeration)
    L = w + d
    hits = sum(1 for s in itertools.product(range(q), repeat=L) if s[:w] == s[d : d + w])
    assert Fraction(hits, q**L) == Fraction(1, q**w)


def test_false_alarm_bound_formula():
    # C(L, 2) 2^(-8w) with L = n - w + 1, against exact integer arithmetic
    for n, w in ((64 * MiB, 64), (3 * MiB, 64), (1000, 64), (10**9, 128)):
        L = n - w + 1
        exact = math.log10(math.comb(L, 2)) - 8 * w * math.log10(2)
        assert log10_false_alarm_bound(n, w) == pytest.approx(exact, abs=1e-9)
    assert log10_false_alarm_bound(64 * MiB, 64) < -138  # ~ 2^-461


def test_short_period_is_flagged():
    b = make_generator("short-period", 0).read(3 * MiB)
    r = check_repeats(b)
    assert r.p_value < 1e-10 and r.statistic > 1000
    assert r.details["period_bytes"] == SHORT_PERIOD_BYTES == 1 << 20
    assert r.details["first_copy_at"] >= SHORT_PERIOD_BYTES
    assert r.pooled["observed"] == int(r.statistic)


def test_pcg64_has_no_repeats():
    b = make_generator("pcg64", 0).read(32 * MiB)
    r = check_repeats(b)
    assert r.statistic == 0 and r.p_value == 1.0 and r.details["repeats"] == 0
    assert r.details["windows"] > 32 * MiB // 200  # anchors every ~64 bytes after each 64-byte window


def test_periods_at_any_offset_and_recycled_buffers():
    rng = np.random.Generator(np.random.PCG64(1))
    base = rng.integers(0, 256, 1_000_003, dtype=np.uint8)
    x = np.concatenate([base] * 4)[:3_500_000]  # period not a multiple of anything
    d = find_repeats(x)
    assert d["repeats"] > 1000 and d["period_bytes"] == 1_000_003
    # one 4 KiB buffer reused at an unrelated offset
    y = rng.integers(0, 256, 8 * MiB, dtype=np.uint8)
    y[5_000_001 : 5_000_001 + 4096] = y[123_457 : 123_457 + 4096]
    d = find_repeats(y)
    assert d["repeats"] >= 10 and d["period_bytes"] == 5_000_001 - 123_457
    # degenerate streams without content anchors: the grid anchors still see them
    assert find_repeats(np.zeros(MiB, np.uint8))["repeats"] > 100
    d = find_repeats(np.tile(y[:24], 50_000))
    assert d["repeats"] > 100 and d["period_bytes"] % 24 == 0


def test_hash_collisions_do_not_count_as_repeats():
    # force every window into one hash group: byte-for-byte verification keeps the count at 0
    b = np.random.Generator(np.random.PCG64(2)).integers(0, 256, 1 << 16, dtype=np.uint8)
    starts, _ = rmod._windows(b, rmod.GEAR, 64, 6, 4096)
    hashes = np.zeros(starts.size, dtype=np.uint64)
    order = np.arange(starts.size)
    reps, dist, unresolved = rmod._repeats(b, starts, hashes, order, 64, 64)
    assert reps == 0 and dist.size == 0 and unresolved == starts.size - 65


def test_windows_do_not_overlap_and_fit():
    b = np.random.Generator(np.random.PCG64(3)).integers(0, 256, 1 << 18, dtype=np.uint8)
    for w in (64, 256):
        starts, _ = rmod._windows(b, rmod.GEAR, w, 6, 4096)
        assert np.all(np.diff(starts) > w) and starts[-1] + w <= b.size


def test_registry_and_errors():
    spec = REGISTRY["repeats"]
    assert spec.view == "bytes" and spec.kind == "discrete" and not spec.both_tails
    assert spec.default_params(1000) == []
    assert spec.default_params(MiB) == [{"w": 64, "n": MiB}]
    with pytest.raises(InputError):
        check_repeats(np.zeros(100, np.uint8))
    with pytest.raises(InputError):
        check_repeats(np.zeros(1000, np.uint8), w=100)
    with pytest.raises(InputError):
        check_repeats(np.zeros(1000, np.uint32))
