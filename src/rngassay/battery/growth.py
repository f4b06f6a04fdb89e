"""Growth to a decision: the battery at the budget, then on fresh data at 2x, 4x, ... the budget up to a limit,
stopping at the first stage where a check fails.

A user who asks "at what size does my generator fail?" gets the answer from one command: the report names, for
each failing check, the smallest stage size at which it failed, and keeps every stage's p-value as one round of
the check.

Error control: alpha spending
-----------------------------
The stages read disjoint data. Stage ``k`` is graded like a run of its own (Holm's step-down over its checks) at
level ``alpha_k``, where the ``alpha_k`` come from an alpha-spending function of group-sequential design (Lan and
DeMets 1983, "Discrete sequential boundaries for clinical trials", Biometrika 70(3):659-663): with the
information fraction ``t_k`` = bytes read up to and including stage ``k`` over bytes read by all stages,
``alpha_k = A(t_k) - A(t_{k-1})`` and ``A(t) = alpha * ln(1 + (e - 1) t)``, the Pocock-type spending function
(Lan and DeMets 1983; named after Pocock's 1977 equal boundaries -- citation details from memory). Holm controls
the family-wise error of stage ``k`` at ``alpha_k`` under any dependence between its checks, and by the union
bound the chance that a sound source fails any check at any stage is at most ``sum alpha_k = A(1) = alpha``,
whatever the stages' dependence (here they are independent: disjoint data). The Pocock-type function spends
alpha fairly evenly over the information, so an early stage keeps enough level to stop on a gross flaw, which is
what growth is for; O'Brien-Fleming-type spending would leave the first stages almost no level.

The middle grade keeps its meaning within a stage (a Holm-adjusted p-value below ``NOTABLE_FACTOR``
times the stage's level); the next stage is the fresh look at more data.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any, Callable

from ..errors import InputError
from ..intake.formats import Format
from ..model import Report
from ..sizes import format_size
from .plan import Plan, make_plan

#: at most this many stages (2^11 = 2048 times the budget)
MAX_STAGES = 12


def spent(t: float, alpha: float) -> float:
    """The Pocock-type alpha-spending function ``alpha * ln(1 + (e - 1) t)`` (Lan and DeMets 1983), t in [0, 1]."""
    t = min(max(t, 0.0), 1.0)
    return alpha * math.log1p((math.e - 1.0) * t)


def stage_sizes(budget: int, grow_to: int, unit: int = 1) -> list[int]:
    """The stages: budget, 2 budget, 4 budget, ... while at most ``grow_to`` (each a multiple of ``unit``)."""
    if grow_to < 2 * budget:
        raise InputError(f"--grow-to {grow_to} is less than twice the budget ({budget})", "",
                         f"give --grow-to {2 * budget} or more, or leave it out for a single run")
    sizes, s = [], budget
    while s <= grow_to and len(sizes) < MAX_STAGES:
        sizes.append(s - s % unit)
        s *= 2
    if s <= grow_to:
        raise InputError(f"--grow-to allows at most {MAX_STAGES} stages (up to {sizes[-1]} from {budget})", "",
                         "give a larger --budget or a smaller --grow-to")
    return sizes


def stage_alphas(sizes: list[int], alpha: float) -> list[float]:
    """Each stage's level by the spending function on its information fraction (cumulative read over all)."""
    total = float(sum(sizes))
    cum, prev, out = 0.0, 0.0, []
    for s in sizes:
        cum += s
        a = spent(cum / total, alpha)
        out.append(a - prev)
        prev = a
    return out


@dataclass
class GrowthPlan:
    """The stages of a growth run: their sizes (bytes; values for text), levels and battery plans."""

    alpha: float
    sizes: list[int]
    alphas: list[float]
    plans: list[Plan]

    def total(self) -> int:
        return sum(p.bytes_total() for p in self.plans)

    def describe(self) -> str:
        binary = self.plans[0].fmt.is_binary
        size = (lambda n: format_size(n)) if binary else (lambda n: f"{n} values")
        lines = [f"growth: {len(self.sizes)} stages on fresh data, stopping at the first stage where a check fails; "
                 f"reads at most {self.total()} {'bytes' if binary else 'values'}"
                 + (f" ({format_size(self.total())})" if binary else "") + " in all",
                 f"family-wise alpha {self.alpha:g} over all stages and checks: Holm within a stage at its level, "
                 "levels from the Pocock-type alpha-spending function (Lan and DeMets 1983)",
                 "", f"  {'stage':>5} {'size':>12} {'level':>10} {'checks':>7}"]
        for k, (s, a, p) in enumerate(zip(self.sizes, self.alphas, self.plans)):
            lines.append(f"  {k + 1:>5} {size(s):>12} {a:>10.3g} {len(p.checks):>7}")
        lines += ["", "first stage:", self.plans[0].describe()]
        return "\n".join(lines)


