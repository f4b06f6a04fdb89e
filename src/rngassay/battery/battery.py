"""The battery: run a plan on a stream, grade, build the report."""

from __future__ import annotations

import dataclasses
import time
from typing import Any, Callable

from ..checks.catalog import load_all
from ..errors import InputError
from ..intake.stream import Stream
from ..model import NO_VERDICT, CheckReport, Report, Round
from . import grade as G
from .plan import Plan
from ..signals import defer_signals, received_signal, signal_guard, signal_name, signals_deferred
from .run import Executor, Outcome, run_plan
from .findings import SampleTap, collect


def run_battery(
    stream: Stream,
    plan: Plan,
    *,
    alpha: float = G.DEFAULT_ALPHA,
    workers: int | None = None,
    progress: Callable[[str], None] | None = None,
    command: str = "test",
    settings: dict[str, Any] | None = None,
    t0: float | None = None,
    executor: Executor | None = None,
) -> Report:
    t0 = time.perf_counter() if t0 is None else t0
    registry = load_all()
    notes: list[str] = list(f"left out {s}" for s in plan.skipped)
    prev_deferred = signals_deferred()
    if executor is None and workers is not None:
        workers = max(1, min(workers, len(plan.checks)))  # no more worker processes than checks
    with signal_guard(), (executor if executor is not None else Executor(workers)) as ex:
        tap = SampleTap(stream)  # keeps the start of the first segment for the findings (battery/findings.py)
        outcomes, complete, reason, stop_error = run_plan(tap, plan, ex, progress=progress)
        if stop_error is not None:
            if not any(r is not None for o in outcomes for r in o.results):  # nothing finished: nothing to file
                stop_error.what += f" (no check finished: {completed_of_planned(outcomes)}; no report written)"
                raise stop_error
            stop_error.what += f" ({completed_of_planned(outcomes)}; the report of what finished is marked incomplete)"
        defer_signals()  # grading and the reports are not cut short by a (second) stop signal
        rounds1 = [G.second_level(o) for o in outcomes]
        done = [(o, r) for o, r in zip(outcomes, rounds1) if r is not None]
        ps = [r.p_value for _, r in done]
        grades, adj = G.holm_grades(ps, alpha)
        m = len(done)
        checks: list[CheckReport] = []
        for (o, r), g, a in zip(done, grades, adj):
            checks.append(_check_report(o, r, g, a, registry))
        # a check that errored in every replicate cannot vouch for anything: it fails, and says why
        for o, r in zip(outcomes, rounds1):
            if r is None and o.errors:
                checks.append(_error_report(o, registry))
    for c in checks:  # findings a check names in words (e.g. the grid the values lie on)
        note = (c.second_level.get("pooled") or {}).get("note")
        if note:
            notes.append(f"{c.id}: {note}")
    if complete and received_signal() is not None:
        complete, reason = False, f"interrupted by {signal_name(received_signal())} while grading"
    if not complete:
        notes.append(f"incomplete run: {reason}; {completed_of_planned(outcomes)}; "
                     + ("the verdict covers only what finished" if checks else "no check finished: no verdict"))
    findings, note = collect(tap, plan.fmt)  # what the first segment shows, in words
    notes += [note] if note else []
    order = {pc.id: i for i, pc in enumerate(plan.checks)}
    checks.sort(key=lambda c: order.get(c.id, 10**9))
    verdict = G.run_verdict([c.grade for c in checks]) if checks else NO_VERDICT
    report = Report(
        command=command,
        source=stream.info().to_dict(),
        budget_bytes=plan.budget_bytes,
        alpha=alpha,
        verdict=verdict,
        combined_p=G.combined_p([c.p_value for c in checks if c.error is None]),
        checks=checks,
        incomplete=not complete,
        elapsed_s=time.perf_counter() - t0,
        plan=plan.to_list(),
        settings=dict(settings or {}, segments=plan.segments,
                      notable_factor=G.NOTABLE_FACTOR),
        notes=notes,
        audit={"completed": completed_counts(outcomes)},
        findings=findings,
    )
    defer_signals(prev_deferred)
    report.input_error = stop_error  # bad data mid-run: the report of what finished, and the error to show
    return report


def stopped_report(stream: Stream, plan: Plan, reason: str, *, alpha: float = G.DEFAULT_ALPHA,
                   command: str = "test", settings: dict[str, Any] | None = None, t0: float | None = None) -> Report:
    """The report of a run stopped before any check ran (e.g. interrupted while the source was read
    ahead): no checks, verdict "no verdict", marked incomplete, with what was read and hashed so far."""
    outcomes = [Outcome(pc, [None] * pc.replicates) for pc in plan.checks]
    notes = [f"left out {s}" for s in plan.skipped]
    notes.append(f"incomplete run: {reason}; {completed_of_planned(outcomes)}; no check finished: no verdict")
    return Report(
        command=command, source=stream.info().to_dict(), budget_bytes=plan.budget_bytes, alpha=alpha,
        verdict=NO_VERDICT, combined_p=None, checks=[], incomplete=True,
        elapsed_s=time.perf_counter() - (t0 if t0 is not None else time.perf_counter()), plan=plan.to_list(),
        settings=dict(settings or {}, segments=plan.segments,
                      notable_factor=G.NOTABLE_FACTOR),
        notes=notes,
        audit={"completed": completed_counts(outcomes)},
    )


def completed_counts(outcomes: list[Outcome]) -> list[dict[str, Any]]:
    """What finished of what was planned, for the audit trail: replicates (over all checks) and checks with
    every replicate finished."""
    planned = sum(len(o.results) for o in outcomes)
    done = sum(1 for o in outcomes for r in o.results if r is not None)
    whole = sum(1 for o in outcomes if o.results and all(r is not None for r in o.results))
    return [{"what": "replicates", "done": done, "planned": planned},
            {"what": "checks complete", "done": whole, "planned": len(outcomes)}]


def completed_of_planned(outcomes: list[Outcome]) -> str:
    """What finished of what was planned, e.g. "completed 11 of 64 replicates (3 of 20 checks whole)"."""
    (r, c) = completed_counts(outcomes)
    return f"completed {r['done']} of {r['planned']} replicates ({c['done']} of {c['planned']} checks whole)"


def _round(r: G.RoundResult, o: Outcome) -> Round:
    return Round(replicates=r.replicates, bytes=o.bytes, p_value=r.p_value, replicate_p=r.replicate_p,
                 statistic=r.statistic, second_level=r.second_level)


def _check_report(o: Outcome, r: G.RoundResult, g: str, a: float, registry) -> CheckReport:
    spec = registry[o.check.key]
    sl = dict(r.second_level)
    if o.errors:
        sl["errors"] = o.errors[:5]
    c = CheckReport.row(o.check.id, o.check.key, o.check.family, o.check.params, o.check.view, spec.kind,
                        statistic=r.statistic, p_value=r.p_value, nbytes=o.bytes, replicates=r.replicates,
                        second_level=sl, round_second_level=r.second_level, replicate_p=r.replicate_p, null=r.null,
                        title=spec.title, seconds=o.seconds)
    c.grade, c.adjusted_p = g, a
    return c


def _error_report(o: Outcome, registry) -> CheckReport:
    spec = registry[o.check.key]
    return CheckReport.row(o.check.id, o.check.key, o.check.family, o.check.params, o.check.view, spec.kind,
                           statistic=None, p_value=1.0, nbytes=o.bytes, replicates=0,
                           second_level={"errors": o.errors[:5]}, title=spec.title,
                           error=o.errors[0] if o.errors else "did not run")
