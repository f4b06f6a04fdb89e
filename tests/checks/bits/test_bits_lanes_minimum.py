"""The lane minimum-linear-complexity check: one block per lane is enough to expose mt19937."""

import numpy as np

from rngassay import api
from rngassay.checks.bits.complexity import linear_complexity_lanes_minimum


def test_mt19937_lanes_have_complexity_19937():
    # Matsumoto & Nishimura (1998): MT19937's output bits satisfy a linear recurrence of degree 19937
    # over GF(2), so every bit lane's linear complexity is at most 19937 (exactly 19937 here).
    bg = np.random.MT19937()
    bg._legacy_seeding(5489)
    words = bg.random_raw(50_000).astype(np.uint32)
    r = linear_complexity_lanes_minimum(words, M=50_000)
    assert r.details["min_L_per_lane"] == [19937] * 32
    assert r.p_value < 1e-300  # a random 50,000-bit block has L near 25,000 (SP 800-22 §3.10)


def test_sound_words_are_not_flagged():
    words = np.random.PCG64(7).random_raw(50_000).astype(np.uint64)
    w32 = words.view(np.uint32)[:50_000]
    r = linear_complexity_lanes_minimum(w32, M=50_000)
    assert min(r.details["min_L_per_lane"]) > 24_900  # SP 800-22 §3.10: |L - M/2| > k has prob ~ 2^-2k
    assert r.p_value > 1e-6


def test_battery_catches_mt19937_at_4mib_and_passes_pcg64():
    # fixed seeds; mt19937's failure is at p < 1e-300, pcg64's minimum is a chance event
    bad = api.assay(gen="mt19937", budget="4MiB", workers=1, checks=["linear complexity lanes minimum"])
    assert bad.verdict == "fail" and bad.checks[0].p_value < 1e-10
    good = api.assay(gen="pcg64", seed=3, budget="4MiB", workers=1, checks=["linear complexity lanes minimum"])
    assert good.verdict == "pass"
