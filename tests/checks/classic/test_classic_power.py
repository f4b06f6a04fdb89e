"""Power of the registered classic checks: flawed reference generators fail, sound ones pass.

Generic over the registry (``load_all()``, family "classic"): every registered classic check runs
with its own ``default_params`` on one deterministic stream per generator, each check capped to
``CAP_BYTES`` of input.  Streams are fed in their natural format: 32-bit generators (randu,
minstd, lcg32) as ``<u4`` words, the 64-bit and byte generators as raw bytes ``u1``; each check
gets its registry view from ``rngassay.intake.views`` (uniforms from ``<u4`` words are w 2^-32).

Thresholds: a flawed generator must give some check p < 1e-10; a sound one must give no
two-sided p below 1e-6.  With about 40 results per sound generator, the chance that a sound
stream produces one two-sided p < 1e-6 is < 1e-4 (union bound); and seeds are fixed, so the
outcome is reproducible.

Which checks catch which flaw (measured at 16 MiB per check, seed 0, with the checks registered
when this file was written; ``FLAW_CATCHERS`` below is what the tests assert):

- randu: top bit always 0 (outputs < 2^31), bottom bit always 1.  Every check on uniforms sees
  the values < 1/2 (equidistribution, serial, ...: p at the floor 2e-308), as do byte frequency
  and birthday spacings (half the days in use: twice the repeats).  Coupon collector and gap
  (a = 0.9375) refuse the data (no complete sample): an InputError, not a result.
- minstd: top bit always 0, with the same consequences.  Beyond that trivial flaw its lattice
  shows in birthday spacings on word pairs: m = 8192 in 2^36 days from the top 18 bits gives
  ~12x the expected repeats, and from bits 13..30 (top bit left out) ~9x
  (``test_minstd_fails_beyond_its_zero_top_bit``).
- lcg32: short periods of the low bits.  Birthday spacings on the low 24 bits (offset 0: too few
  repeats, left tail 1e-149), on word pairs (right tail at the floor); byte and 16-bit frequency
  (left tails: counts too even, 2e-15 and 2e-308).
- biased: bits with P(1) = 1/2 + 1/1024.  Byte frequency (p 4e-55; the chi-square over 256
  values gains ~32 delta^2 n of non-centrality); the uniforms' Anderson-Darling (6e-12) and
  Kolmogorov-Smirnov (3e-8) tests see it more weakly.
- short-period: 16 copies of one 1 MiB block.  Repeat detection (verified byte-for-byte
  repeats, p = the birthday bound ~ 1e-140, period 2^20 found); the copies also multiply every
  count's chance deviation by 16, so frequency and serial tests fail as well.

``run_family_on_generator`` is written to be reused (e.g. by the battery's own power tests):
it runs every registered check of a family on one generator and returns the results.
"""

from __future__ import annotations

import time
from dataclasses import dataclass
from typing import Any

import numpy as np
import pytest

from rngassay.checks.registry import CheckSpec
from rngassay.checks.catalog import load_all
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError
from rngassay.generators import GENERATORS, make_generator
from rngassay.intake import views
from rngassay.intake.formats import parse_format

MiB = 1 << 20
#: Input bytes per generator (the stream read once; every check sees a prefix of it).
STREAM_BYTES = 16 * MiB
#: Most input bytes one check may consume.
CAP_BYTES = 16 * MiB

FLAWED_P = 1e-10
SOUND_P2 = 1e-6


@dataclass
class RunRecord:
    key: str
    params: dict[str, Any]
    result: CheckResult | None  # None when the check refused the data (``error`` says why)
    seconds: float
    error: str = ""


def natural_format(generator: str) -> str:
    """The natural input format of a reference generator: ``<u4`` for 32-bit word generators, else ``u1``."""
    return "<u4" if GENERATORS[generator].word_bytes == 4 else "u1"


def view_of(vals: np.ndarray, fmt, view: str, params: dict) -> tuple[Any, dict]:
    """The registry view ``view`` of decoded values, and the params to pass along with it."""
    p = dict(params)
    if view == "bytes":
        return views.as_bytes(vals, fmt), p
    if view == "words32":
        return views.as_words32(vals, fmt), p
    if view == "words64":
        return views.as_words64(vals, fmt), p
    if view == "uniforms":
        return views.as_uniforms(vals, fmt), p
    if view == "bits":
        packed, _ = views.as_bits(vals, fmt)
        return packed, p
    if view == "integers":
        ints, _ = views.as_integers(vals, fmt, int(p["k"]))
        return ints, p
    raise ValueError(f"unknown view {view!r}")


def view_size(vals: np.ndarray, fmt, view: str, cap_bytes: int) -> int:
    """How many view values a check may use: all there are, capped at ``cap_bytes`` of input."""
    per = views.input_bytes_per_value(fmt, view)
    have = int(vals.size * fmt.itemsize / per)
    return int(min(have, cap_bytes / per))


