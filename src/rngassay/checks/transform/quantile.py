"""Quantile-transform checks: the uniforms pushed through the quantile functions of several targets.

H0: the uniforms are i.i.d. U[0, 1), so ``X = F^-1(U)`` has distribution F (the inverse-CDF
method; check-values.md §7, common practice).

* Continuous targets (normal, exponential, gamma(a=2), Cauchy): Anderson–Darling test of the
  transformed sample against the target's own CDF, ``A²`` from ``ln F(x)`` and ``ln S(x)`` (each
  accurate in its own tail), p-value from :func:`rngassay.stats.ad_pvalue`.

  Honest note: for an exact inverse-CDF transform ``F(F^-1(u)) = u``, so this is mathematically the
  Anderson–Darling test of the uniforms again (the classic family runs that on all the data).  Its
  value is in what the round trip exposes numerically: values the transform sends to ±infinity or
  to the edge of the support (an exact 0.0 gives -inf for the normal and Cauchy targets), clipped or
  coarse uniforms that pile up on a few extreme quantiles, and quantile functions that lose
  precision.  Values whose ``F`` or ``S`` is 0 after the transform are *left out* of ``A²`` and
  counted in ``details`` (``at_endpoint``): their probability is judged by the ``exact endpoints``
  check, which knows their law; an infinite ``A²`` would overstate the evidence.  ``details``
  also gives the largest round-trip error ``max |F(F^-1(u)) - u|``.
* Discrete targets (Poisson(3), binomial(10, 0.3), geometric(0.2)): Pearson chi-square of the
  outcome counts against the target's probabilities, the rare tail outcomes pooled so every cell
  expects >= 5 (:func:`rngassay.stats.chisquare_gof`); both tails.  For an exact transform the
  counts are those of the uniforms in the intervals ``[F(k-1), F(k))``: a frequency test with
  unequal cells, sensitive to the low and high ends of [0, 1) where the tail outcomes live.  These
  are the sensitive ones against clipping: uniforms kept inside [0.001, 0.999] fail the geometric
  target with p < 1e-40 at 2^16 values, where Anderson-Darling (like the uniform AD test) sees a
  0.1% atom at each end only weakly (p ~ 0.6 in the tests; a 1% atom gives p ~ 3e-4).

Data used: the first ``min(n, 2^16)`` uniforms of the segment for the continuous targets (2^15 for
gamma, whose quantile function is slow), ``min(n, 2^17)`` for the discrete ones.
"""

from __future__ import annotations

import numpy as np

from rngassay.checks.classic.frequency import gof, need, result_name, small_list, uniforms
from rngassay.checks.registry import CheckSpec, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError
from rngassay.stats import ad_pvalue

from ._common import CONTINUOUS_TARGETS, DISCRETE_TARGETS, TARGETS, ad_from_logs

#: Largest number of uniforms one run transforms (the cost is a sort and a few special functions):
#: continuous targets (numerical health, the uniform AD test runs on all data elsewhere), discrete ones.
MAX_VALUES = 1 << 16
MAX_VALUES_DISCRETE = 1 << 17
MAX_VALUES_GAMMA = 1 << 15
#: Fewest uniforms a default run uses.
MIN_VALUES = 1000


def transform(u: np.ndarray, target: str) -> np.ndarray:
    """F^-1(u) for a named target (float64 for continuous targets, int64 outcomes for discrete ones)."""
    t = _target(target)
    if t.kind == "continuous":
        with np.errstate(divide="ignore", invalid="ignore"):
            return t.ppf(np.asarray(u, dtype=np.float64))
    return t.table().ppf(u)


def _target(target: str):
    t = TARGETS.get(target)
    if t is None:
        raise InputError(f"quantile transform: unknown target {target!r}",
                         hint="one of " + ", ".join(TARGETS))
    return t


