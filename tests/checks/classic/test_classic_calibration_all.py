"""Calibration of every registered continuous classic check: p-values of sound data are uniform.

Generic over the registry (``load_all()``, family "classic", kind "continuous"): for each check,
the smallest power-of-two data size (at least ``MIN_VALUES``) for which ``default_params``
proposes something is used; every proposed parameter set runs on ``REPLICATES`` independent PCG64
streams (fixed seeds derived from the check key), and the right-tail p-values are tested for
uniformity with Kolmogorov-Smirnov (scipy.stats.kstest as reference); the test fails at
p <= 1e-3.  Small sizes are deliberate: that is where the asymptotic null distributions
(chi-square, normal) are least accurate, so a check whose default parameters are too eager
shows here.  Discrete checks are calibrated in their own test files (pooled counts against their
exact or Poisson laws).

With about 30 parameter sets, the chance that a sound, well-calibrated suite fails once is
about 3% per fresh seed set; seeds are fixed, so the outcome is reproducible.
"""

from __future__ import annotations

import zlib

import numpy as np
import pytest
from scipy import stats

from rngassay.checks.catalog import load_all

REPLICATES = 200
MIN_VALUES = 1024
MAX_VALUES = 1 << 22  # larger minimum sizes are not calibrated here (would be too slow)
BYTES_PER_VALUE = {"bytes": 1, "words32": 4, "words64": 8, "uniforms": 8, "bits": 1 / 8, "integers": 4}


def _continuous_classic():
    specs = load_all()
    return sorted(k for k, s in specs.items() if s.family == "classic" and s.kind == "continuous")


def _all_classic():
    return sorted(k for k, s in load_all().items() if s.family == "classic")


def smallest_size(spec, start: int = MIN_VALUES) -> int | None:
    n = start
    while n <= MAX_VALUES:
        if spec.default_params(n):
            return n
        n *= 2
    return None


def make_view(rng: np.random.Generator, view: str, n: int, params: dict):
    """n values of a view straight from PCG64 (what the intake would hand over for sound bytes)."""
    if view == "uniforms":
        return rng.random(n)  # = (u64 >> 11) 2^-53, the views' convention for byte input
    if view == "bytes":
        return rng.integers(0, 256, n, dtype=np.uint8)
    if view == "words32":
        return rng.integers(0, 1 << 32, n, dtype=np.uint64).astype(np.uint32)
    if view == "words64":
        return rng.integers(0, 1 << 64, n, dtype=np.uint64)
    if view == "bits":
        return rng.integers(0, 256, (n + 7) // 8, dtype=np.uint8)
    if view == "integers":
        return rng.integers(0, int(params["k"]), n, dtype=np.int64)
    raise ValueError(view)


@pytest.mark.slow
@pytest.mark.parametrize("key", _continuous_classic())
def test_pvalues_uniform_on_pcg64(key):
    spec = load_all()[key]
    n = smallest_size(spec)
    if n is None:
        pytest.skip(f"{key}: needs more than {MAX_VALUES} values")
    for params in spec.default_params(n):
        need = spec.values_needed(params)
        ps = []
        for rep in range(REPLICATES):
            seed = np.random.SeedSequence([zlib.crc32(key.encode()), rep, len(ps)])
            rng = np.random.Generator(np.random.PCG64(seed))
            data = make_view(rng, spec.view, need, params)
            res = spec.func(data, **params)
            for r in res if isinstance(res, list) else [res]:
                ps.append(r.p_value)
        ks = stats.kstest(ps, "uniform")
        assert ks.pvalue > 1e-3, f"{key} {params}: KS D={ks.statistic:.3f} p={ks.pvalue:.2e} at n={need}"


# Checks whose default parameters, at the smallest size they accept, sometimes refuse sound data
# (InputError "no degrees of freedom" after pooling).  Found by the test below when it was written;
# strict xfail: once the defaults are fixed the test passes and pytest reports it, so remove the entry.
REFUSES_SOUND_DATA_AT_MINIMUM: set[str] = set()  # gap and coupon now fall back instead of refusing


@pytest.mark.parametrize("key", [
    pytest.param(k, marks=pytest.mark.xfail(strict=True, reason="default_params too eager at tiny n"))
    if k in REFUSES_SOUND_DATA_AT_MINIMUM else k
    for k in _all_classic()
])
def test_defaults_never_refuse_sound_data(key):
    # contract of default_params (registry.py): it proposes only runs that the data size supports.
    # At the smallest size >= 64 values where it proposes anything, 50 PCG64 replicates must all run.
    spec = load_all()[key]
    n = smallest_size(spec, start=64)
    if n is None:
        pytest.skip(f"{key}: needs more than {MAX_VALUES} values")
    for params in spec.default_params(n):
        for rep in range(50):
            rng = np.random.Generator(np.random.PCG64([zlib.crc32(key.encode()), rep, 7]))
            spec.func(make_view(rng, spec.view, spec.values_needed(params), params), **params)
