"""Python API: what the command line and users' own CI tests call.

``assay(source, budget=...)`` reads a stream, runs the checks and returns a report object with
``.verdict``, ``.checks``, ``.to_json()`` and ``.exit_code()``.
"""

from __future__ import annotations

import os
from typing import Any, Callable

import numpy as np

from .errors import InputError, check_alpha
from .intake.budget import requested, resolve
from .intake.memory import DEFAULT_BUDGET, stream_from_array  # noqa: F401 (stream_from_array: part of the API)
from .intake.open import SourceSpec, open_stream  # noqa: F401 (open_stream: part of the API)
from .intake.sources import RawSource
from .intake.stream import Stream
from .battery.battery import run_battery, stopped_report
from .signals import signal_guard, signal_name
from .battery.grade import DEFAULT_ALPHA
from .battery.plan import Plan, make_plan
from .battery.run import auto_workers
from .battery.growth import GrowthPlan, make_growth_plan, run_growth, stage_sizes
from .intake.budget import Budget
from .sizes import parse_size
from .model import Report, begin_audit, close_audit
from .battery.conformance import DEFAULT_PIT_SEED, FitPlan, fit_plan, fit_values, generator_uniforms, read_for
from .checks.transform.declared import parse_dist_spec, read_odds



def assay(
    source: str | RawSource | None = None,
    *,
    budget: str | int | None = None,
    fmt: str | None = None,
    value_range: str | tuple[int, int] | None = None,
    command: str | None = None,
    shell: bool = False,
    python: str | None = None,
    gen: str | None = None,
    seed: int | None = None,
    checks: list[str] | None = None,
    skip: list[str] | None = None,
    alpha: float = DEFAULT_ALPHA,
    workers: int | str | None = 1,
    progress: Callable[[str], None] | None = None,
    plan_only: bool = False,
    cluster: str | None = None,
    partial: bool = False,
    argv: list[str] | None = None,
    grow_to: str | int | None = None,
) -> Report | Plan | GrowthPlan:
    """Assay a stream and return its :class:`~rngassay.model.Report`.

    ``source`` is a file path, ``"-"`` for standard input, a :class:`RawSource`, a numpy generator, or a whole
    :class:`~rngassay.intake.open.SourceSpec` (then the other source options are not used); or give one of
    ``command``, ``python``, ``gen`` (with ``seed``). ``budget`` is the number of bytes to assay
    (``"64MiB"`` or an int; default 64 MiB; a file shorter than that is read whole unless ``budget``
    is given). ``checks``/``skip`` select checks by key, family or identifier. With ``plan_only`` the
    :class:`~rngassay.battery.plan.Plan` is returned without reading any data. ``workers``: processes (None:
    one per core; ``"auto"``: in this process for a plan of at most 8 MiB, else one per core); the results are
    the same for any number.

    Bad data found mid-run (e.g. a NaN in a float stream) raises :class:`~rngassay.errors.InputError`; with
    ``partial=True`` the report of what finished is returned instead, marked incomplete, with the error in
    ``report.input_error`` (what the command line files before it shows the error).

    ``grow_to`` (a size): growth to a decision (:mod:`rngassay.battery.growth`): the battery at ``budget``, then
    on fresh data at 2x, 4x, ... up to ``grow_to``, stopping at the first stage where a check fails; the
    family-wise error over all stages stays at ``alpha`` (alpha spending). With
    ``plan_only`` the :class:`~rngassay.battery.growth.GrowthPlan` is returned.

    The report's audit trail records ``argv`` (the command line passes it) or else this call and its options.
    A ``python`` factory without ``seed`` gets a seed drawn from OS entropy; the audit trail records it
    (``report.audit["seeds"]``) so that the run can be repeated.
    """
    import time

    t0 = time.perf_counter()
    start = begin_audit(argv, "rngassay.assay", None if argv is not None else {
        "source": source, "budget": budget, "fmt": fmt, "value_range": value_range, "command": command,
        "shell": shell or None, "python": python, "gen": gen, "seed": seed, "checks": checks, "skip": skip,
        "alpha": alpha, "workers": workers, "cluster": cluster, "grow_to": grow_to})
    check_alpha(alpha)
    executor = None
    if cluster is not None and not plan_only:
        from .battery.cluster import DaskExecutor

        # connect before any data is read (unreachable: one InputError line); run_battery's `with` closes it
        executor = DaskExecutor(cluster).__enter__()
    if isinstance(source, SourceSpec):
        spec = source
    else:
        path = source if isinstance(source, (str, os.PathLike)) or source is None else None
        spec = SourceSpec(path=None if path is None else os.fspath(path), command=command, shell=shell, python=python,
                          gen=gen, seed=seed, fmt=fmt, value_range=value_range,
                          obj=None if path is not None or source is None else source)
    stream = spec.open()
    raw = stream.source  # (the seed of a seeded source is recorded from it)
    budget_req = requested(budget, stream.fmt)
    budget_bytes = budget_req.amount
    growth = None
    if grow_to is not None:  # the source must hold every stage: resolve the total read
        unit = max(8, stream.fmt.itemsize) if stream.fmt.is_binary else 1
        sizes = stage_sizes(budget_bytes, parse_size(grow_to, "--grow-to"), unit)
        growth = (sizes[0], sizes[-1])
        budget_req = Budget(sum(sizes), budget_req.unit, True)
    with signal_guard(), stream:
        try:
            try:
                resolved = resolve(stream, budget_req, plan_only)
            except InputError as e:
                if growth is not None and e.what.startswith("stream is shorter"):
                    e.hint = f"give a smaller --grow-to (growth reads all its stages: {budget_req.amount} in all)"
                raise
            stream, f, budget_bytes = resolved.stream, resolved.stream.fmt, resolved.budget.amount
            grid_note = resolved.grid_note
        except KeyboardInterrupt as e:
            # a stop signal while the source was read ahead (e.g. standard input): nothing was checked,
            # but the run still ends in a report -- "no verdict", marked incomplete
            plan = make_plan(stream.fmt, budget_bytes, checks=checks, skip=skip)
            report = stopped_report(stream, plan, f"interrupted by {signal_name(getattr(e, 'signum', 2))} while "
                                    "reading the source", alpha=alpha, t0=t0,
                                    settings={"workers_used": workers})
            return _close(report, start, raw, plan, checks, skip)
        if growth is not None:
            return _grow(stream, f, growth, alpha=alpha, checks=checks, skip=skip, plan_only=plan_only,
                         workers=workers, progress=progress, executor=executor, t0=t0, grid_note=grid_note,
                         close=lambda rep, plan: _close(rep, start, raw, plan, checks, skip), partial=partial)
        plan = make_plan(f, budget_bytes, checks=checks, skip=skip)
        if plan_only:
            return plan
        workers = auto_workers(plan, workers)
        settings = {"workers_used": workers}
        if executor is not None:
            settings = {"executor": executor.describe()}
        if grid_note:
            settings["value grid"] = grid_note
        report = run_battery(
            stream, plan, alpha=alpha, workers=workers, progress=progress,
            settings=settings, t0=t0, executor=executor,
        )
        _close(report, start, raw, plan, checks, skip)
    if report.input_error is not None and not partial:
        raise report.input_error
    return report


