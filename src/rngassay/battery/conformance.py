"""Declared-distribution conformance: the run behind ``rngassay fit SOURCE --dist SPEC | --odds FILE``.

A supplier declares what its variates follow -- a ``scipy.stats`` distribution with its parameters
(``norm(loc=2, scale=3)``, ``poisson(mu=3)``) or a table of outcome probabilities (prize tiers of a
game) -- and hands over a sample.  H0: the values are i.i.d. draws from the declared law.

What runs
---------
The fit-specific checks of :mod:`rngassay.checks.transform.conformance` (family ``fit``): for continuous
declarations ``anderson-darling``, ``tail count q=.. side=..`` for q in 1e-3, 1e-5, 1e-7 (each when
n q >= 1) and ``extreme value``; for discrete declarations (a scipy discrete law, or ``--odds``)
``outcome frequencies``, ``outcome deviation`` and ``serial d=2`` / ``serial d=3`` on the outcomes.

The PIT battery
---------------
The values are mapped to uniforms by the probability integral transform -- ``u = F(x)`` below the
median and ``1 - S(x)`` above it; for discrete laws the randomised PIT ``u = F(x-1) + V P(x)`` with
``V`` uniform from a ``numpy`` PCG64 generator seeded with ``pit_seed`` (recorded in the report
settings) -- and the whole uniform battery runs on them (planned with :func:`.plan.make_plan`, run with
:func:`.battery.run_battery`), testing independence as well as fit.  Their checks are planned with ids
prefixed ``pit: ``.  A PIT value that rounds to 1.0 is stored as the largest double below 1 (the far-tail
checks above see the exact value).  Text and ``<f4`` variates are rounded, so their PIT values repeat by
construction: the ``float resolution`` check is left out of the PIT battery for them (and said so in the
notes).

Grading: Holm's step-down over all checks together (fit-specific and PIT battery) at ``alpha``, by
:func:`.grade.graded_report` -- the same grades and verdict rules as ``rngassay test``.
"""

from __future__ import annotations

import dataclasses
import math
import time
from typing import Any, Callable

import numpy as np

from ..checks.transform.conformance import (FIT_TAIL_LEVELS, FitCheck, anderson_darling_check, continuous_pit,
                                            extreme_value_check, interval_pit, outcome_deviation_check,
                                            outcome_frequency_check, randomised_pit, serial_check,
                                            tail_count_check, tail_log_areas)
from ..checks.transform.declared import Declaration, categories_for, discrete_validator
from ..checks.transform.picture import continuous_picture, discrete_picture
from ..checks.registry import matches
from ..errors import InputError
from ..intake.memory import stream_from_array
from ..intake.variates import Variates, read_variates, variates_from_array
from ..intake.views import decimal_grid
from ..model import CAUTIONS, CheckReport, Report
from .defaults import DEFAULT_PIT_SEED
from .grade import NOTABLE_FACTOR, graded_report

#: Fewest values a fit runs on.
MIN_FIT_VALUES = 50
#: Prefix of the PIT battery's check ids (and of its selectors).
PIT_PREFIX = "pit: "

FIT_CAUTIONS = [
    "A pass is evidence of conformance to the declared distribution at the sample size used, "
    "not a certification.",
    CAUTIONS[1],
    "For gaming, defer to the jurisdiction's technical standards and accredited test laboratories.",
]


def read_for(decl: Declaration, source: Any, **kw: Any) -> Variates:
    """The values of ``source`` (a path, ``"-"``, a RawSource, or the values as an array, list or tuple) read
    as ``decl`` needs them: outcome labels for an odds table, whole numbers of positive probability for a
    scipy discrete law, finite reals for a continuous one. ``kw``: the options of :func:`read_variates`."""
    validate = discrete_validator(decl) if decl.kind == "discrete" else None
    if isinstance(source, np.ndarray) or (isinstance(source, (list, tuple)) and not isinstance(source, str)):
        if decl.kind == "odds":
            return variates_from_array(source, labels=decl.outcomes)
        return variates_from_array(source, validate=validate)
    if decl.kind == "odds":
        return read_variates(source, mode="labels", labels=decl.outcomes, **kw)
    return read_variates(source, mode="numbers", validate=validate, **kw)