def run_checks_on_values(vals: np.ndarray, fmt, specs: dict[str, CheckSpec],
                         cap_bytes: int = CAP_BYTES, integer_k: int = 6) -> list[RunRecord]:
    """Run every check in ``specs`` with its default parameters on decoded values ``vals`` of format ``fmt``.

    Checks on the integers view get ``k = integer_k`` unless their parameters name one (for
    categorical input the declaration fixes k).
    """
    out: list[RunRecord] = []
    for key, spec in specs.items():
        if spec.view not in views.available_views(fmt):
            continue
        n_avail = view_size(vals, fmt, spec.view, cap_bytes)
        extra: dict[str, Any] = {}
        if spec.view == "integers":
            extra = {"k": integer_k}
            n_avail = min(n_avail, int(views.as_integers(vals, fmt, integer_k)[0].size))
        for params in ({**p, **extra} for p in spec.default_params(n_avail)):
            data, p = view_of(vals, fmt, spec.view, params)
            t0 = time.perf_counter()
            try:
                res = spec.func(data, **p)
            except InputError as exc:  # a check may refuse degenerate data (e.g. no complete sample)
                out.append(RunRecord(key, params, None, time.perf_counter() - t0, str(exc)))
                continue
            dt = time.perf_counter() - t0
            for r in res if isinstance(res, list) else [res]:
                out.append(RunRecord(key, params, r, dt))
    return out


def run_family_on_generator(generator: str, seed: int = 0, n_bytes: int = STREAM_BYTES,
                            family: str = "classic", cap_bytes: int = CAP_BYTES) -> list[RunRecord]:
    """Run all registered checks of ``family`` on ``n_bytes`` of a reference generator.

    The stream is decoded in the generator's natural format (``natural_format``); each check gets
    its registry view and runs with ``default_params`` for at most ``cap_bytes`` of input.
    """
    specs = {k: s for k, s in load_all().items() if s.family == family}
    fmt = parse_format(natural_format(generator))
    raw = make_generator(generator, seed).read(n_bytes)
    vals = raw.view(fmt.dtype) if fmt.itemsize > 1 else raw
    return run_checks_on_values(vals, fmt, specs, cap_bytes)


# ----------------------------------------------------------------------------- the tests

#: flawed generator -> checks (registry keys) expected to reach p < FLAWED_P on it, as measured
#: (module docstring).  The test asserts that at least one check of the list does so.
FLAW_CATCHERS = {
    "randu": ("birthday spacings", "equidistribution", "byte frequency"),
    "minstd": ("birthday spacings",),
    "lcg32": ("birthday spacings", "byte frequency", "16-bit frequency"),
    "biased": ("byte frequency",),
    "short-period": ("repeats",),
}


def min_tail(r: CheckResult) -> float:
    return min(r.p_value, r.p_left if r.p_left is not None else 1.0)


@pytest.fixture(scope="module")
def registry():
    specs = {k: s for k, s in load_all().items() if s.family == "classic"}
    assert {"runs up", "runs down", "collision", "birthday spacings", "repeats"} <= set(specs)
    return specs


# power at 16 MiB per generator: the slowest cases are marked slow; the fast run keeps biased and lcg32 (flawed;
# minstd through test_minstd_fails_beyond_its_zero_top_bit) and sfc64 (sound)
_SLOW = pytest.mark.slow


@pytest.mark.parametrize("generator", [pytest.param(g, marks=_SLOW) if g in ("randu", "minstd", "short-period") else g
                                       for g in sorted(FLAW_CATCHERS)])
def test_flawed_generator_fails(generator, registry):
    # checks may refuse degenerate data (RunRecord.result None); only results count here
    recs = [r for r in run_family_on_generator(generator, seed=0) if r.result is not None]
    assert recs, "no check ran"
    worst = min(recs, key=lambda r: min_tail(r.result))
    caught = [r for r in recs if r.key in FLAW_CATCHERS[generator] and min_tail(r.result) < FLAWED_P]
    assert caught, (f"{generator}: none of {FLAW_CATCHERS[generator]} reached p < {FLAWED_P}; "
                    f"worst was {worst.result.name} p={worst.result.p_two_sided:.3g}")


def test_minstd_fails_beyond_its_zero_top_bit():
    # minstd's words are < 2^31; a birthday test on bits 13..30 (the top bit excluded: 18-bit fields
    # of word pairs) still fails it, through the lattice structure of the LCG itself.
    from rngassay.checks.classic.birthday import check_birthday_spacings

    w = make_generator("minstd", 0).read(4 * MiB).view("<u4")
    r = check_birthday_spacings(w, m=8192, bits=36, offset=13, t=2)
    assert r.p_value < FLAWED_P
    w = make_generator("pcg64", 0).read(4 * MiB).view("<u4")
    assert check_birthday_spacings(w, m=8192, bits=36, offset=13, t=2).p_two_sided > SOUND_P2


@pytest.mark.parametrize("generator", [pytest.param(g, marks=_SLOW) if g != "sfc64" else g
                                       for g in ("pcg64", "philox", "sfc64", "shake256")])
def test_sound_generator_passes(generator, registry):
    recs = run_family_on_generator(generator, seed=0)
    assert len(recs) >= len(registry)
    refused = [(r.key, r.error) for r in recs if r.result is None]
    assert not refused, f"{generator}: checks refused sound data: {refused}"
    bad = [(r.result.name, r.result.p_two_sided) for r in recs if r.result.p_two_sided < SOUND_P2]
    assert not bad, f"{generator}: {bad}"