def _grow(stream: Stream, f: Any, growth: tuple[int, int], *, alpha: float, checks: list[str] | None,
          skip: list[str] | None, plan_only: bool, workers: Any, progress: Any, executor: Any, t0: float,
          grid_note: str | None, close: Callable[[Report, Plan], Report], partial: bool) -> Report | GrowthPlan:
    """The growth run of :func:`assay` (its source already resolved for the total of all stages)."""
    from .battery.run import Executor

    gp = make_growth_plan(f, growth[0], growth[1], alpha, checks=checks, skip=skip)
    if plan_only:
        return gp
    workers = auto_workers(gp.plans[-1], workers)
    settings: dict[str, Any] = {"workers_used": workers}
    if executor is not None:
        settings = {"executor": executor.describe()}
    if grid_note:
        settings["value grid"] = grid_note

    def stage(st: Stream, plan: Plan, *, alpha: float, executor: Any, progress: Any) -> Report:
        return run_battery(st, plan, alpha=alpha, workers=workers, progress=progress,
                           settings=settings, t0=t0, executor=executor)

    report = run_growth(stream, gp, run_stage=stage, executor=executor or Executor(workers), progress=progress)
    close(report, gp.plans[len(report.growth["stages"]) - 1])  # what the last stage that ran left out
    if report.input_error is not None and not partial:
        raise report.input_error
    return report


