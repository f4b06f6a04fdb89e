"""`fit`: declarations (checks.transform.declared), reading (intake.variates), the fit-specific checks and their
laws (checks.transform.conformance), the report (api.fit, battery.conformance)."""

import json
import math

import numpy as np
import pytest
from scipy import stats

from rngassay.errors import InputError
from rngassay.api import fit
from rngassay.checks.transform.conformance import (
    extreme_value_check,
    outcome_deviation_check,
    outcome_frequency_check,
    randomised_pit,
    serial_check,
    tail_count_check,
    tail_log_areas,
)
from rngassay.checks.transform.declared import Declaration, categories_for, parse_dist_spec, read_odds
from rngassay.intake.variates import read_variates


def pcg(seed):
    return np.random.Generator(np.random.PCG64(seed))


# --------------------------------------------------------------------------- declarations


def test_parse_dist_spec_good():
    d = parse_dist_spec("norm")
    assert d.kind == "continuous" and d.spec == "norm" and d.frozen.mean() == 0
    d = parse_dist_spec(" norm(loc=-2, scale=3) ")
    assert d.spec == "norm(loc=-2, scale=3)" and d.frozen.mean() == -2 and d.frozen.std() == 3
    assert parse_dist_spec("gamma(a=2)").frozen.mean() == 2
    assert parse_dist_spec("expon(scale=0.5)").frozen.mean() == 0.5
    d = parse_dist_spec("poisson(mu=3)")
    assert d.kind == "discrete" and d.frozen.mean() == 3
    assert parse_dist_spec("binom(n=10, p=0.3)").frozen.mean() == pytest.approx(3.0)


@pytest.mark.parametrize("spec,words", [
    ("nosuch", "unknown distribution"),
    ("multivariate_normal", "unknown distribution"),
    ("gamma", "needs parameter a"),
    ("norm(mean=1)", "no parameter 'mean'"),
    ("norm(scale=-1)", "invalid parameters"),
    ("binom(n=10.5, p=0.3)", "invalid parameters"),
    ("binom(n=10, p=1.5)", "invalid parameters"),
    ("norm(0, 1)", "by name"),
    ("norm(loc=2", "cannot parse"),
    ("norm(loc='a')", "must be a finite number"),
    ("norm(loc=1e999)", "must be a finite number"),
    ("norm(loc=__import__('os').getpid())", "must be a number"),
    ("__import__('os').system('true')", "cannot parse"),
    ("norm(**{'loc': 1})", "cannot parse"),
    ("", "empty"),
])
def test_parse_dist_spec_bad(spec, words):
    with pytest.raises(InputError) as e:
        parse_dist_spec(spec)
    assert words in e.value.line()


def test_read_odds_csv_and_toml(tmp_path):
    p = tmp_path / "tiers.csv"
    p.write_text("# prize tiers of a fictional scratch card\noutcome,probability\n\njackpot,1/100000\n"
                 "big,0.01\nsmall,0.1\nnone,0.88999\n")
    d = read_odds(p)
    assert d.kind == "odds" and d.outcomes == ["jackpot", "big", "small", "none"]
    np.testing.assert_allclose(d.probs, [1e-5, 0.01, 0.1, 0.88999], rtol=1e-12)
    t = tmp_path / "tiers.toml"
    t.write_text('[odds]\n"1" = 0.1\n"2" = 0.2\nthree = 0.7\n')  # 0.1 + 0.2 + 0.7 is 1 within 1e-9
    d = read_odds(t)
    assert d.outcomes == ["1", "2", "three"]


