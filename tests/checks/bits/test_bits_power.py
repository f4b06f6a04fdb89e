"""Power and false alarms of the default bit checks on reference generators (fixed seeds).

- xorshift32 (Marsaglia 2003, shifts 13, 17, 5) is linear over GF(2) with 32 bits of state: every
  256 x 256 matrix of its output has rank <= 32, so the matrix rank checks must give p < 1e-10 at
  1 MiB.
- mt19937: each bit lane obeys a linear recurrence of degree 19937, so Berlekamp-Massey on 50,000-bit
  lane blocks finds L ~ 19937 instead of ~25,000: the lane linear-complexity check must give
  p < 1e-10 at 4 MiB.
- pcg64, philox, sfc64 at the same sizes: no p-value below 1e-6.  About 60 p-values per run, so a
  sound generator trips this with probability ~6e-5 per run (common practice: p-values uniform).
"""

from __future__ import annotations

import numpy as np
import pytest

from rngassay.checks.catalog import load_all
from rngassay.generators import make_generator

MiB = 1 << 20


def run_defaults(data: np.ndarray) -> dict[str, float]:
    """Every registered bit check with its default parameters for this much data: id -> min p."""
    out = {}
    words = data[: data.size // 4 * 4].view("<u4")
    for key, spec in load_all().items():
        if spec.family != "bits":
            continue
        avail = 8 * data.size if spec.view == "bits" else words.size
        for params in spec.default_params(avail):
            res = spec.func(data if spec.view == "bits" else words, **params)
            res = res if isinstance(res, list) else [res]
            label = key + " " + " ".join(f"{k}={v}" for k, v in params.items() if k not in ("n_bits", "n_words"))
            if res:
                out[label] = min(r.p_value for r in res)
    return out


def mt19937_bytes(seed: int, n_bytes: int) -> np.ndarray:
    bg = np.random.MT19937()
    bg._legacy_seeding(seed)
    return bg.random_raw(n_bytes // 4).astype("<u4").view(np.uint8)


@pytest.mark.slow
def test_xorshift32_fails_matrix_rank_at_1mib():
    data = make_generator("xorshift32", 2463534242).read(MiB)
    ps = run_defaults(data)
    assert ps["binary matrix rank M=256 Q=256"] < 1e-10
    assert ps["binary matrix rank lanes M=64 Q=64"] < 1e-10


@pytest.mark.slow
def test_mt19937_fails_lane_linear_complexity_at_4mib():
    data = mt19937_bytes(5489, 4 * MiB)
    ps = run_defaults(data)
    key = next(k for k in ps if k.startswith("linear complexity lanes"))
    assert ps[key] < 1e-10
    # the whole-stream checks do not see it at this size
    assert min(p for k, p in ps.items() if "lanes" not in k) > 1e-6


@pytest.mark.slow
@pytest.mark.parametrize("name", ["pcg64", "philox", "sfc64"])
def test_sound_generators_pass(name):
    gen = make_generator(name, 20_240_611)
    for size in (MiB, 4 * MiB):
        ps = run_defaults(gen.read(size))
        assert len(ps) >= 20
        worst = min(ps, key=ps.get)
        assert ps[worst] > 1e-6, f"{name} {size}: {worst} p = {ps[worst]:.2e}"
        if size == 4 * MiB:
            assert any(k.startswith("linear complexity lanes") for k in ps)
