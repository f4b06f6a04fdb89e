"""The whole battery on the built-in generators (fixed seeds): every flawed one fails, every sound one passes.

Flawed generators must fail at p < 1e-10 on some check -- far beyond any chance effect; sound ones must
pass (run verdict not `fail`, which has probability at most alpha = 0.001 per run by construction, and these
seeds are fixed, so the outcome is deterministic).
"""

import pytest

from rngassay import api

FLAWED = [  # (generator, budget, checks that must catch the flaw it is known for at this budget)
    ("randu", "4MiB", {"birthday spacings", "linear complexity lanes minimum"}),  # lattice; weak low bits
    ("minstd", "4MiB", {"birthday spacings"}),  # lattice structure
    ("lcg32", "4MiB", {"linear complexity lanes minimum", "binary matrix rank lanes"}),  # weak low bits
    ("biased", "4MiB", {"runs of bits", "cumulative sums", "monobit frequency"}),  # P(1) = 1/2 + 1/1024
    ("short-period", "8MiB", {"repeats"}),  # period 2**20 bytes (segments must be longer than the period)
    ("xorshift32", "4MiB", {"binary matrix rank", "linear complexity lanes minimum"}),  # GF(2)-linear
    ("mt19937", "4MiB", {"linear complexity lanes minimum"}),  # GF(2)-linear of degree 19937
    # wave 2a: generators shipped by widely used libraries and runtimes, built from their definitions
    ("lcg48", "8MiB", {"birthday spacings wide", "spectral dft lanes"}),  # top 32 of 48 bits: lattice, low lanes
    ("lcg48-doubles", "8MiB", {"fraction grid", "gap", "serial", "collision"}),  # 48-bit grid; low bits
    ("xorshift128-doubles", "8MiB", {"binary matrix rank", "linear complexity long lanes"}),  # state 128 < 256
    ("mt19937-doubles", "8MiB", {"linear complexity lanes minimum", "linear complexity long lanes"}),
    ("lagfib", "4MiB", {"linear complexity lanes minimum", "linear complexity long lanes", "birthday spacings"}),
]
SOUND = ["pcg64", "philox", "sfc64", "shake256", "splitmix64"]


@pytest.mark.slow
@pytest.mark.parametrize("name,budget,catchers", FLAWED)
def test_flawed_generator_fails_the_battery(name, budget, catchers):
    r = api.assay(gen=name, seed=1, budget=budget, workers=2)
    assert r.verdict == "fail"
    caught = {c.key for c in r.checks if c.p_value < 1e-10}
    assert caught & catchers, (name, sorted(caught))


@pytest.mark.slow
@pytest.mark.parametrize("name", SOUND)
def test_sound_generator_passes_the_battery(name):
    r = api.assay(gen=name, seed=1, budget="4MiB", workers=2)
    assert r.verdict != "fail"
    assert min(c.p_value for c in r.checks) > 1e-6


@pytest.mark.slow
def test_os_urandom_passes_the_battery():
    # os.urandom cannot be seeded, so the run is not repeatable: assert only where a false failure is
    # negligible -- no check below p = 1e-12 (about 100 checks: a false failure has probability ~1e-10)
    import os

    r = api.assay(os.urandom, budget="4MiB", workers=2)
    assert min(c.p_value for c in r.checks) > 1e-12