@pytest.mark.parametrize("name,content,words", [
    ("s.csv", "outcome,probability\na,0.5\nb,0.6\n", "sum to"),
    ("s.csv", "outcome,probability\na,0.5\nb,0.5000001\n", "sum to"),
    ("n.csv", "outcome,probability\na,-0.5\nb,1.5\n", "line 2: negative probability"),
    ("d.csv", "outcome,probability\na,0.5\na,0.5\n", "line 3: duplicate outcome 'a'"),
    ("h.csv", "name,p\na,0.5\nb,0.5\n", "line 1: CSV header"),
    ("f.csv", "outcome,probability\na,0.5\nb,0.5,x\n", "line 3: expected 2 fields"),
    ("x.csv", "outcome,probability\na,half\nb,0.5\n", "line 2: cannot read probability"),
    ("q.csv", 'outcome,probability\n"a,0.5\nb,0.5\n', "malformed CSV"),
    ("one.csv", "outcome,probability\na,1\n", "at least two outcomes"),
    ("m.toml", "[odds]\na = 0.5\nb = \n", "line 3: malformed TOML"),
    ("dup.toml", "[odds]\na = 0.5\na = 0.5\n", "line 3: malformed TOML"),
    ("t.toml", "[other]\na = 0.5\nb = 0.5\n", "[odds] table"),
    ("neg.toml", "[odds]\na = 1.5\nb = -0.5\n", "line 2: probability 1.5 is above 1"),
])
def test_read_odds_bad(tmp_path, name, content, words):
    p = tmp_path / name
    p.write_text(content)
    with pytest.raises(InputError) as e:
        read_odds(p)
    assert words in e.value.line() and name in e.value.line()


# --------------------------------------------------------------------------- reading values


def test_read_text_numbers_several_per_line(tmp_path):
    p = tmp_path / "v.txt"
    p.write_text("1.5 -2e3\n\n  3\t4.25\n5")
    v = read_variates(p)
    np.testing.assert_array_equal(v.values, [1.5, -2000.0, 3.0, 4.25, 5.0])
    assert v.source["values"] == 5 and v.source["bytes_read"] == p.stat().st_size and len(v.source["sha256"]) == 64


@pytest.mark.parametrize("content,words", [
    ("1 2\n3 nan\n", "line 2: NaN"),
    ("1 2\n3\n-inf 4\n", "line 3: infinite value"),
    ("1 2\nabc 4\n", "line 2: cannot read 'abc'"),
    ("", "no values"),
])
def test_read_text_rejects_with_line(tmp_path, content, words):
    p = tmp_path / "v.txt"
    p.write_text(content)
    with pytest.raises(InputError) as e:
        read_variates(p)
    assert words in e.value.line()


def test_read_binary(tmp_path):
    x = pcg(1).normal(size=1000)
    p = tmp_path / "v.f8"
    x.astype("<f8").tofile(p)
    np.testing.assert_array_equal(read_variates(p, fmt="<f8").values, x)
    q = tmp_path / "v.f4"
    x.astype("<f4").tofile(q)
    np.testing.assert_array_equal(read_variates(q, fmt="<f4").values, x.astype(np.float32))
    y = x.copy()
    y[10] = np.inf
    y.astype("<f8").tofile(p)
    with pytest.raises(InputError, match="byte offset 80"):
        read_variates(p, fmt="<f8")
    p.write_bytes(x.astype("<f8").tobytes() + b"\x00\x01\x02")
    with pytest.raises(InputError, match="not a whole number"):
        read_variates(p, fmt="<f8")


def test_read_limit_and_truncation(tmp_path):
    p = tmp_path / "v.txt"
    p.write_text("\n".join(str(i) for i in range(1000)))
    v = read_variates(p, limit=10)
    assert v.values.size == 10 and v.truncated
    assert not read_variates(p, limit=1000).truncated


def test_read_labels(tmp_path):
    p = tmp_path / "l.txt"
    p.write_text("a b\nb c\nb\n")
    v = read_variates(p, mode="labels", labels=["c", "b", "a"])
    np.testing.assert_array_equal(v.values, [2, 1, 1, 0, 1])
    p.write_text("a b\nb zz\n")
    with pytest.raises(InputError, match="line 2: outcome 'zz' is not in the odds declaration"):
        read_variates(p, mode="labels", labels=["a", "b"])


# --------------------------------------------------------------------------- laws of the fit checks