def fit_values(
    var: Variates,
    decl: Declaration,
    *,
    checks: list[str] | None = None,
    skip: list[str] | None = None,
    battery: bool = True,
    alpha: float = 1e-3,
    workers: int | None = 1,
    pit_seed: int = DEFAULT_PIT_SEED,
    progress: Callable[[str], None] | None = None,
    t0: float | None = None,
) -> Report:
    """Run the fit on values already read (see :func:`rngassay.api.fit`)."""
    from ..signals import defer_signals

    t0 = time.perf_counter() if t0 is None else t0
    x = var.values
    n = int(x.size)
    if n < MIN_FIT_VALUES:
        raise InputError(
            f"too little data: {n} values; a fit needs at least {MIN_FIT_VALUES} to say anything",
            str(var.source.get("name", "")),
            "supply more values",
        )
    notes: list[str] = []
    if var.truncated:
        notes.append(f"only the first {n} values were used (the source had more)")
    fit_checks: list[FitCheck] = []
    picture: dict[str, Any] = {}  # what the report draws of the values against the declared law
    settings: dict[str, Any] = {"declaration": decl.spec, "declaration_kind": decl.kind, "values": n}
    if progress:
        progress("fit checks on the values")

    def attempt(what: str, make: Callable[[], FitCheck | None]) -> None:
        """Run one fit check; one that cannot run on this sample is left out with a note."""
        try:
            fc = make()
        except InputError as e:
            notes.append(f"{what} left out: {e.what}")
            return
        if fc is not None:
            fit_checks.append(fc)

    interrupted = False
    try:
        u = _fit_checks(decl, x, n, pit_seed, attempt, fit_checks, settings, notes, picture)
    except KeyboardInterrupt:  # a stop signal (Ctrl-C, SIGTERM, SIGHUP): report what finished
        interrupted, u = True, None
        notes.append(f"incomplete run: interrupted during the fit checks; {len(fit_checks)} finished, the PIT "
                     "battery did not run; the verdict covers only what finished")
    # selection of the fit-specific checks
    fit_checks = [fc for fc in fit_checks
                  if (checks is None or _matches(fc.key, fc.id, "fit", checks))
                  and not (skip and _matches(fc.key, fc.id, "fit", skip))]
    nbytes = int(var.source.get("bytes_read", 0))
    rows = [_fit_report(fc, nbytes) for fc in fit_checks]
    plan_items = [{"id": fc.id, "key": fc.key, "family": "fit", "view": "variates", "params": fc.params,
                   "values": n, "bytes": nbytes, "replicates": 1} for fc in fit_checks]
    incomplete = interrupted
    # the uniform battery on the PIT values: its checks, plan and notes come named "pit: ..."
    if battery and not interrupted:
        pit_rep = _pit_battery(u, decl, var, checks, skip, alpha, workers, progress, notes)
        if pit_rep is not None:
            incomplete = incomplete or pit_rep.incomplete  # an interrupted PIT battery makes the fit incomplete
            rows.extend(pit_rep.checks)
            plan_items.extend(pit_rep.plan)
            notes.extend(pit_rep.notes)
            settings["pit_battery"] = {k: pit_rep.settings.get(k) for k in ("segments",)}
            settings["pit_battery"]["bytes"] = pit_rep.budget_bytes
    elif not battery:
        notes.append("the uniform battery on the PIT values was not run (fit-specific checks only)")
    if not rows and not interrupted:
        raise InputError("no check matched the selection", "", "see the check names in a full run, or drop --checks/--skip")
    defer_signals()  # a later stop signal is recorded, not raised: grading and the reports run to the end
    settings.update({"alpha": alpha, "multiple_testing": "Holm over fit and PIT battery checks together",
                     "notable_factor": NOTABLE_FACTOR, "workers_used": workers})
    return graded_report(
        "fit", rows, alpha=alpha, source=var.source, budget_bytes=nbytes, incomplete=incomplete,
        elapsed_s=time.perf_counter() - t0, plan=plan_items, settings=settings, notes=notes,
        cautions=list(FIT_CAUTIONS), fit_picture=picture,
    )