def _close(report: Report, start: dict[str, Any], raw: RawSource, plan: Plan, checks: list[str] | None,
           skip: list[str] | None) -> Report:
    """The audit trail of a battery run: the seed of a seeded source, the selection and what it left out."""
    seeds = source_seeds(raw)
    left: list[dict[str, str]] = []
    if checks or skip:  # the checks the selection left out: those of the same plan without a selection
        from .checks.registry import matches

        try:
            full = make_plan(plan.fmt, plan.budget_bytes, strict_selectors=False)
        except InputError:
            full = plan
        have = {c.id for c in plan.checks} | {s.split(": ")[0] for s in plan.skipped}
        for c in full.checks:
            if c.id in have:
                continue
            why = (f"left out by --skip {','.join(skip)}" if skip and matches(c.key, c.family, c.id, skip)
                   else f"not selected by --checks {','.join(checks or [])}")
            left.append({"check": c.id, "reason": why})
    return close_audit(report, start, seeds=seeds, selection={"checks": checks, "skip": skip}, left_out=left)


def source_seeds(raw: Any) -> list[dict[str, Any]]:
    """The seed a seeded source (``--python``, ``--gen``) used, and where it came from, for the audit trail."""
    kind = getattr(raw, "kind", "")
    if kind not in ("python", "builtin") or not hasattr(raw, "seed_origin"):
        return []
    what = f"--python {raw.name}" if kind == "python" else f"--gen {getattr(raw, 'generator_name', raw.name)}"
    seed = getattr(raw, "seed", None)
    return [{"source": what, "seed": None if seed is None else int(seed), "origin": raw.seed_origin}]


def render_text(report: Report, color: bool = False) -> str:
    """The report as the terminal table the command line prints (worst checks first, verdict, cautions)."""
    from .report.terminal import render

    return render(report, color=color)


def sweep_seeds(*args, argv: list[str] | None = None, **kwargs):
    """The seed sweep; see :func:`rngassay.seeds.sweep.sweep_seeds` (same arguments, returns a Report). The
    report's audit trail records ``argv`` (the command line passes it) or else this call and its options.
    With ``plan_only=True`` the sweep's plan is returned (:class:`~rngassay.seeds.plan.SweepPlan`)."""
    from .seeds.sweep import sweep_seeds as _sweep

    if kwargs.get("plan_only"):  # the plan only: nothing run, nothing to audit
        return _sweep(*args, **kwargs)
    opts = dict(kwargs, **({"seeds": args[0]} if args else {}))
    start = begin_audit(argv, "rngassay.sweep_seeds", None if argv is not None else opts)
    report = _sweep(*args, **kwargs)
    src = report.source or {}
    seeds = [{"source": "seed sweep", "seed": None, "origin": "the sweep's list of seeds",
              "spec": src.get("seed_spec"), "count": src.get("seeds"), "first": src.get("first_seed"),
              "last": src.get("last_seed")}]
    return close_audit(report, start, seeds=seeds,
                       selection={"checks": kwargs.get("checks"), "skip": kwargs.get("skip"),
                                  "per-seed-checks": kwargs.get("per_seed_checks")})


def assay_stream(
    stream: Stream,
    *,
    budget: int | None = None,
    checks: list[str] | None = None,
    skip: list[str] | None = None,
    alpha: float = DEFAULT_ALPHA,
    workers: int | None = 1,
    progress: Callable[[str], None] | None = None,
    command: str = "test",
    strict_selectors: bool = True,
    windows: bool = True,
) -> Report:
    """Run the battery on an already-open finite stream (all of it, or ``budget`` bytes).

    ``strict_selectors=False`` lets selectors that name no battery check pass silently (for callers such
    as ``fit`` whose selectors also name checks of their own)."""
    size = stream.source.size_hint()
    budget_bytes = budget if budget is not None else (size if size is not None else DEFAULT_BUDGET)
    plan = make_plan(stream.fmt, budget_bytes, checks=checks, skip=skip,
                     strict_selectors=strict_selectors, windows=windows)
    return run_battery(stream, plan, alpha=alpha, workers=workers, progress=progress,
                       command=command, settings={"workers_used": workers})