# check-values.md §6, Abramowitz & Stegun 26.2 [printed+reproduced]: Q(z) = P(Z > z)
AS_Q = {3: 1.3499e-3, 4: 3.1671e-5, 5: 2.8665e-7, 6: 9.8659e-10}


def test_normal_tail_areas_through_the_tail_path():
    # check-values.md §6 (A&S 26.2): the tail areas the tail-count and extreme-value checks use
    z = np.array(sorted(AS_Q), dtype=float)
    lf, ls = tail_log_areas(stats.norm(), z)
    np.testing.assert_allclose(np.exp(ls), [AS_Q[int(v)] for v in z], rtol=1e-4)
    lf, ls = tail_log_areas(stats.norm(), -z)
    np.testing.assert_allclose(np.exp(lf), [AS_Q[int(v)] for v in z], rtol=1e-4)
    # the counts beyond the declared 1e-3 quantiles: only +-3.2 lie beyond them,
    # since Q(3.2) = 6.9e-4 < 1e-3 < Q(3) = 1.35e-3 (A&S 26.2)
    x = np.array([-3.2, -3.0, 0.0, 3.0, 3.2])
    lf, ls = tail_log_areas(stats.norm(), x)
    assert tail_count_check(lf, 1e-3, "lower").result.statistic == 1
    assert tail_count_check(ls, 1e-3, "upper").result.statistic == 1


def test_exponential_tail_is_exact():
    # exact formula: S(x) = e^-x for the standard exponential
    x = np.array([0.5, 5.0, 50.0, 500.0])
    _, ls = tail_log_areas(stats.expon(), x)
    np.testing.assert_allclose(ls, -x, rtol=1e-14)
    _, ls = tail_log_areas(stats.expon(scale=0.5), x)
    np.testing.assert_allclose(ls, -2 * x, rtol=1e-14)


def test_tail_count_is_exact_binomial():
    x = pcg(2).normal(size=50000)
    lf, ls = tail_log_areas(stats.norm(), x)
    fc = tail_count_check(lf, 1e-3, "lower")
    k = int(np.count_nonzero(stats.norm.cdf(x) < 1e-3))
    assert fc.result.statistic == k
    assert fc.result.p_value == pytest.approx(stats.binom.sf(k - 1, x.size, 1e-3), rel=1e-10)  # scipy reference
    assert fc.result.p_left == pytest.approx(stats.binom.cdf(k, x.size, 1e-3), rel=1e-10)


def test_extreme_value_exact_law():
    # exact formula: T = min_i min(F, S); P(T <= t) = 1 - (1 - 2t)^n
    x = np.zeros(100)
    x[0] = -3.0
    lf, ls = tail_log_areas(stats.norm(), x)
    fc = extreme_value_check(lf, ls)
    t = stats.norm.cdf(-3.0)
    assert fc.result.p_value == pytest.approx(1 - (1 - 2 * t) ** 100, rel=1e-9)
    assert fc.result.p_left == pytest.approx((1 - 2 * t) ** 100, rel=1e-9)
    x[1] = 40.0  # S(40) ~ 1e-350: far below the double range, kept in log space
    lf, ls = tail_log_areas(stats.norm(), x)
    fc = extreme_value_check(lf, ls)
    assert fc.result.statistic == pytest.approx(stats.norm.logsf(40.0) / math.log(10), rel=1e-12)
    assert fc.result.p_value < 1e-300
    # calibration: 300 normal samples, KS of the p-values (fixed seeds; fails with probability 1e-3)
    ps = []
    for i in range(300):
        lf, ls = tail_log_areas(stats.norm(), pcg(700 + i).normal(size=500))
        ps.append(extreme_value_check(lf, ls).result.p_value)
    assert stats.kstest(ps, "uniform").pvalue > 1e-3


