"""Grading: second level over replicates, family-wise control across checks, combined evidence.

Second level (one p-value per check and round)
---------------------------------------------
Each check ran on ``R`` disjoint segments. Where the check reports additive sufficient statistics
(``pooled``: cell counts, z statistics, Poisson or binomial counts, or a ``pool`` function of its own), they
are pooled over the replicates and tested once, as if the check had seen all the data at once (a steady
small deviation across R replicates is then found with the power of the whole sample; summing replicate
chi-squares would let the degrees of freedom grow with R). The round p-value is then the Bonferroni
minimum of that pooled p-value, the Šidák-corrected smallest replicate p-value and, for continuous
statistics, the Kolmogorov–Smirnov test of the replicate p-values (do the replicates agree?).

Checks without pooled quantities keep the earlier rule, the Bonferroni minimum of:

- continuous statistics: (a) Kolmogorov–Smirnov test of the ``R`` first-level p-values against uniform
  (catches p-values piling up near 0 *or* near 1, i.e. too-good fits; KS rather than Anderson–Darling
  because some statistics are lattice-valued and give p = 1 exactly with small but real probability,
  and a single such atom drives Anderson–Darling's log weights to a false rejection), (b) the binomial right tail of
  the number of replicates with p < 0.01, (c) the smallest replicate p-value, Šidák-corrected
  (``1 − (1 − p_min)^R``) — a single blatant failure is not averaged away;
- discrete statistics: never a uniformity test on discrete p-values. When the check reports additive
  sufficient quantities (``pooled``), the replicates are pooled — a sum of Poisson counts is Poisson
  with the summed mean, a sum of independent chi-squares is chi-square with summed degrees of
  freedom, binomial counts with a common p add up — and the pooled count's tail is used (both tails
  where the check says both mean something); plus (c). Without pooled quantities, (c) alone (valid,
  conservative for discrete p-values).

First-level p-values are two-sided (``2 · min(right, left)``) where the registry says both tails count.

Run level
---------
Holm's step-down procedure over the checks' p-values at ``alpha`` (default 0.001): a sound generator fails a
run with probability at most ``alpha``. A check Holm rejects is ``fail``. A check whose Holm-adjusted p-value is
below ``NOTABLE_FACTOR · alpha`` (10 · alpha) but not below ``alpha`` is ``notable``: it would fail at a
family-wise alpha ten times larger, so a sound generator gets a ``notable`` (or worse) check in at most 10 · alpha
of its runs (1 % at the default) -- a calibrated middle grade, nothing more. There is no retest: a user who wants
the question settled grows the run on fresh data (``--grow-to``, :mod:`.growth`), with alpha spent over the
stages.

The headline also carries one combined p-value over all checks: the harmonic mean p-value (Wilson 2019,
PNAS 116:1195–1200, the asymptotically exact version via the Landau distribution), valid under
dependence between checks. It is chosen over the Cauchy combination because the second-level
p-values are often exactly 1 (Bonferroni caps), and a p of 1 swamps the Cauchy statistic, while the
harmonic mean is driven by the small p-values that carry the evidence.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from .. import stats
from ..checks.catalog import load_all
from ..checks.result import CheckResult
from ..model import NO_VERDICT, Report
from .run import Outcome

DEFAULT_ALPHA = 1e-3
NOTABLE_FACTOR = 10.0
PROPORTION_THRESHOLD = 0.01


@dataclass
class RoundResult:
    p_value: float
    replicate_p: list[float]
    statistic: float | None
    second_level: dict[str, Any]
    replicates: int
    null: str


def _first_level_p(r: CheckResult, both: bool) -> float:
    if both and r.p_left is not None:
        return stats.two_sided(r.p_value, r.p_left)
    return stats.clip_p(r.p_value)


def second_level(outcome: Outcome) -> RoundResult | None:
    """Combine the finished replicates of one check; None when no replicate finished."""
    spec = load_all()[outcome.check.key]
    reps = [r for r in outcome.results if r]  # None: did not finish; []: no sub-test applied
    if not reps:
        return None
    # a check may return several sub-results per replicate (e.g. one per state): Bonferroni within it
    per_rep: list[float] = []
    firsts: list[CheckResult] = []
    for rs in reps:
        ps = [_first_level_p(r, spec.both_tails) for r in rs]
        per_rep.append(stats.bonferroni(ps))
        firsts.append(rs[0])
    multi = any(len(rs) > 1 for rs in reps)
    R = len(per_rep)
    parts: dict[str, Any] = {}
    sid = stats.sidak_min(per_rep)
    parts["min_replicate"] = {"p_min": min(per_rep), "p_value": sid}
    if multi:
        parts["subtests"] = max(len(rs) for rs in reps)  # replicate p = Bonferroni over sub-tests
    candidates = [sid]
    null = firsts[0].null
    # the result's own kind decides (a check may fall back to an exact discrete law for small counts)
    continuous = spec.kind == "continuous" and all(r.kind == "continuous" for rs in reps for r in rs)
    sufficient = None
    if not multi and all(r.pooled for r in firsts):
        sufficient = pool_sufficient(spec, firsts)
    if sufficient is not None:
        # the replicates' sufficient statistics are pooled and tested once: a steady small deviation is
        # found as if the check had seen all the data at once
        parts["pooled"] = sufficient
        candidates.append(sufficient["p_value"])
        if continuous and R >= 2:
            # still asks whether the replicates agree with each other (a flaw that changes sign between
            # segments cancels in the pooled table; replicate p-values piling up near 1 mean "too good")
            d, p_ks = stats.ks_uniform(np.asarray(per_rep))
            parts["uniformity"] = {"method": "kolmogorov-smirnov", "statistic": float(d), "p_value": float(p_ks)}
            candidates.append(p_ks)
    elif continuous and not multi:
        if R >= 2:
            d, p_ks = stats.ks_uniform(np.asarray(per_rep))
            parts["uniformity"] = {"method": "kolmogorov-smirnov", "statistic": float(d), "p_value": float(p_ks)}
            candidates.append(p_ks)
        k, right, _left = stats.proportion_below(np.asarray(per_rep), PROPORTION_THRESHOLD)
        parts["proportion_below"] = {"threshold": PROPORTION_THRESHOLD, "count": int(k), "of": R, "p_value": float(right)}
        candidates.append(right)
    p = stats.clip_p(min(1.0, len(candidates) * min(candidates)))
    parts["method"] = f"Bonferroni minimum of {len(candidates)} second-level p-value{'s' if len(candidates) > 1 else ''}"
    statistic = firsts[0].statistic if R == 1 else None
    if "pooled" in parts:
        statistic = parts["pooled"]["statistic"]
    return RoundResult(p, per_rep, None if statistic is None else float(statistic), parts, R, null)


def pool_sufficient(spec: Any, firsts: list[CheckResult]) -> dict[str, Any] | None:
    """Pool the replicates' sufficient statistics and test them once; None when they cannot be pooled.

    - a check with its own ``pool`` (registry) re-runs its test on the summed tables;
    - ``{"counts", "probs"?}``: cell counts add up; one chi-square on the pooled table (df do not grow);
    - ``{"z"}``: independent standard normal statistics, pooled as sum(z) / sqrt(R);
    - Poisson ``{"observed", "mu"}``, chi-square ``{"statistic", "df"}`` and binomial ``{"observed", "n", "p"}``
      totals add up as before.
    """
    both = spec.both_tails
    d0 = firsts[0].pooled or {}
    if not _compatible([f.pooled or {} for f in firsts]):
        return None  # replicates tested different tables (e.g. a fallback form): no pooling
    custom = getattr(spec, "pool", None)
    if custom is not None:
        try:
            r = custom([f.pooled for f in firsts])
        except (KeyError, ValueError, TypeError):
            return None
        p = _first_level_p(r, both)
        out = {"law": r.null + " on pooled tables", "statistic": float(r.statistic), "p_right": float(r.p_value),
               "p_left": float(r.p_left) if r.p_left is not None else None, "p_value": float(p)}
        if r.details.get("note"):
            out["note"] = str(r.details["note"])  # a finding worth a line in the report (e.g. the grid found)
        return out
    if "z" in d0:
        try:
            z = float(np.sum([float(f.pooled["z"]) for f in firsts]) / math.sqrt(len(firsts)))
        except (KeyError, ValueError, TypeError):
            return None
        right, left = stats.normal_tails(z)
        p = stats.clip_p(min(1.0, 2.0 * min(right, left))) if both else stats.clip_p(right)
        return {"law": f"normal: sum of {len(firsts)} z / sqrt({len(firsts)})", "statistic": z,
                "p_right": float(right), "p_left": float(left), "p_value": float(p)}
    return _pool(firsts, both)


def _compatible(pooled: list[dict]) -> bool:
    """Whether the replicates' pooled quantities describe the same table: same keys, same cell
    probabilities, binomial p and degrees of freedom, same number of cells."""
    keys = set(pooled[0])
    for d in pooled[1:]:
        if set(d) != keys:
            return False
        for k in ("probs", "p", "df", "k", "v", "d", "claimed"):
            if k in keys:
                a, b = d[k], pooled[0][k]
                if a is None or b is None:
                    if (a is None) != (b is None):
                        return False
                elif not np.array_equal(np.asarray(a, dtype=float), np.asarray(b, dtype=float)):
                    return False
        if "counts" in keys and np.shape(d["counts"]) != np.shape(pooled[0]["counts"]):
            return False
    return True


def _pool(firsts: list[CheckResult], both: bool) -> dict[str, Any] | None:
    d0 = firsts[0].pooled or {}
    try:
        if "mu" in d0:
            total, mu, right, left = stats.pool_poisson([r.pooled["observed"] for r in firsts], [r.pooled["mu"] for r in firsts])
            out = {"law": f"poisson(mu={mu:.6g})", "statistic": float(total)}
        elif "df" in d0:
            total, df, right, left = stats.pool_chisquare([r.pooled["statistic"] for r in firsts], [r.pooled["df"] for r in firsts])
            out = {"law": f"chi2(df={df:g})", "statistic": float(total)}
        elif "counts" in d0:
            # category counts with equal probabilities: pool by adding counts, then chi-square
            counts = np.sum([np.asarray(r.pooled["counts"], dtype=float) for r in firsts], axis=0)
            probs = d0.get("probs")
            res = stats.chisquare_gof(counts, probs=np.asarray(probs, dtype=float) if probs is not None else np.full(counts.size, 1.0 / counts.size))
            right, left = res.p_value, res.p_left
            out = {"law": f"chi2(df={res.df:g}) on pooled counts", "statistic": float(res.statistic)}
        elif "n" in d0 and "p" in d0:
            total, n, right, left = stats.pool_binomial(
                [r.pooled["observed"] for r in firsts], [r.pooled["n"] for r in firsts], float(d0["p"])
            )
            out = {"law": f"binomial(n={n}, p={d0['p']:.6g})", "statistic": float(total)}
        else:
            return None
    except (KeyError, ValueError, TypeError):
        return None
    p = stats.discrete_two_sided(right, left) if both else stats.clip_p(right)
    out.update({"p_right": float(right), "p_left": float(left), "p_value": float(p)})
    return out


def holm_grades(ps: list[float], alpha: float) -> tuple[list[str], list[float]]:
    """Grades from Holm-adjusted p-values: fail < alpha <= notable < 10 alpha <= pass."""
    if not ps:
        return [], []
    adj = [float(a) for a in stats.holm_adjusted(np.asarray(ps, dtype=float))]
    return [grade_of(a, alpha) for a in adj], adj


def grade_of(adjusted_p: float, alpha: float) -> str:
    if adjusted_p < alpha:
        return "fail"
    if adjusted_p < NOTABLE_FACTOR * alpha:
        return "notable"
    return "pass"


def combined_p(ps: list[float]) -> float | None:
    if not ps:
        return None
    if len(ps) == 1:
        return float(ps[0])
    return float(stats.harmonic_mean_p(np.asarray(ps, dtype=float)))


def run_verdict(grades: list[str]) -> str:
    if "fail" in grades:
        return "fail"
    if "notable" in grades:
        return "notable"
    return "pass"


def graded_report(command: str, rows: list, *, alpha: float, **fields) -> Report:
    """The one way from check rows to a graded report: Holm over every row that ran (a row with an error
    keeps its "fail"), the run's verdict ("no verdict" when no row finished) and the combined p-value.
    ``fields``: the rest of :class:`~rngassay.model.Report` (source, budget_bytes, plan, settings, notes, ...)."""
    graded = [c for c in rows if c.error is None]
    grades, adj = holm_grades([c.p_value for c in graded], alpha)
    for c, g, a in zip(graded, grades, adj):
        c.grade, c.adjusted_p = g, a
    verdict = run_verdict([c.grade for c in rows]) if rows else NO_VERDICT
    return Report(command=command, alpha=alpha, verdict=verdict,
                  combined_p=combined_p([c.p_value for c in graded]), checks=rows, **fields)
