"""Conformance checks of variates against a declared law, and the PIT transforms (``rngassay fit``).

H0: the values are i.i.d. draws from the declared law (:mod:`rngassay.checks.transform.declared`).

Continuous declarations (on the variates themselves, ``ln F`` and ``ln S`` from ``scipy.stats``
``logcdf``/``logsf`` so both tails keep their precision):

* ``anderson-darling`` -- A² against the declared F (Anderson & Darling 1954; p-value by
  :func:`rngassay.stats.ad_pvalue`).
* ``tail count q=.. side=..`` -- the number of values below the declared q-quantile / above the
  (1 - q)-quantile: exactly Binomial(n, q) under H0; both tails (too few extreme values = truncated or
  clipped tails, too many = heavy tails).
* ``extreme value`` -- the smallest tail area ``T = min_i min(F(x_i), S(x_i))``: under H0
  ``P(T <= t) = 1 - (1 - 2t)^n`` exactly.  Right tail: a value far too extreme (or outside the
  support); left tail: the sample never reaches the tails it should (truncation).

Discrete declarations (a ``scipy.stats`` discrete law, or an odds table):

* ``outcome frequencies`` -- Pearson chi-square on the outcome counts, rare cells pooled to
  expected >= 5 (:func:`rngassay.stats.chisquare_gof`), or the exact multinomial p-value when an
  expected count is below 5 and enumeration is feasible; the G statistic is in the details.
* ``outcome deviation`` -- each outcome's count against its exact Binomial(n, p) law, two-sided;
  the smallest p-value times the number of outcomes (Bonferroni).  The focused test a regulator
  asks for ("is the 1-in-100 prize paid 1 time in 100?"), far more powerful than the omnibus test
  against one mis-stated probability.
* ``serial d=2`` / ``serial d=3`` -- Good's first-difference serial statistic on overlapping pairs /
  triples of the outcome sequence, with the declared (unequal) outcome probabilities
  (:func:`rngassay.checks.classic.serial.first_difference`, as in the categorical serial check);
  outcomes are merged into groups of probability >= (5/n)^(1/d) (at most 64 / 16 groups) so every
  cell expects >= 5.  Both tails.

The PIT transforms map the values to uniforms for the battery: ``u = F(x)`` below the median and
``1 - S(x)`` above it; for discrete laws the randomised PIT ``u = F(x-1) + V P(x)``; for continuous
values printed with few decimals the randomised interval PIT.  ``V`` is uniform from a ``numpy``
PCG64 generator seeded with the caller's seed.  A PIT value that rounds to 1.0 is stored as the
largest double below 1.

These are pure functions (arrays in, :class:`FitCheck` out).  They are not registered in the
battery's registry: the battery does not run them on uniforms.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ...errors import InputError
from ..result import CheckResult
from .declared import Categories

#: Tail levels of the continuous tail counts; a level runs when n q >= 1.
FIT_TAIL_LEVELS = (1e-3, 1e-5, 1e-7)
#: Serial tests on outcomes: most groups for d = 2 and d = 3.
SERIAL_MAX_GROUPS = {2: 64, 3: 16}


@dataclass
class FitCheck:
    """One conformance check's result with what names it in a report (key, parameters, title); the
    battery's registry entry plays this part for the battery's own checks."""

    key: str
    params: dict[str, Any]
    title: str
    result: CheckResult
    both_tails: bool

    @property
    def id(self) -> str:
        from ..registry import check_id

        return check_id(self.key, self.params)

    @property
    def p(self) -> float:
        """The check's p-value: two-sided (doubled smaller tail) where both tails count."""
        from ...stats import clip_p

        r = self.result
        if self.both_tails and r.p_left is not None:
            return clip_p(min(1.0, 2.0 * min(r.p_value, r.p_left)))
        return clip_p(r.p_value)


