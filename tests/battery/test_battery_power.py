"""The whole battery on the built-in generators (fixed seeds): every flawed one fails, every sound one passes.

Flawed generators must fail at p < 1e-10 on some check -- far beyond any chance effect; sound ones must
pass (run verdict not `fail`, which has probability at most alpha = 0.001 per run by construction, and these
seeds are fixed, so the outcome is deterministic).
"""

import pytest

from rngassay import api

FLAWED = [  # (generator, budget): the flaw each is known for, caught at this budget
    ("randu", "4MiB"),        # lattice structure: birthday spacings, lane linear complexity
    ("minstd", "4MiB"),       # lattice structure: birthday spacings
    ("lcg32", "4MiB"),        # weak low bits: bit-lane rank and linear complexity, spectral
    ("biased", "4MiB"),       # P(1) = 1/2 + 1/1024: runs of bits, cumulative sums, monobit
    ("short-period", "8MiB"),  # period 2**20 bytes: repeats (needs segments longer than the period)
    ("xorshift32", "4MiB"),   # GF(2)-linear: binary matrix rank, lane linear complexity
    ("mt19937", "4MiB"),      # GF(2)-linear of degree 19937: lane linear complexity
]
SOUND = ["pcg64", "philox", "sfc64", "shake256"]


@pytest.mark.slow
@pytest.mark.parametrize("name,budget", FLAWED)
def test_flawed_generator_fails_the_battery(name, budget):
    r = api.assay(gen=name, seed=1, budget=budget, workers=2)
    assert r.verdict == "fail"
    assert min(c.p_value for c in r.checks) < 1e-10


@pytest.mark.slow
@pytest.mark.parametrize("name", SOUND)
def test_sound_generator_passes_the_battery(name):
    r = api.assay(gen=name, seed=1, budget="4MiB", workers=2)
    assert r.verdict != "fail"
    assert min(c.p_value for c in r.checks) > 1e-6