def fit(
    source: Any = None,
    *,
    dist: str | None = None,
    odds: str | os.PathLike | None = None,
    fmt: str | None = None,
    command: str | None = None,
    shell: bool = False,
    python: str | None = None,
    gen: str | None = None,
    seed: int | None = None,
    budget: str | int | None = None,
    limit: int | None = None,
    checks: list[str] | None = None,
    skip: list[str] | None = None,
    battery: bool = True,
    alpha: float = 1e-3,
    workers: int | None = 1,
    pit_seed: int = DEFAULT_PIT_SEED,
    progress: Callable[[str], None] | None = None,
    plan_only: bool = False,
    argv: list[str] | None = None,
) -> Report | FitPlan:
    """Test a supplier's sample against its declared distribution (see :mod:`rngassay.battery.conformance`).

    ``source``: a file path, ``"-"`` (standard input), or the values themselves as a numpy array; or give
    ``command`` or ``python`` (their output read in ``fmt`` like a file: ``text`` (default), ``<f8``, ``<f4``, ...),
    or ``gen`` (a built-in generator: its uniforms in [0, 1), as ``test`` reads it; declare e.g. ``uniform``).
    ``seed`` seeds ``gen`` or ``python``. Exactly one of ``dist`` (a scipy.stats spec) and ``odds`` (a CSV/TOML
    odds file) is required. ``budget``: the total read, as in :func:`assay` -- bytes for binary formats and for
    ``gen``, values for text; a source shorter than it is refused. Without it a source is read whole (at most
    2**25 values), and ``gen``/``python`` (endless) for 64 MiB. ``limit``: at most this many values (a shorter
    source is fine). ``checks``/``skip`` select by key, family ("fit", or the battery's families), identifier,
    ``pit`` (the whole PIT battery) or ``pit: X``. ``battery=False`` runs the fit-specific checks only. With
    ``plan_only`` the values are read and validated and the :class:`~rngassay.battery.conformance.FitPlan` is
    returned without running a check. Returns a :class:`~rngassay.model.Report` (command "fit").
    """
    import time

    t0 = time.perf_counter()
    start = begin_audit(argv, "rngassay.fit", None if argv is not None else {
        "source": source, "dist": dist, "odds": None if odds is None else os.fspath(odds), "fmt": fmt,
        "command": command, "shell": shell or None, "python": python, "gen": gen, "seed": seed, "budget": budget,
        "limit": limit, "checks": checks, "skip": skip, "battery": battery, "alpha": alpha, "workers": workers,
        "pit_seed": pit_seed})
    if (dist is None) == (odds is None):
        raise InputError("give exactly one of --dist and --odds" if dist is not None else "give --dist SPEC or --odds FILE",
                         "", "--dist for a scipy.stats distribution (e.g. --dist 'norm(loc=0, scale=1)'), "
                         "--odds for a table of outcome probabilities")
    check_alpha(alpha)
    decl = parse_dist_spec(dist) if dist is not None else read_odds(odds)  # type: ignore[arg-type]
    if progress:
        progress("reading the values")
    var, raw = _fit_values_read(decl, source, fmt, command, shell, python, gen, seed, budget, limit)
    if plan_only:
        return fit_plan(var, decl, checks=checks, skip=skip, battery=battery)
    report = fit_values(var, decl, checks=checks, skip=skip, battery=battery, alpha=alpha, workers=workers,
                        pit_seed=pit_seed, progress=progress, t0=t0)
    seeds = source_seeds(raw) + [{"source": "--pit-seed, the randomised PIT", "seed": int(pit_seed),
                                  "origin": "the default" if pit_seed == DEFAULT_PIT_SEED else "given"}]
    return close_audit(report, start, seeds=seeds, selection={"checks": checks, "skip": skip})