def tail_log_areas(frozen, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(ln F(x), ln S(x)) of the declared law: ``logcdf``/``logsf``, each accurate in its own tail."""
    with np.errstate(all="ignore"):
        return np.asarray(frozen.logcdf(x), dtype=np.float64), np.asarray(frozen.logsf(x), dtype=np.float64)


def tail_count_check(log_area: np.ndarray, q: float, side: str) -> FitCheck:
    """#{F(x) < q} (side lower, from ln F) or #{S(x) < q} (upper, from ln S): Binomial(n, q) under H0.

    Exact binomial tails, both meaningful (``rngassay.stats.binomial_tails``).
    """
    from ...stats import binomial_tails

    n = int(log_area.size)
    k = int(np.count_nonzero(log_area < math.log(q)))
    right, left = binomial_tails(k, n, q)
    r = CheckResult(name="", statistic=float(k), p_value=right, p_left=left, null=f"binomial(n={n}, p={q:g})",
                    kind="discrete", n=n, details={"expected": n * q, "observed": k})
    return FitCheck("tail count", {"q": q, "side": side}, f"count beyond the declared {side} {q:g} quantile", r, True)


def extreme_value_check(log_f: np.ndarray, log_s: np.ndarray) -> FitCheck:
    """Smallest tail area T = min_i min(F(x_i), S(x_i)); H0: P(T <= t) = 1 - (1 - 2t)^n exactly.

    Right tail P(T <= t): a value too extreme; left tail P(T >= t) = (1 - 2t)^n: the sample does
    not reach the tails it should.  Computed in log space (t may be far below the double range).
    """
    from ...stats import clip_p

    n = int(log_f.size)
    lt = float(min(np.min(log_f), np.min(log_s)))
    outside = int(np.count_nonzero(np.isneginf(log_f) | np.isneginf(log_s)))
    if lt == -math.inf:
        right, left = 0.0, 1.0
    else:
        t2 = 2.0 * math.exp(lt) if lt > -745 else 0.0
        if t2 == 0.0:  # 1 - (1 - 2t)^n ~ 2 n t
            log_right = math.log(2.0 * n) + lt
            right = math.exp(log_right) if log_right > -745 else 0.0
            left = 1.0
        else:
            lg = n * math.log1p(-min(t2, 1.0)) if t2 < 1.0 else -math.inf
            right = -math.expm1(lg)
            left = math.exp(lg)
    stat = lt / math.log(10.0) if lt > -math.inf else -math.inf
    r = CheckResult(name="", statistic=float(stat), p_value=clip_p(right),
                    p_left=clip_p(left), null=f"min tail area of n={n} (P(T <= t) = 1 - (1 - 2t)^n)",
                    kind="continuous", n=n,
                    details={"log10_smallest_tail_area": stat if math.isfinite(stat) else None,
                             "outside_support": outside})
    return FitCheck("extreme value", {}, "most extreme value against its exact law", r, True)


def anderson_darling_check(log_f: np.ndarray, log_s: np.ndarray) -> FitCheck:
    """A² of the variates against the declared F from sorted ln F and ln S (values outside the
    support, where one of them is -inf, are left out and counted; the extreme-value check judges them)."""
    from ...stats import ad_pvalue
    from ._common import ad_from_logs

    ok = np.isfinite(log_f) & np.isfinite(log_s)
    lf = np.sort(log_f[ok])
    ls = np.sort(log_s[ok])[::-1]
    kept = int(lf.size)
    if kept < 2:
        raise InputError("anderson-darling needs at least two values inside the declared support")
    a2 = ad_from_logs(lf, ls)
    r = CheckResult(name="", statistic=a2, p_value=ad_pvalue(a2, kept), null=f"anderson-darling A2 (n={kept})",
                    kind="continuous", n=kept, details={"left_out": int(log_f.size - kept)})
    return FitCheck("anderson-darling", {}, "Anderson-Darling test against the declared distribution", r, False)



def outcome_frequency_check(counts: np.ndarray, probs: np.ndarray) -> FitCheck:
    """Pearson chi-square (pooled to expected >= 5) or the exact multinomial p-value for small counts."""
    from ...stats import EXACT_MULTINOMIAL_MAX_OUTCOMES, chisquare_gof, exact_multinomial_p, g_test

    n = int(counts.sum())
    k = int(counts.size)
    expected = n * probs
    details: dict[str, Any] = {"outcomes": k}
    small = bool(np.any((expected < 5) & (probs > 0)))
    feasible = math.comb(n + k - 1, k - 1) <= EXACT_MULTINOMIAL_MAX_OUTCOMES
    if small and feasible:
        p = exact_multinomial_p(counts, probs)
        pos = expected > 0
        x2 = float(np.sum((counts[pos] - expected[pos]) ** 2 / expected[pos]))
        r = CheckResult(name="", statistic=x2, p_value=p, null=f"exact multinomial(n={n}, k={k})", kind="discrete",
                        n=n, details={**details, "method": "exact multinomial"})
        return FitCheck("outcome frequencies", {}, "frequencies of the declared outcomes", r, False)
    try:
        res = chisquare_gof(counts, probs=probs, min_expected=5.0)
        g = g_test(counts, probs=probs, min_expected=5.0)
    except ValueError as e:
        raise InputError(f"outcome frequencies: {e}", "", "use more data") from None
    details.update({"method": "pearson chi-square", "pooled_cells": len(res.pooled_bins), "df": res.df,
                    "g_statistic": float(g.statistic), "g_p_value": float(g.p_value)})
    r = CheckResult(name="", statistic=res.statistic, p_value=res.p_value, p_left=res.p_left,
                    null=f"chi2(df={res.df})", kind="continuous", n=n, details=details)
    return FitCheck("outcome frequencies", {}, "frequencies of the declared outcomes", r, True)


def outcome_deviation_check(counts: np.ndarray, probs: np.ndarray, labels: list[str]) -> FitCheck:
    """Each outcome's count against Binomial(n, p_j), two-sided (doubled smaller tail); Bonferroni
    over the outcomes of positive probability.  Outcomes of zero probability that occur give P_FLOOR."""
    from scipy import stats as sstats

    from ...stats import P_FLOOR, clip_p

    n = int(counts.sum())
    c = counts.astype(np.float64)
    pos = probs > 0
    with np.errstate(all="ignore"):
        right = np.where(c > 0, sstats.binom.sf(c - 1, n, probs), 1.0)
        left = sstats.binom.cdf(c, n, probs)
    two = np.minimum(1.0, 2.0 * np.minimum(right, left))
    two = np.where(pos, two, np.where(c > 0, 0.0, 1.0))
    m = max(1, int(pos.sum()))
    j = int(np.argmin(two))
    pmin = float(two[j])
    p = clip_p(min(1.0, m * max(pmin, 0.0))) if pmin > 0 else P_FLOOR
    r = CheckResult(name="", statistic=float(pmin), p_value=p, null=f"Bonferroni over {m} exact binomial tests",
                    kind="discrete", n=n,
                    details={"outcome": labels[j], "observed": int(counts[j]), "expected": float(n * probs[j]),
                             "probability": float(probs[j]), "p_two_sided": pmin})
    return FitCheck("outcome deviation", {}, "largest deviation of one outcome from its declared probability", r, False)


def serial_groups(probs: np.ndarray, n: int, d: int) -> tuple[np.ndarray, np.ndarray] | None:
    """Merge outcomes (largest probability first) into groups of probability >= max((5/n)^(1/d),
    1/max_groups); returns (group of each outcome, group probabilities) or None with < 2 groups."""
    tau = max((5.0 / n) ** (1.0 / d), 1.0 / SERIAL_MAX_GROUPS[d])
    order = np.argsort(-probs, kind="stable")
    group = np.empty(probs.size, dtype=np.int64)
    gp: list[float] = []
    acc, open_members = 0.0, 0
    for j in order.tolist():  # loop over outcomes (categories), not over data values
        group[j] = len(gp)
        acc += float(probs[j])
        open_members += 1
        if acc >= tau:
            gp.append(acc)
            acc, open_members = 0.0, 0
    if open_members:  # the last, too small group joins the one before it
        if gp:
            group[group == len(gp)] = len(gp) - 1
            gp[-1] += acc
        else:
            gp.append(acc)
    gprobs = np.asarray(gp, dtype=np.float64)
    if gprobs.size < 2:
        return None
    return group, gprobs / gprobs.sum()


def serial_check(idx: np.ndarray, probs: np.ndarray, d: int) -> FitCheck | None:
    """Good's first-difference serial statistic on overlapping d-tuples of outcome groups with the
    declared group probabilities; chi-square g^d - g^(d-1) d.o.f.; both tails.  None when < 2 groups."""
    from ...stats import chi2_tails
    from ..classic.serial import first_difference, overlapping_counts

    n = int(idx.size)
    gg = serial_groups(probs, n, d)
    if gg is None or n < d + 1:
        return None
    group, gprobs = gg
    g = int(gprobs.size)
    sym = group[idx].astype(np.int32)
    counts = overlapping_counts(sym, d, g)
    delta, s_d, s_d1 = first_difference(counts, g, n, gprobs)
    df = g**d - g ** (d - 1)
    right, left = chi2_tails(delta, df)
    r = CheckResult(name="", statistic=float(delta), p_value=right, p_left=left, null=f"chi2(df={df})", n=n,
                    details={"groups": g, "cells": g**d, "min_expected_per_cell": float(n * gprobs.min() ** d),
                             "psi2_d": s_d, "psi2_d_minus_1": s_d1})
    return FitCheck("serial", {"d": d}, f"serial test on overlapping {'pairs' if d == 2 else 'triples'} of outcomes",
                    r, True)


# -- PIT transforms ----------------------------------------------------------------------------------


def continuous_pit(log_f: np.ndarray, log_s: np.ndarray) -> np.ndarray:
    """u = F(x) where F(x) <= 1/2, else 1 - S(x) (= -expm1(ln S)); values rounding to 1.0 become
    the largest double below 1."""
    with np.errstate(all="ignore"):
        u = np.where(log_f <= math.log(0.5), np.exp(log_f), -np.expm1(log_s))
    np.minimum(u, np.nextafter(1.0, 0.0), out=u)
    np.maximum(u, 0.0, out=u)
    return u


def interval_pit(frozen, x: np.ndarray, decimals: int, seed: int) -> np.ndarray:
    """Randomised PIT for values rounded to ``decimals`` decimals: the true value lies in the cell
    [x - h/2, x + h/2), h = 10^-decimals, so u = F(lo) + V (F(hi) - F(lo)) with V ~ U[0, 1) from numpy's
    PCG64 seeded with ``seed``. Under H0 (a continuous variate from the declared law, then rounded) u is
    exactly U(0, 1) -- the randomised PIT of the discretised variable (common practice)."""
    h = 10.0 ** -decimals
    lf_lo, ls_lo = tail_log_areas(frozen, x - h / 2)
    lf_hi, ls_hi = tail_log_areas(frozen, x + h / 2)
    with np.errstate(all="ignore"):
        lower = lf_hi <= math.log(0.5)
        f_lo = np.where(lower, np.exp(lf_lo), -np.expm1(ls_lo))
        width = np.where(lower, np.exp(lf_hi) - np.exp(lf_lo), np.exp(ls_lo) - np.exp(ls_hi))
    v = np.random.Generator(np.random.PCG64(seed)).random(x.size)
    u = np.nan_to_num(f_lo + v * np.maximum(width, 0.0), nan=0.0)
    np.minimum(u, np.nextafter(1.0, 0.0), out=u)
    np.maximum(u, 0.0, out=u)
    return u


def randomised_pit(idx: np.ndarray, cats: Categories, seed: int) -> np.ndarray:
    """u = F(x - 1) + V P(x), V ~ U[0, 1) from numpy's PCG64 seeded with ``seed``: i.i.d. U(0, 1)
    under H0 (randomised probability integral transform; Brockwell 2007, common practice)."""
    v = np.random.Generator(np.random.PCG64(seed)).random(idx.size)
    u = cats.cum_lo[idx] + v * cats.probs[idx]
    np.minimum(u, np.nextafter(1.0, 0.0), out=u)
    return u