def test_categories_match_scipy_probabilities():
    # Poisson and binomial probabilities against scipy.stats
    cats = categories_for(parse_dist_spec("poisson(mu=3)"))
    k = np.array([int(s) for s in cats.labels if s.lstrip("-").isdigit()])
    np.testing.assert_allclose(cats.probs[: k.size], stats.poisson.pmf(k, 3), rtol=1e-12)
    assert cats.labels[0] == "0" and cats.labels[-1].startswith(">")
    np.testing.assert_allclose(cats.cum_lo[: k.size], stats.poisson.cdf(k - 1, 3), rtol=1e-12, atol=1e-300)
    cats = categories_for(parse_dist_spec("binom(n=10, p=0.3)"))
    assert cats.labels == [str(i) for i in range(11)]
    np.testing.assert_allclose(cats.probs, stats.binom.pmf(np.arange(11), 10, 0.3), rtol=1e-12)


def test_randomised_pit_is_uniform_and_seeded():
    # H0 (randomised PIT): u is U(0, 1); KS against uniform with fixed seeds (fails with prob 1e-3)
    decl = parse_dist_spec("poisson(mu=3)")
    cats = categories_for(decl)
    x = pcg(3).poisson(3, 40000)
    u = randomised_pit(cats.index(x), cats, 5)
    assert stats.kstest(u, "uniform").pvalue > 1e-3 and u.max() < 1.0 and u.min() >= 0.0
    np.testing.assert_array_equal(u, randomised_pit(cats.index(x), cats, 5))
    assert not np.array_equal(u, randomised_pit(cats.index(x), cats, 6))


def test_chi_square_points_through_outcome_frequencies():
    # check-values.md §6, Abramowitz & Stegun table 26.8: chi2 95% point at 10 d.o.f. = 18.307,
    # 99% point at 15 d.o.f. = 30.578.  Counts built so that X2 equals the point exactly:
    # 11 equiprobable outcomes, 2000 expected each, deviations (67, 42, 56, -165): X2 = 36614 / 2000
    c = np.full(11, 2000) + np.array([67, 42, 56, -165] + [0] * 7)
    fc = outcome_frequency_check(c, np.full(11, 1 / 11))
    assert fc.result.statistic == pytest.approx(18.307, rel=1e-12)
    assert fc.result.p_value == pytest.approx(0.05, abs=2e-5)
    c = np.full(16, 1000) + np.array([67, 33, 50, -150] + [0] * 12)  # X2 = 30578 / 1000
    fc = outcome_frequency_check(c, np.full(16, 1 / 16))
    assert fc.result.p_value == pytest.approx(0.01, abs=2e-6)


def test_outcome_frequencies_exact_for_small_counts():
    # reference: scipy.stats.binomtest's two-sided p (method of small p-values) for k = 2 outcomes
    fc = outcome_frequency_check(np.array([7, 1]), np.array([0.5, 0.5]))  # expected 4 < 5: exact
    assert fc.result.kind == "discrete"
    assert fc.result.p_value == pytest.approx(stats.binomtest(7, 8, 0.5).pvalue, rel=1e-9)


def test_outcome_deviation_is_bonferroni_of_exact_binomials():
    c = np.array([1200, 9800, 89000])
    p = np.array([0.01, 0.1, 0.89])
    fc = outcome_deviation_check(c, p, ["big", "small", "none"])
    n = c.sum()
    two = [min(1, 2 * min(stats.binom.sf(k - 1, n, q), stats.binom.cdf(k, n, q))) for k, q in zip(c, p)]
    assert fc.result.details["outcome"] == "big"
    assert fc.result.p_value == pytest.approx(3 * min(two), rel=1e-9)  # scipy.stats reference


@pytest.mark.parametrize("d", [2, 3])
def test_serial_with_unequal_probabilities_is_calibrated(d):
    # H0 p-values uniform: 250 sequences of 3000 draws from skewed odds, KS (p > 1e-3, fixed seeds)
    probs = np.array([0.5, 0.3, 0.15, 0.04, 0.01])
    ps = [serial_check(pcg(900 + i).choice(5, size=3000, p=probs), probs, d).result.p_value for i in range(250)]
    assert stats.kstest(ps, "uniform").pvalue > 1e-3


