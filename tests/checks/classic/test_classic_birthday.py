"""Birthday-spacings test (Marsaglia; Knuth TAOCP Vol. 2 §3.3.2 J)."""

import itertools
from fractions import Fraction

import numpy as np
import pytest
from scipy import stats

from rngassay.checks.classic import birthday as bmod
from rngassay.checks.classic.birthday import (
    birthday_lambda,
    birthday_mean,
    check_birthday_spacings,
    spacing_repeats,
)
from rngassay.checks.registry import REGISTRY
from rngassay.errors import InputError
from rngassay.generators import make_generator
from rngassay.stats import pool_poisson


def repeats_of(birthdays, ndays):
    """R by the definition (Knuth §3.3.2 J): sorted birthdays, circular spacings, sorted, equal neighbours."""
    y = sorted(birthdays)
    sp = sorted([y[i + 1] - y[i] for i in range(len(y) - 1)] + [y[0] + ndays - y[-1]])
    return sum(1 for j in range(1, len(sp)) if sp[j] == sp[j - 1])


def test_lambda_check_values():
    # check-values.md §5 [derived]: m = 512 birthdays in n = 2^24 days gives lambda = m^3/(4n) = 2
    assert birthday_lambda(512, 1 << 24) == 2.0
    assert birthday_lambda(8192, 1 << 36) == 2.0


@pytest.mark.parametrize("m,n", [(3, 8), (4, 8), (4, 10), (5, 6), (6, 7), (2, 5), (5, 12)])
def test_exact_mean_matches_enumeration(m, n):
    # outside check: all n^m equally likely birthday vectors enumerated
    total = sum(repeats_of(b, n) for b in itertools.product(range(n), repeat=m))
    assert birthday_mean(m, n) == pytest.approx(float(Fraction(total, n**m)), rel=1e-12, abs=1e-14)


def test_exact_mean_quadrature_path_agrees_with_direct_sums(monkeypatch):
    # m = 128 in 2^18 days (lambda = 2): every sum over s done term by term, then by quadrature
    monkeypatch.setattr(bmod, "_DIRECT_SUM_MAX", 10**8)
    all_direct = birthday_mean.__wrapped__(128, 1 << 18)
    monkeypatch.setattr(bmod, "_DIRECT_SUM_MAX", 1000)
    all_quad = birthday_mean.__wrapped__(128, 1 << 18)
    assert all_quad == pytest.approx(all_direct, rel=1e-8)
    # m = 512 in 2^24 days: 1.98532146 by direct sums (computed once when this module was written,
    # 2.5 s); 0.73% below lambda = 2
    monkeypatch.undo()
    assert birthday_mean(512, 1 << 24) == pytest.approx(1.98532146, rel=1e-8)


