"""Core of the outcome monitor: exact formulas against scipy, martingale mean, chunk invariance, state round trip."""

import json
import math

import mpmath
import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from scipy import special as sp
from scipy import stats

from game import CSV, PRIZES, PROBS, TIERS, declared, draw  # tests/watch/game.py (pytest puts this folder on the path)

from rngassay.errors import InputError
from rngassay.watch.design import binom_tail, streak_rule
from rngassay.watch.monitor import Declared, Monitor, declared_from_odds


def test_declared_from_csv_and_toml(tmp_path):
    p = tmp_path / "lantern.csv"
    p.write_text(CSV)
    d = declared_from_odds(p)
    assert d.tiers == TIERS
    np.testing.assert_allclose(d.probs, PROBS, rtol=1e-12)
    np.testing.assert_array_equal(d.prizes, PRIZES)
    assert d.return_rate() == pytest.approx(0.95, abs=1e-12)  # 0.05*3 + 0.1 + 0.2 + 0.5 by hand
    t = tmp_path / "g.toml"
    t.write_text('[odds]\nwin = "1/4"\nlose = 0.75\n\n[prizes]\nlose = 0\nwin = 3.5\n')
    d = declared_from_odds(t)
    assert d.tiers == ["win", "lose"] and d.return_rate() == pytest.approx(0.875)
    q = tmp_path / "plain.csv"
    q.write_text("outcome,probability\na,0.5\nb,0.5\n")
    assert declared_from_odds(q).prizes is None and declared_from_odds(q).return_rate() is None


@pytest.mark.parametrize("name,content,words", [
    ("a.csv", "outcome,probability,prize\na,0.5,1\nb,0.5\n", "line 3: expected 3 fields"),
    ("b.csv", "outcome,probability,prize\na,0.5,-1\nb,0.5,0\n", "line 2: prize '-1' is not a finite number >= 0"),
    ("c.csv", "outcome,probability,prize\na,0.5,lots\nb,0.5,0\n", "line 2: cannot read prize"),
    ("d.toml", "[odds]\na = 0.5\nb = 0.5\n[prizes]\na = 1\n", "no prize for outcome 'b'"),
    ("e.toml", "[odds]\na = 0.5\nb = 0.5\n[prizes]\na = 1\nb = 0\nc = 2\n", "line 7: [prizes] names outcome 'c'"),
    ("f.toml", "[odds]\na = 0.5\nb = 0.5\n[prizes]\na = 1\nb = -2\n", "line 6: prize '-2'"),
])
def test_declared_bad_prizes(tmp_path, name, content, words):
    p = tmp_path / name
    p.write_text(content)
    with pytest.raises(InputError) as e:
        declared_from_odds(p)
    assert words in e.value.line() and name in e.value.line()


def _direct_dm(counts, probs, c):
    """log Dirichlet-multinomial Bayes factor against probs, straight from the closed form with gammaln."""
    a = c * probs
    n = counts.sum()
    return (sp.gammaln(c) - sp.gammaln(c + n) + np.sum(sp.gammaln(a + counts) - sp.gammaln(a))
            - np.sum(counts * np.log(probs)))


def _direct_bb(h, n, p, r):
    """log Beta-binomial Bayes factor of h hits in n against rate p, prior Beta(c p, c(1-p)), c = 1/(p r^2),
    with mpmath at 50 digits (float lgamma of arguments near 1e8 loses ~1e-6 to cancellation)."""
    with mpmath.workdps(50):
        p_ = mpmath.mpf(p)
        c = 1 / (p_ * mpmath.mpf(r) ** 2)
        a, b = c * p_, c * (1 - p_)
        lb = lambda x, y: mpmath.loggamma(x) + mpmath.loggamma(y) - mpmath.loggamma(x + y)  # noqa: E731
        return float(lb(a + h, b + n - h) - lb(a, b) - h * mpmath.log(p_) - (n - h) * mpmath.log(1 - p_))


@pytest.mark.parametrize("drift", [1.0, 1.3])
def test_evalues_match_closed_forms(drift):
    # Source: the Dirichlet-multinomial and Beta-binomial marginal likelihoods (conjugate closed forms),
    # evaluated with scipy.special.gammaln (table) and mpmath.loggamma (tiers); the monitor multiplies per-outcome predictive ratios.
    probs = PROBS.copy()
    probs[4] *= drift
    probs[-1] = 1 - probs[:-1].sum()
    x = draw(np.random.default_rng(7), 300_000, probs)
    for c in (1e3, 1e5):
        for r in (0.05, 1.0):
            m = Monitor(declared(), table_concentrations=[c], tier_scales=[r])
            m.update_many(x, None, None, 0)
            table, tiers = m.log10_evalues()
            counts = np.bincount(x, minlength=7).astype(float)
            assert table * math.log(10) == pytest.approx(_direct_dm(counts, PROBS, c), rel=1e-9, abs=1e-7)
            for k in range(7):
                want = _direct_bb(counts[k], len(x), PROBS[k], r)
                assert tiers[k] * math.log(10) == pytest.approx(want, rel=1e-9, abs=1e-7), (k, c, r)