def check_quantile_transform(data: np.ndarray, target: str = "normal", n: int | None = None) -> CheckResult:
    """Conformance of ``F^-1(U)`` to the target F (see module docstring).

    H0: the uniforms are i.i.d. U[0, 1).  Continuous targets: Anderson–Darling against F (right
    tail; values sent to the edge of the support left out and counted).  Discrete targets:
    Pearson chi-square on the outcome counts, tail pooled (both tails).
    """
    t = _target(target)
    u = uniforms(data, n, "quantile transform")
    need(u.size, 2, f"quantile transform target={target}")
    if t.kind == "continuous":
        return _continuous(u, t)
    return _discrete(u, t)


def _continuous(u: np.ndarray, t) -> CheckResult:
    s = np.sort(u)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        x = t.ppf(s)
        lf = t.logcdf(x)
        ls = t.logsf(x)
    ok = np.isfinite(lf) & np.isfinite(ls)
    kept = int(ok.sum())
    at_endpoint = int(s.size - kept)
    non_finite = int(np.count_nonzero(~np.isfinite(x)))
    if at_endpoint:
        lf, ls, s_ok = lf[ok], ls[ok], s[ok]
    else:
        s_ok = s
    need(kept, 2, f"quantile transform target={t.name} (finite values)")
    a2 = ad_from_logs(lf, ls)
    p = ad_pvalue(a2, kept)
    roundtrip = float(np.max(np.abs(np.exp(lf) - s_ok))) if kept else 0.0
    return CheckResult(
        name=result_name("quantile transform", {"target": t.name}), statistic=a2, p_value=p,
        null=f"anderson-darling A2 (n={kept})", n=int(u.size),
        details={"method": "anderson-darling of F(F^-1(u))", "at_endpoint": at_endpoint,
                 "non_finite": non_finite, "max_roundtrip_error": roundtrip},
    )


def _discrete(u: np.ndarray, t) -> CheckResult:
    table = t.table()
    k = table.ppf(u)
    counts = np.bincount(k - table.lo, minlength=table.pmf.size)
    res = gof(counts, table.pmf, f"quantile transform target={t.name}")
    return CheckResult(
        name=result_name("quantile transform", {"target": t.name}), statistic=res.statistic,
        p_value=res.p_value, p_left=res.p_left, null=f"chi2(df={res.df})", n=int(u.size),
        details={"method": "pearson chi-square on outcome counts", "outcomes": [table.lo, table.hi],
                 "counts": small_list(counts, 64), "pooled_cells": len(res.pooled_bins)},
    )


def _defaults(n: int) -> list[dict]:
    """Every target once when n >= 1000: continuous on min(n, 2^16) uniforms (gamma 2^15),
    discrete on min(n, 2^17)."""
    if n < MIN_VALUES:
        return []
    out = []
    for name in CONTINUOUS_TARGETS:
        cap = MAX_VALUES_GAMMA if name.startswith("gamma") else MAX_VALUES
        out.append({"n": min(n, cap), "target": name})
    for name in DISCRETE_TARGETS:
        out.append({"n": min(n, MAX_VALUES_DISCRETE), "target": name})
    return out


register(CheckSpec(
    key="quantile transform", family="transform", title="inverse-CDF transform conformance",
    view="uniforms", kind="continuous", func=check_quantile_transform,
    values_needed=lambda p: int(p["n"]), default_params=_defaults, both_tails=True,
    source="inverse-CDF method (common practice); Anderson & Darling (1954); Pearson chi-square",
    notes="targets normal, exponential, gamma(a=2), cauchy (Anderson-Darling against F; for an exact "
          "transform this equals the uniform test and guards the numerics), poisson(mu=3), "
          "binomial(n=10 p=0.3), geometric(p=0.2) (chi-square on outcome counts, tail pooled); "
          "at most 2^16 uniforms (gamma 2^15, discrete targets 2^17)",
    max_replicates=16,  # scipy's quantile functions are slow (gamma: ~20 MB/s)
))
