"""Power of `fit` at the sizes the brief requires, and no false alarm on sound data (fixed seeds)."""

import numpy as np

from rngassay.api import fit


def pcg(seed):
    return np.random.Generator(np.random.PCG64(seed))


N_NORMAL = 1 << 23


def truncated_normal(n, seed, cut=4.0):
    """A normal sampler whose tails are cut: draws with |z| > cut are redrawn (vectorised rounds)."""
    rng = pcg(seed)
    z = rng.standard_normal(n)
    bad = np.abs(z) > cut
    while bad.any():
        z[bad] = rng.standard_normal(int(bad.sum()))
        bad = np.abs(z) > cut
    return z


def test_normal_with_tails_cut_at_4_fails_within_2_23_variates():
    # beyond the declared 1e-5 quantiles 2 x 84 values are expected and none occur: p ~ e^-84;
    # the most extreme value stays at |z| <= 4 where (1 - 2 Q(4))^n = e^-531 (Q(4): A&S 26.2)
    r = fit(truncated_normal(N_NORMAL, 1), dist="norm", checks=["fit"], workers=1)
    assert r.verdict == "fail"
    assert min(c.p_value for c in r.checks) < 1e-10
    failed = {c.id for c in r.checks if c.grade == "fail"}
    assert {"tail count q=1e-05 side=lower", "tail count q=1e-05 side=upper", "extreme value"} <= failed


def test_sound_normal_passes_at_2_23_variates():
    r = fit(pcg(2).standard_normal(N_NORMAL), dist="norm", checks=["fit"], workers=1)
    assert r.verdict == "pass" and min(c.p_value for c in r.checks) > 1e-6


def _odds_file(tmp_path):
    p = tmp_path / "tiers.csv"
    p.write_text("outcome,probability\njackpot,1/100000\nbig,1/100\nsmall,1/10\nnone,0.88999\n")
    return p


LABELS = np.array(["jackpot", "big", "small", "none"])


def test_odds_off_by_20_percent_on_a_1_in_100_outcome_fail_within_1e5_draws(tmp_path):
    # the 1-in-100 tier is really paid 1.2 times in 100 (the shortfall taken from "none")
    draws = LABELS[pcg(3).choice(4, size=100_000, p=[1e-5, 0.012, 0.1, 0.88799])]
    r = fit(draws, odds=_odds_file(tmp_path), workers=1)
    assert r.verdict == "fail" and min(c.p_value for c in r.checks) < 1e-6
    dev = next(c for c in r.checks if c.id == "outcome deviation")
    assert dev.grade == "fail" and dev.second_level["details"]["outcome"] == "big"


def test_sound_odds_pass(tmp_path):
    draws = LABELS[pcg(4).choice(4, size=100_000, p=[1e-5, 0.01, 0.1, 0.88999])]
    r = fit(draws, odds=_odds_file(tmp_path), workers=1)
    assert r.verdict == "pass" and min(c.p_value for c in r.checks) > 1e-6