def _fit_checks(decl, x, n, pit_seed, attempt, fit_checks, settings, notes, picture) -> np.ndarray:
    """The fit-specific checks (appended to ``fit_checks``) and the PIT values for the battery."""
    if decl.kind == "continuous":
        picture.update(continuous_picture(decl.frozen, x))
        lf, ls = tail_log_areas(decl.frozen, x)
        attempt("anderson-darling", lambda: anderson_darling_check(lf, ls))
        for q in FIT_TAIL_LEVELS:
            if n * q >= 1.0:
                fit_checks.append(tail_count_check(lf, q, "lower"))
                fit_checks.append(tail_count_check(ls, q, "upper"))
        fit_checks.append(extreme_value_check(lf, ls))
        decimals = decimal_grid(x, max_decimals=8)
        if decimals is not None:
            # rounded values: a plain PIT would put the uniforms on a grid the battery then detects
            u = interval_pit(decl.frozen, x, decimals, pit_seed)
            settings["pit"] = (f"randomised interval PIT for values rounded to {decimals} decimals: "
                               "u = F(x - h/2) + V (F(x + h/2) - F(x - h/2)), h = 10^-decimals")
            settings["pit_seed"] = int(pit_seed)
            notes.append(f"the values lie on a grid of 10^-{decimals}: the PIT battery sees a randomised "
                         "interval PIT (seed recorded); the fit-specific checks see the values as given")
        else:
            u = continuous_pit(lf, ls)
            settings["pit"] = "probability integral transform u = F(x) (1 - S(x) in the upper half)"
        del lf, ls
    else:
        cats = categories_for(decl)
        idx = cats.index(x) if decl.kind == "discrete" else np.asarray(x, dtype=np.int64)
        counts = np.bincount(idx, minlength=len(cats.labels))
        picture.update(discrete_picture(cats.labels, counts, cats.probs))
        attempt("outcome frequencies", lambda: outcome_frequency_check(counts, cats.probs))
        fit_checks.append(outcome_deviation_check(counts, cats.probs, cats.labels))
        for d in (2, 3):
            attempt(f"serial d={d}", lambda d=d: serial_check(idx, cats.probs, d))
        u = randomised_pit(idx, cats, pit_seed)
        settings["pit"] = "randomised probability integral transform u = F(x-1) + V P(x)"
        settings["pit_seed"] = int(pit_seed)
        settings["outcomes"] = len(cats.labels)
    return u


def _fit_report(fc: FitCheck, nbytes: int) -> CheckReport:
    r = fc.result
    p = fc.p
    sl = {"method": "one sample (no replicates)", "p_right": r.p_value, "p_left": r.p_left,
          "details": _jsonable(r.details)}
    stat = r.statistic if math.isfinite(r.statistic) else None
    return CheckReport.row(fc.id, fc.key, "fit", fc.params, "variates", r.kind, statistic=stat, p_value=p,
                           nbytes=nbytes, replicates=1, second_level=sl, round_second_level={}, replicate_p=[p],
                           null=r.null, title=fc.title)


def _jsonable(d: dict[str, Any]) -> dict[str, Any]:
    out = {}
    for k, v in d.items():
        if isinstance(v, (np.integer,)):
            v = int(v)
        elif isinstance(v, (np.floating,)):
            v = float(v)
        if isinstance(v, float) and not math.isfinite(v):
            v = None
        out[k] = v
    return out


def _pit_plan(n: int, decl: Declaration, var: Variates, checks, skip, notes: list[str]):
    """The uniform battery's plan for the ``n`` PIT values (ids prefixed ``pit: ``), or None (and a note) when it
    is skipped or nothing of it can run."""
    from ..intake.formats import parse_format
    from .plan import make_plan

    bsel = _battery_patterns(checks)
    bskip = _battery_patterns(skip) or []
    if bsel is not None and "__all__" in bsel:
        bsel = None
    if "__all__" in bskip:
        notes.append("the uniform battery on the PIT values was skipped (--skip pit)")
        return None
    fmt = str(var.source.get("format"))
    if decl.kind == "continuous" and fmt not in ("<f8", ">f8", "array") and not var.source.get("uniforms"):
        bskip = bskip + ["float resolution"]
        notes.append(f"PIT battery: float resolution left out: {fmt} variates are rounded, so their PIT values "
                     "repeat by construction")
    try:  # windows=False: the PIT values' last bits are rounding of F(x), not randomness
        plan = make_plan(parse_format("<f8"), 8 * int(n), checks=bsel, skip=bskip or None,
                         strict_selectors=False, windows=False)
    except InputError as e:
        if bsel is not None:
            notes.append("no check of the PIT battery matched the selection")
        else:
            notes.append(f"the uniform battery on the PIT values could not run: {e.what}")
        return None
    # the PIT battery's checks are named as this report shows them (plan, rows, notes of what was left out)
    plan.checks = [dataclasses.replace(pc, id=PIT_PREFIX + pc.id) for pc in plan.checks]
    plan.skipped = [PIT_PREFIX + s for s in plan.skipped]
    return plan


def _pit_battery(u, decl, var, checks, skip, alpha, workers, progress, notes) -> Report | None:
    """The uniform battery on the PIT values, planned and run here with the battery's parts; None (and a
    note) when it is skipped or nothing of it can run. Its grades are provisional: the caller grades its
    checks together with the fit-specific ones."""
    from .battery import run_battery

    plan = _pit_plan(int(u.size), decl, var, checks, skip, notes)
    if plan is None:
        return None
    with stream_from_array(u, "<f8", name=f"PIT values of {var.source.get('name')} under {decl.spec}",
                           kind="derived") as stream:
        rep = run_battery(stream, plan, alpha=alpha, workers=workers, progress=progress,
                          command="fit", settings={"workers_used": workers})
    if rep.input_error is not None:  # values made here are valid: bad data would be a fault of ours
        raise rep.input_error
    return rep