def _fit_values_read(decl, source, fmt, command, shell, python, gen, seed, budget, limit) -> tuple[Any, Any]:
    """The values a fit runs on, read under the budget rules of :func:`fit`, and the raw source (or None)."""
    from .intake.sources import open_source
    from .intake.variates import MAX_VALUES
    from .sizes import parse_size

    in_memory = isinstance(source, np.ndarray) or (isinstance(source, (list, tuple)) and not isinstance(source, str))
    spec = SourceSpec(path=None if in_memory or source is None else os.fspath(source), command=command, shell=shell,
                      python=python, gen=gen, seed=seed, obj=source if in_memory else None)
    if len(spec.given()) > 1:
        raise InputError("more than one source given", "", "give one of: a file path, '-', --command, --python, --gen")
    spec.check()
    if budget is not None and limit is not None:
        raise InputError("--budget and --limit given", "", "give one: --budget (the total read; a shorter source is "
                         "refused) or --limit (at most N values)")
    if budget is not None and in_memory:
        raise InputError("--budget applies to a source that is read, not to values handed over", "",
                         "slice the array instead")
    nbytes = parse_size(budget, "--budget") if budget is not None else None
    if gen is not None:
        if fmt is not None:
            raise InputError(f"--format {fmt} with --gen: a built-in generator is read in its own format", "",
                             "drop --format (fit takes the generator's uniforms in [0, 1))")
        if decl.kind != "continuous":
            raise InputError(f"--gen {gen} gives uniforms in [0, 1), not outcomes of {decl.spec}", "",
                             "declare a continuous distribution, e.g. --dist uniform")
        return generator_uniforms(gen, seed, nbytes if nbytes is not None else DEFAULT_BUDGET, MAX_VALUES,
                                  explicit=nbytes is not None)
    fmt = fmt or "text"
    from .intake.variates import FORMATS

    if fmt not in FORMATS:
        raise InputError(f"unknown format {fmt!r} for fit", "", "use text, <f8, <f4, >f8 or >f4")
    per = 1 if fmt == "text" else int(fmt[2:])  # values (text) or bytes per value
    if nbytes is None and limit is None and python is not None:  # endless: read as much as test would by default
        limit = min(MAX_VALUES, DEFAULT_BUDGET // per)
    want = None
    if nbytes is not None:
        want = nbytes // per
        if want < 1:
            raise InputError(f"--budget {budget} is less than one {per}-byte value", "", f"e.g. --budget {per * 1000}")
        if want > MAX_VALUES:
            unit = "values" if fmt == "text" else "bytes"
            raise InputError(f"--budget {budget} is above fit's maximum of {MAX_VALUES * per} {unit}", "",
                             "give a smaller --budget")
        limit = want
    raw = None if in_memory else open_source(spec.path, command=command, shell=shell, python=python, seed=seed)
    var = read_for(decl, source if in_memory else raw, fmt=fmt, limit=limit, exact=want is not None)
    if want is not None and var.values.size < want:
        unit = "values" if fmt == "text" else "bytes"
        raise InputError(f"stream is shorter than the budget ({want * per} {unit} needed, "
                         f"{var.values.size * per} available)", str(var.source.get("name", "")),
                         "give a smaller --budget (for text it counts values)")
    return var, raw


def watch(log: str, odds: str | os.PathLike, *, state: str | None = None, once: bool = False, poll: float = 1.0,
          outcome_column: str = "outcome", stake_column: str | None = None, payout_column: str | None = None,
          time_column: str | None = None, log_format: str | None = None, alpha: float = 1e-3, skip_bad: bool = False,
          start_over: bool = False, on_alarm: Callable[[dict], None] | None = None, monitor_module: Any = None):
    """Watch an outcome log (a path, or ``"-"`` for standard input) against the odds file ``odds`` (CSV/TOML, as
    :func:`fit` takes, optionally with prizes). The state (offset, log identity, monitor state, alarms, skipped
    lines) lives in SQLite at ``state`` (default: beside the log, ``LOG.watch.sqlite``; for standard input only
    if given). ``once``: process what is there and return; otherwise follow the file until a stop signal.
    ``on_alarm`` is called with each alarm (a dict) after it is committed. Returns a
    :class:`rngassay.watch.run.WatchResult`. Bad input, a changed odds file or alpha, or a truncated or rotated
    log raise :class:`~rngassay.errors.InputError` (unless ``start_over``, which sets the old state aside)."""
    from .watch.log import Columns
    from .watch.run import watch as _watch

    cols = Columns(outcome=outcome_column, stake=stake_column, payout=payout_column, time=time_column)
    return _watch(os.fspath(log) if log != "-" else "-", os.fspath(odds), state_path=state, once=once, poll=poll,
                  columns=cols, fmt=log_format, alpha=alpha, skip_bad=skip_bad, start_over=start_over,
                  on_alarm=on_alarm, monitor_module=monitor_module)