def test_exact_mean_tends_to_lambda():
    # lambda fixed at 2, m growing: E[R] -> 2 (Knuth/Marsaglia's asymptotic Poisson mean)
    gaps = [2.0 - birthday_mean(m, m**3 // 8) for m in (128, 512, 2048, 8192)]
    assert all(g > 0 for g in gaps) and gaps == sorted(gaps, reverse=True)
    assert gaps[-1] < 2.0 * 1e-3


def test_exact_mean_against_simulation():
    # m = 64 in 2^16 days: exact mean 0.9560 vs lambda = 1; 2^17 simulated samples (numpy only, not
    # this module's kernel) separate the two by ~15 standard errors.  Fixed seed; 4 s.e. tolerance.
    rng = np.random.Generator(np.random.PCG64(99))
    m, n, S = 64, 1 << 16, 1 << 17
    y = np.sort(rng.integers(0, n, size=(S, m)), axis=1)
    sp = np.concatenate([np.diff(y, axis=1), (y[:, :1] + n - y[:, -1:])], axis=1)
    sp.sort(axis=1)
    r = (np.diff(sp, axis=1) == 0).sum(axis=1)
    se = r.std() / np.sqrt(S)
    assert abs(r.mean() - birthday_mean(m, n)) < 4 * se
    assert abs(r.mean() - birthday_lambda(m, n)) > 8 * se


@pytest.mark.parametrize("m,bits,offset,t", [(512, 24, 8, 1), (64, 12, 20, 1), (100, 7, 3, 1),
                                             (64, 64, 0, 2), (50, 30, 2, 3), (40, 36, 14, 2)])
def test_kernel_matches_definition(m, bits, offset, t):
    w = np.random.Generator(np.random.PCG64(8)).integers(0, 1 << 32, size=20_000, dtype=np.uint64)
    w = w.astype(np.uint32)
    got = spacing_repeats(w, m, bits, offset, t)
    b = bits // t
    for s in range(min(got.size, 20)):
        ws = [int(x) for x in w[s * m * t : (s + 1) * m * t]]
        days = [sum(((ws[i * t + j] >> offset) & ((1 << b) - 1)) << (b * (t - 1 - j)) for j in range(t))
                for i in range(m)]
        # circular spacing taken mod 2^64 when bits = 64 (the kernel's unsigned arithmetic)
        ref = repeats_of(days, 1 << bits) if bits < 64 else _repeats_mod64(days)
        assert got[s] == ref


def _repeats_mod64(days):
    y = sorted(days)
    sp = sorted([y[i + 1] - y[i] for i in range(len(y) - 1)] + [(y[0] - y[-1]) % (1 << 64)])
    return sum(1 for j in range(1, len(sp)) if sp[j] == sp[j - 1])


def test_pcg64_counts_follow_poisson():
    # per-sample R for m = 512, 2^24 days (top 24 bits), 8192 samples of PCG64 words: chi-square against
    # Poisson(E[R]) on classes 0..6, >= 7 (all expected >= 10), p > 1e-3; fixed seed
    w = make_generator("pcg64", 7).read(8192 * 512 * 4).view("<u4")
    r = spacing_repeats(w, 512, 24, 8, 1)
    mu = birthday_mean(512, 1 << 24)
    obs = np.bincount(np.minimum(r, 7), minlength=8)
    probs = stats.poisson.pmf(np.arange(7), mu)
    probs = np.append(probs, stats.poisson.sf(6, mu))
    assert (probs * r.size).min() >= 10
    assert stats.chisquare(obs, probs * r.size).pvalue > 1e-3
    assert r.var() / r.mean() == pytest.approx(1.0, abs=0.06)  # measured 0.98-0.99 at 2^16 samples


@pytest.mark.slow
def test_calibration_pooled_totals():
    # 200 replicate runs of each default variant (4 samples each) on PCG64 words: pooled total
    # against Poisson(sum mu) (rngassay.stats.pool_poisson), two-sided p > 1e-3; fixed seeds
    for m, bits, offset, t in bmod.BIRTHDAY_VARIANTS:
        obs, mus = [], []
        for rep in range(200):
            w = np.random.Generator(np.random.PCG64([rep, bits, offset])).integers(
                0, 1 << 32, size=4 * m * t, dtype=np.uint64).astype(np.uint32)
            res = check_birthday_spacings(w, m=m, bits=bits, offset=offset, t=t)
            obs.append(res.pooled["observed"])
            mus.append(res.pooled["mu"])
        _, _, right, left = pool_poisson(obs, mus)
        assert min(1.0, 2 * min(right, left)) > 1e-3, (m, bits, offset, t)


def test_result_fields():
    w = make_generator("pcg64", 1).read(512 * 4 * 10).view("<u4")
    r = check_birthday_spacings(w)
    assert r.kind == "discrete" and r.n == 5120 and r.details["samples"] == 10
    assert r.name == "birthday spacings m=512 bits=24 offset=8 t=1"
    mu = 10 * birthday_mean(512, 1 << 24)
    assert r.pooled == {"observed": int(r.statistic), "mu": pytest.approx(mu)}
    assert r.p_value == pytest.approx(stats.poisson.sf(r.statistic - 1, mu), rel=1e-9)  # scipy reference
    assert r.p_left == pytest.approx(stats.poisson.cdf(r.statistic, mu), rel=1e-9)


def test_low_bits_of_lcg32_and_the_lattice_of_minstd():
    # lcg32's low 24 bits form an LCG mod 2^24: far too few repeated spacings (left tail)
    w = make_generator("lcg32", 0).read(4 << 20).view("<u4")
    assert check_birthday_spacings(w, offset=0).p_left < 1e-10
    # minstd: bits 13..30 of word pairs (its always-zero top bit left out): the LCG lattice
    w = make_generator("minstd", 0).read(4 << 20).view("<u4")
    assert check_birthday_spacings(w, m=8192, bits=36, offset=13, t=2).p_value < 1e-10


def test_registry_and_errors():
    spec = REGISTRY["birthday spacings"]
    assert spec.view == "words32" and spec.kind == "discrete" and spec.both_tails
    assert spec.default_params(4 * 512 - 1) == []
    ps = spec.default_params(1 << 20)
    assert len(ps) == 4
    for p in ps:
        assert birthday_lambda(p["m"], 1 << p["bits"]) == 2.0
        assert p["n"] % (p["m"] * p["t"]) == 0
    with pytest.raises(InputError):
        check_birthday_spacings(np.zeros(100, np.uint32))
    with pytest.raises(InputError):
        check_birthday_spacings(np.zeros(5000, np.uint32), offset=9)  # 24 bits at 9 do not fit
    with pytest.raises(InputError):
        check_birthday_spacings(np.zeros(5000, np.float64))