@dataclasses.dataclass
class FitPlan:
    """What a fit would run on values already read (``rngassay fit --plan-only``): the fit-specific checks, the
    PIT battery's plan (None: not run) and the total read from the source."""

    declaration: str
    values: int
    bytes_read: int
    source: str
    fit_checks: list[str]
    pit: Any
    notes: list[str]

    def describe(self) -> str:
        lines = [f"fit plan: {len(self.fit_checks)} fit checks"
                 + (f" and {len(self.pit.checks)} PIT battery checks" if self.pit is not None else ""),
                 f"declared: {self.declaration}; source {self.source}",
                 f"reads {self.values} values in all ({self.bytes_read} bytes); the PIT battery runs on the "
                 f"{self.values} PIT values made from them (nothing more is read)", "",
                 "fit checks (one sample each; run when the sample allows):"]
        lines += [f"  {c}" for c in self.fit_checks] or ["  (none selected)"]
        if self.pit is not None:
            lines += ["", "PIT battery:"] + ["  " + ln for ln in self.pit.describe().splitlines()]
        lines += [f"note: {n}" for n in self.notes]
        return "\n".join(lines)


def fit_plan(var: Variates, decl: Declaration, *, checks: list[str] | None = None, skip: list[str] | None = None,
             battery: bool = True) -> FitPlan:
    """The plan of :func:`fit_values` for these values, without running any check."""
    from ..checks.registry import check_id

    n = int(var.values.size)
    if decl.kind == "continuous":
        planned = [("anderson-darling", {})]
        planned += [("tail count", {"q": q, "side": side}) for q in FIT_TAIL_LEVELS if n * q >= 1.0
                    for side in ("lower", "upper")]
        planned.append(("extreme value", {}))
    else:
        planned = [("outcome frequencies", {}), ("outcome deviation", {}), ("serial", {"d": 2}), ("serial", {"d": 3})]
    ids = [check_id(k, p) for k, p in planned
           if (checks is None or _matches(k, check_id(k, p), "fit", checks))
           and not (skip and _matches(k, check_id(k, p), "fit", skip))]
    notes: list[str] = []
    pit = _pit_plan(n, decl, var, checks, skip, notes) if battery else None
    if not battery:
        notes.append("the uniform battery on the PIT values is not run (--no-battery)")
    if not ids and pit is None:
        raise InputError("no check matched the selection", "", "see the check names in a full run, or drop --checks/--skip")
    return FitPlan(decl.spec, n, int(var.source.get("bytes_read", 0)), str(var.source.get("name", "")), ids, pit, notes)


def generator_uniforms(gen: str, seed: int | None, budget_bytes: int, cap: int,
                       explicit: bool = True) -> tuple[Variates, Any]:
    """A built-in generator's output as fit sees it: uniforms in [0, 1), made from ``budget_bytes`` of its output
    read as ``test`` reads it (its own format; the uniform view of :mod:`rngassay.intake.views`), at most ``cap``
    of them (an ``explicit`` budget above that is refused). Returns the values and the raw source (whose seed the audit trail records)."""
    from ..intake.open import open_stream
    from ..intake.views import as_uniforms, input_bytes_per_value

    stream = open_stream(gen=gen, seed=seed)
    f = stream.fmt
    per = input_bytes_per_value(f, "uniforms")  # bytes of output per uniform
    n = int(budget_bytes // per)
    if explicit and n > cap:
        stream.close()
        raise InputError(f"--budget {budget_bytes} bytes is above fit's maximum of {cap} uniforms "
                         f"({int(cap * per)} bytes of --gen {gen})", "", "give a smaller --budget")
    n = min(n, cap)
    if n < 1:
        stream.close()
        raise InputError(f"--budget {budget_bytes} bytes gives no uniform from --gen {gen}", "",
                         f"give at least {int(per)} bytes, e.g. --budget 1MiB")
    with stream:
        vals = stream.read_values(int(n * per) // f.itemsize)
        u = np.ascontiguousarray(as_uniforms(vals, f)[:n], dtype=np.float64)
        info = {**stream.info().to_dict(), "values": int(u.size), "uniforms": f"the uniform view of {f.describe()}"}
    return Variates(u, info, truncated=False), stream.source


def _matches(key: str, cid: str, family: str, patterns: list[str]) -> bool:
    return matches(key, family, cid, patterns)


def _battery_patterns(patterns: list[str] | None) -> list[str] | None:
    """Selectors for the PIT battery: 'pit' = all of it, 'pit: X' = X, plain X = X."""
    if patterns is None:
        return None
    out = []
    for p in patterns:
        s = p.strip()
        low = s.lower()
        if low == "pit":
            out.append("__all__")
        elif low.startswith("pit:"):
            out.append(s[4:].strip())
        else:
            out.append(s)
    return out