def make_growth_plan(fmt: Format, budget: int, grow_to: int, alpha: float, **plan_kw: Any) -> GrowthPlan:
    unit = max(8, fmt.itemsize) if fmt.is_binary else 1
    sizes = stage_sizes(budget, grow_to, unit)
    return GrowthPlan(alpha, sizes, stage_alphas(sizes, alpha), [make_plan(fmt, s, **plan_kw) for s in sizes])


class _Kept:
    """An executor entered once for all stages: each stage's ``with`` leaves it open."""

    def __init__(self, ex: Any):
        self.ex = ex

    def __enter__(self) -> Any:
        return self.ex

    def __exit__(self, *exc: Any) -> None:
        return None


def run_growth(stream: Any, gp: GrowthPlan, *, run_stage: Callable[..., Report], executor: Any,
               progress: Callable[[str], None] | None = None) -> Report:
    """Run the stages in turn (``run_stage(stream, plan, alpha=..., executor=..., progress=...)`` is the battery
    of one stage), stop after the first stage with a failing check or an incomplete stage, and merge the
    stages into one report: the last stage's grades, every stage as a round of each check, the growth record."""
    from .run import Stage

    reports: list[Report] = []
    done_before, total = 0, gp.total()
    with executor as ex:
        for k, (plan, a) in enumerate(zip(gp.plans, gp.alphas)):
            def stage_progress(text: str, k: int = k, before: int = done_before) -> None:
                if progress is None:
                    return
                label = f"stage {k + 1}/{len(gp.plans)} ({format_size(gp.sizes[k])}) {text}"
                d = getattr(text, "done", None)
                progress(Stage(label, before + d, total, text.unit, f"stage {k + 1}") if d is not None else label)

            try:
                rep = run_stage(stream, plan, alpha=a, executor=_Kept(ex), progress=stage_progress)
            except InputError as e:  # bad data before any check of this stage finished: keep the stages before
                if not reports:
                    raise
                reports[-1].input_error = e
                reports[-1].incomplete = True
                reports[-1].notes.append(f"incomplete run: stage {k + 1} stopped by bad input: {e.line()}")
                break
            reports.append(rep)
            done_before += plan.bytes_total()
            if rep.incomplete or rep.input_error is not None or any(c.grade == "fail" for c in rep.checks):
                break
    return merge_stages(gp, reports)


def merge_stages(gp: GrowthPlan, reports: list[Report]) -> Report:
    """One report from the stages that ran (see :func:`run_growth`)."""
    last = reports[-1]
    binary = gp.plans[0].fmt.is_binary
    stages = []
    first_failed: dict[str, int] = {}
    for k, rep in enumerate(reports):
        failed = [c.id for c in rep.checks if c.grade == "fail"]
        for cid in failed:
            first_failed.setdefault(cid, gp.sizes[k])
        stages.append({"stage": k + 1, "size": gp.sizes[k], "level": gp.alphas[k], "verdict": rep.verdict,
                       "checks": len(rep.checks), "failed": failed, "incomplete": rep.incomplete})
    by_id: dict[str, list] = {}
    for rep in reports:
        for c in rep.checks:
            by_id.setdefault(c.id, []).append(c)
    checks = []
    for c in last.checks:
        seen = by_id[c.id]
        checks.append(replace(c, rounds=[r for s in seen for r in s.rounds], bytes=sum(s.bytes for s in seen),
                              seconds=round(sum(s.seconds for s in seen), 4)))
    stopped = next((s for s in stages if s["failed"]), None)
    growth = {
        "alpha": gp.alpha, "spending": "Pocock-type, alpha * ln(1 + (e - 1) t) (Lan and DeMets 1983)",
        "unit": "bytes" if binary else "values", "planned_sizes": gp.sizes, "planned_levels": gp.alphas,
        "stages": stages, "first_failed": first_failed,
        "stopped": (f"stopped at stage {stopped['stage']} ({_size(stopped['size'], binary)}): a check failed"
                    if stopped else ("stopped early: the stage did not complete" if last.incomplete
                                     else f"all {len(gp.sizes)} stages passed")),
    }
    notes = list(last.notes)  # what the last stage left out (a smaller stage leaves out at least as much)
    for cid, size in first_failed.items():
        notes.append(f"{cid}: first failed at {_size(size, binary)} (stage {gp.sizes.index(size) + 1})")
    return replace(last, checks=checks, alpha=gp.alpha, budget_bytes=sum(r.budget_bytes for r in reports),
                   elapsed_s=last.elapsed_s,  # every stage counts from the run's start
                   plan=last.plan, notes=notes, growth=growth,
                   settings=dict(last.settings, growth_stages=len(reports)))


def _size(n: int, binary: bool) -> str:
    return format_size(n) if binary else f"{n} values"