def test_mixture_mean_is_one_under_declared_odds():
    # A test martingale has E[E_n] = 1 under H0 (exact property of a Bayes factor under the null).  Small table so
    # the mean is estimable: 3000 runs of 100 outcomes, fixed seed; tolerance 4 standard errors of the sample mean
    # (a false failure has probability about 1e-4 over seeds; this seed is fixed).
    d = Declared(["a", "b", "c"], np.array([0.1, 0.3, 0.6]), None)
    rng = np.random.default_rng(2024)
    vals_t, vals_k = [], []
    for _ in range(3000):
        m = Monitor(d, alpha=1e-9, table_concentrations=[100.0], tier_scales=[0.5])
        m.update_many(draw(rng, 100, d.probs), None, None, 0)
        t, k = m.log10_evalues()
        vals_t.append(10**t)
        vals_k.append(10 ** k[0])
    for v in (np.array(vals_t), np.array(vals_k)):
        se = v.std(ddof=1) / math.sqrt(v.size)
        assert abs(v.mean() - 1) < 4 * se, (v.mean(), se)
        assert se < 0.05  # the check has teeth: a mean of 1.2 would fail


def _lantern_with_fault(seed, n):
    rng = np.random.default_rng(seed)
    probs = PROBS.copy()
    probs[4] *= 1.5
    probs[-1] = 1 - probs[:-1].sum()
    x = draw(rng, n, probs)
    x[n // 2: n // 2 + 3] = 0  # three grand prizes in a row
    pay = PRIZES[x] * 2.0
    stake = np.full(n, 2.0)
    return x, stake, pay


@settings(max_examples=25, deadline=None)
@given(st.lists(st.integers(1, 40_000), min_size=1, max_size=8))
def test_chunks_give_the_same_alarms_and_state(cuts):
    n = 60_000
    x, stake, pay = _lantern_with_fault(11, n)
    opts = dict(cusum_batch=100, cusum_limit=3.0)
    one = Monitor(declared(), 0.01, **opts)
    a1 = one.update_many(x, stake, pay, 0)
    many = Monitor(declared(), 0.01, **opts)
    a2, pos = [], 0
    for b in sorted(set(min(c, n) for c in cuts)) + [n]:
        a2 += many.update_many(x[pos:b], stake[pos:b], pay[pos:b], pos)
        many = Monitor.from_state(declared(), json.loads(json.dumps(many.state())))
        pos = b
    assert a1 == a2 and len(a1) >= 3  # the faults raise alarms: streak, e-process, CUSUM
    assert one.state() == many.state()


def test_state_round_trip_continues_exactly_and_rejects_other_odds():
    x, stake, pay = _lantern_with_fault(3, 50_000)
    m = Monitor(declared())
    m.update_many(x[:20_000], None, None, 0)
    s = json.loads(json.dumps(m.state()))
    m2 = Monitor.from_state(declared(), s)
    assert m2.state() == m.state() and m2.summary() == m.summary()
    assert m.update_many(x[20_000:], None, None, 20_000) == m2.update_many(x[20_000:], None, None, 20_000)
    other = declared()
    other.tiers[0] = "jackpot"
    with pytest.raises(InputError, match="other declared odds"):
        Monitor.from_state(other, s)
    with pytest.raises(InputError, match="damaged"):
        Monitor.from_state(declared(), {k: v for k, v in s.items() if k != "counts"})


def test_binomial_tail_and_streak_rule_against_scipy():
    # Source: scipy.stats.binom.sf as the reference for P(Bin(w, p) >= k).
    for w, p, k in [(3, 1e-6, 2), (3, 1e-4, 3), (10, 0.01, 2), (50, 0.2, 15)]:
        assert binom_tail(w, p, k) == pytest.approx(stats.binom.sf(k - 1, w, p), rel=1e-9)
    k, q, bound = streak_rule(1e-6, 3, 1e8, 1e-3 / 3)
    assert k == 2 and bound == pytest.approx((1e8 - 2) * stats.binom.sf(1, 3, 1e-6), rel=1e-9) and bound <= 1e-3 / 3
    assert streak_rule(1e-2, 3, 1e8, 1e-4)[0] == 0  # common tiers get no streak rule


def test_top_prize_repeated_is_flagged_within_three_outcomes():
    # Demonstration mode wired to the live game: the grand prize paid on consecutive outcomes.
    rng = np.random.default_rng(5)
    x = draw(rng, 100_000)
    start = 77_777
    x[start:start + 3] = 0
    m = Monitor(declared())
    alarms = m.update_many(x, None, None, 1000)
    streak = [a for a in alarms if a["statistic"] == "streak" and a["tier"] == "grand"]
    assert streak and streak[0]["index"] - (1000 + start) <= 2
    assert not [a for a in alarms if a["index"] < 1000 + start]  # nothing before the fault


def test_impossible_outcome_and_bad_input():
    d = Declared(["a", "b", "never"], np.array([0.5, 0.5, 0.0]), None)
    m = Monitor(d)
    a = m.update_many(np.array([0, 1, 2, 0]), None, None, 10, ["t0", "t1", "t2", "t3"])
    assert [(x["statistic"], x["index"], x["time"], x["tier"]) for x in a] == [("impossible-outcome", 12, "t2", "never")]
    with pytest.raises(InputError, match="tier index out of range"):
        m.update_many(np.array([3]), None, None, 0)
    with pytest.raises(InputError, match="stake"):
        Monitor(declared()).update_many(np.array([0]), np.array([0.0]), np.array([1.0]), 0)
    with pytest.raises(InputError, match="unknown monitor option"):
        Monitor(declared(), shrink=3)