def test_serial_catches_dependence():
    probs = np.array([0.5, 0.3, 0.2])
    x = pcg(4).choice(3, size=20000, p=probs)
    x[1::2] = x[0::2]  # every outcome repeated: strong serial dependence, same marginal law
    assert serial_check(x, probs, 2).p < 1e-10


# --------------------------------------------------------------------------- the report


def test_fit_sound_continuous_report():
    x = pcg(5).normal(2.0, 3.0, 100_000)
    r = fit(x, dist="norm(loc=2, scale=3)", workers=1)
    assert r.command == "fit" and r.verdict in ("pass", "notable")
    assert min(c.p_value for c in r.checks) > 1e-6  # sound data: no p below 1e-6 (fixed seed)
    fams = {c.family for c in r.checks}
    assert "fit" in fams and "classic" in fams and "transform" in fams
    assert all(c.id.startswith("pit: ") for c in r.checks if c.family != "fit")
    ids = {c.id for c in r.checks if c.family == "fit"}
    assert {"anderson-darling", "extreme value", "tail count q=0.001 side=lower", "tail count q=1e-05 side=upper"} <= ids
    assert all(c.adjusted_p is not None and c.adjusted_p >= c.p_value for c in r.checks)
    assert any("not a certification" in s for s in r.cautions)
    assert any("accredited test laboratories" in s for s in r.cautions)
    d = json.loads(r.to_json())
    assert d["command"] == "fit" and d["settings"]["declaration"] == "norm(loc=2, scale=3)"
    assert d["source"]["values"] == 100_000


def test_fit_discrete_report_is_deterministic():
    x = pcg(6).poisson(3, 50_000)
    a = fit(x, dist="poisson(mu=3)", workers=1, pit_seed=11)
    b = fit(x, dist="poisson(mu=3)", workers=1, pit_seed=11)
    assert a.settings["pit_seed"] == 11
    assert [(c.id, c.p_value) for c in a.checks] == [(c.id, c.p_value) for c in b.checks]
    assert min(c.p_value for c in a.checks) > 1e-6 and a.verdict in ("pass", "notable")
    ids = {c.id for c in a.checks if c.family == "fit"}
    assert {"outcome frequencies", "outcome deviation", "serial d=2", "serial d=3"} <= ids


def test_selection():
    x = pcg(7).normal(size=20000)
    r = fit(x, dist="norm", checks=["fit"], workers=1)
    assert {c.family for c in r.checks} == {"fit"}
    assert any("no check of the PIT battery" in s for s in r.notes)
    r = fit(x, dist="norm", checks=["pit: anderson-darling", "extreme value"], workers=1)
    assert sorted(c.id for c in r.checks) == ["extreme value", "pit: anderson-darling"]
    r = fit(x, dist="norm", skip=["pit"], workers=1)
    assert {c.family for c in r.checks} == {"fit"}
    with pytest.raises(InputError, match="no check matched"):
        fit(x, dist="norm", checks=["nothing-like-this"], battery=False)


def test_fit_rejects_impossible_discrete_values():
    with pytest.raises(InputError, match="outcome 11 has probability 0"):
        fit(np.array([1, 2, 11]), dist="binom(n=10, p=0.3)", battery=False)
    with pytest.raises(InputError, match="not a whole number"):
        fit(np.array([1.0, 2.5]), dist="poisson(mu=3)", battery=False)
    with pytest.raises(InputError, match="exactly one"):
        fit(np.array([1.0]), dist="norm", odds="x.csv")
    with pytest.raises(InputError, match="--dist SPEC or --odds FILE"):
        fit(np.array([1.0]))


def test_fit_odds_from_labels_array(tmp_path):
    p = tmp_path / "o.toml"
    p.write_text('[odds]\nwin = "1/4"\nlose = "3/4"\n')
    lab = np.where(pcg(8).random(4000) < 0.25, "win", "lose")
    r = fit(lab, odds=p, battery=False)
    assert r.verdict in ("pass", "notable") and r.settings["declaration_kind"] == "odds"
    assert isinstance(read_odds(p), Declaration)
