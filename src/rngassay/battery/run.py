"""Running a plan: cut segments, make views, call checks, in-process or in a process pool.

Results are identical for any number of workers: every check is a pure function of its data, the
data a check sees depends only on the plan, and results are collected in plan order.
"""

from __future__ import annotations

import concurrent.futures as cf
from concurrent.futures.process import BrokenProcessPool
import os
import signal
import time
from dataclasses import dataclass, field
from typing import Any, Callable, NamedTuple

import numpy as np

from ..checks.catalog import load_all
from ..checks.result import CheckResult
from ..intake import views
from ..intake.formats import Format
from ..intake.stream import Stream
from ..signals import (STOP_SIGNALS, Interrupted, _Guard, armed, defer_signals,  # noqa: F401 (re-exported)
                       received_signal, signal_guard, signal_name, signals_deferred, stop_if_signalled)
from .plan import Plan, PlannedCheck


WORKER_GRACE_S = 3.0  # after an interrupt: how long running worker tasks may take before workers are terminated


def stop_pool(pool: Any, grace: float = 0.5) -> None:
    """Stop a process pool without waiting for its tasks: queued ones are cancelled, running workers get
    ``grace`` seconds, then SIGTERM, then SIGKILL. Never hangs; a pool that is not a process pool is left."""
    if pool is None or not isinstance(pool, cf.ProcessPoolExecutor):
        return
    procs = list((getattr(pool, "_processes", None) or {}).values())
    pool.shutdown(wait=False, cancel_futures=True)
    deadline = time.monotonic() + grace
    for p in procs:
        p.join(max(0.0, deadline - time.monotonic()))
    for p in procs:
        if p.is_alive():
            p.terminate()
    for p in procs:
        p.join(1.0)
        if p.is_alive():  # pragma: no cover
            p.kill()
            p.join(1.0)


def _init_worker(initializer: Callable[..., None] | None = None, initargs: tuple = ()) -> None:
    _worker_init()
    if initializer is not None:
        initializer(*initargs)


def _worker_init() -> None:
    """Worker processes leave stop signals to the main process (no tracebacks from workers on Ctrl-C); a
    SIGTERM from the main process still ends them."""
    for name, action in (("SIGINT", signal.SIG_IGN), ("SIGHUP", signal.SIG_IGN), ("SIGTERM", signal.SIG_DFL)):
        if hasattr(signal, name):
            signal.signal(getattr(signal, name), action)


class Stage(str):
    """A progress message that also carries counts: ``done`` of ``total`` ``unit`` read (bytes; values for
    text) in the run's current ``stage``. A callback that takes a plain ``str`` gets the message as before."""

    done: int
    total: int
    unit: str
    stage: str

    def __new__(cls, text: str, done: int, total: int, unit: str = "bytes", stage: str = "") -> "Stage":
        obj = super().__new__(cls, text)
        obj.done, obj.total, obj.unit, obj.stage = int(done), int(total), unit, stage
        return obj


class PlanRun(NamedTuple):
    """What a run of a plan returned: complete, or partial with what finished and why it stopped."""

    outcomes: list["Outcome"]
    complete: bool
    reason: str | None
    error: Any = None  # the InputError (bad or missing data) that stopped the run, if one did


@dataclass
class Outcome:
    """First-level results of one planned check, replicate by replicate (None = did not finish)."""

    check: PlannedCheck
    results: list[list[CheckResult] | None] = field(default_factory=list)
    errors: list[str] = field(default_factory=list)
    bytes: int = 0
    seconds: float = 0.0  # time spent in the check itself (timing only; never affects results)


class ViewCache:
    """Views of one segment, made once and shared by the checks that run on it.

    ``limits`` maps a view to the number of input values the checks need of it (the largest need among
    them): the view is made of that prefix only, since capped checks read just the start of a segment.
    """

    def __init__(self, vals: np.ndarray, fmt: Format, limits: dict[str, int] | None = None, segment: int = 0):
        self.vals, self.fmt = vals, fmt
        self.limits = limits or {}
        self.segment = segment  # index of the segment in the run: seeds the text-float dither
        self._cache: dict[Any, Any] = {}

    def get(self, view: str, k: int | None = None, window: str | None = None) -> Any:
        key = (view, k, window)
        if key not in self._cache:
            f, v = self.fmt, self.vals
            lk = view if window is None else f"{view}~{window}"
            if lk in self.limits:
                v = v[: self.limits[lk]]
            out = views.make_view(v, f, view, k, window, self.segment)
            self._cache[key] = out
        return self._cache[key]

    def table(self, table: Any, view: str, n: int) -> Any:
        """A shared table (:class:`~rngassay.checks.registry.SharedTable`) of the first ``n`` values of a view
        (the bits view: its packed bytes), made once per table, view and length and shared by the checks
        computed from it."""
        if (table.order_free and view == "bits" and self.fmt.kind in ("bytes", "words")
                and n % (8 * self.fmt.itemsize) == 0):
            view, n = "bytes", n // 8  # whole words: the same bytes as the bytes view, in another order
        key = ("table", table.name, view, n)
        if key not in self._cache:
            data = self.get("bits")[0] if view == "bits" else self.get(view)
            self._cache[key] = table.make(data, n, view)
        return self._cache[key]


def _from_table(pc: PlannedCheck, cache: ViewCache, spec: Any) -> CheckResult | None:
    """A check whose registry entry has a shared ``table``, computed from the segment's table (one per table,
    view and length: e.g. four counting checks from one byte histogram). None: the check runs its function
    form (a window, a partial byte, or parameters the table cannot serve)."""
    if spec.table is None or "window" in pc.params or pc.view == "integers":
        return None
    table = cache.table(spec.table, pc.view, pc.values)
    return None if table is None else spec.from_table(table, pc.params)


def call_check(pc: PlannedCheck, cache: ViewCache, spec: Any = None) -> list[CheckResult]:
    """Run one planned check on one segment's views; always returns a list of results.

    ``spec`` is the registry entry (looked up when not given)."""
    spec = spec if spec is not None else load_all()[pc.key]
    shared = _from_table(pc, cache, spec)
    if shared is not None:
        return [shared] if isinstance(shared, CheckResult) else list(shared)
    params = dict(pc.params)
    need = pc.values
    window = params.pop("window", None)
    if window == "fraction-tail":
        words, lane_bits = cache.get(pc.view, window=window)
        if lane_bits == 0:
            return []  # no fraction tail in this segment's values: nothing to test (the grid check says why)
        if "lane_bits" in _parameters(spec.func):
            params["lane_bits"] = lane_bits
        else:
            params["lanes"] = list(range(lane_bits))
        res = spec.func(words[:need], **params)
    elif window is not None:
        res = spec.func(cache.get(pc.view, window=window)[:need], **params)
    elif pc.view == "bits":
        packed, nbits = cache.get("bits")
        res = spec.func(packed[: -(-min(nbits, need) // 8)], **params)
    elif pc.view == "integers":
        x, k = cache.get("integers", params.get("k"))
        params["k"] = k
        res = spec.func(x[:need], **params)
    else:
        res = spec.func(cache.get(pc.view)[:need], **params)
    return [res] if isinstance(res, CheckResult) else list(res)


def _parameters(func: Any) -> tuple[str, ...]:
    import inspect

    try:
        return tuple(inspect.signature(func).parameters)
    except (TypeError, ValueError):
        return ()


def view_limits(fmt: Format, checks: list[PlannedCheck]) -> dict[str, int]:
    """Input values each view must cover for these checks (binary formats; integers keep the whole
    segment because rejection sampling drops a data-dependent number of words)."""
    if not fmt.is_binary:
        return {}
    out: dict[str, int] = {}
    for pc in checks:
        if pc.view == "integers":
            continue
        n = -(-pc.bytes // fmt.itemsize)
        n += (-n) % max(1, 8 // fmt.itemsize)  # whole 64-bit words for the word views
        window = pc.params.get("window")
        key = pc.view if window is None else f"{pc.view}~{window}"  # a window is made of what its checks read
        out[key] = max(out.get(key, 0), n)
    return out


def _run_segment_task(vals: np.ndarray, fmt: Format, checks: list[PlannedCheck],
                      segment: int = 0) -> list[tuple[list[CheckResult] | None, str | None, float]]:
    cache = ViewCache(vals, fmt, view_limits(fmt, checks), segment)
    out = []
    for pc in checks:
        t = time.perf_counter()
        try:
            out.append((call_check(pc, cache), None, time.perf_counter() - t))
        except Exception as e:  # one broken check must not take the others down
            out.append((None, f"{type(e).__name__}: {e}", time.perf_counter() - t))
        stop_if_signalled()  # in this process: a signal that came while a kernel was compiled stops here
    return out


IN_PROCESS_BYTES = 8 << 20  # a plan reading at most this much runs in this process when workers are chosen


def auto_workers(plan: Plan, workers: int | str | None) -> int:
    """Worker processes for a plan: ``"auto"`` (the command line's default) is one, in this process, for a small
    plan (starting a pool and loading the kernels into each worker costs more than it saves), otherwise one
    per core; a number is kept. Results are the same for any number of workers."""
    if workers != "auto":
        return int(workers) if workers else (os.cpu_count() or 1)
    return 1 if plan.bytes_total() <= IN_PROCESS_BYTES else (os.cpu_count() or 1)


class _Lazy:
    """The in-process future: the task runs when its result is first asked for (so a stop signal, progress
    and the order of results behave as with a pool)."""

    def __init__(self, fn: Callable[..., Any], args: tuple):
        self._fn, self._args = fn, args
        self._done = False
        self._value: Any = None

    def result(self, timeout: float | None = None) -> Any:
        if not self._done:
            self._value = self._fn(*self._args)
            self._done = True
        return self._value

    def done(self) -> bool:
        return self._done

    def cancel(self) -> bool:
        return True


class Executor:
    """Where tasks run: in this process (``workers=1``) or a local process pool; same results either way.

    The one executor protocol (the Dask executor in :mod:`rngassay.battery.cluster` has it too): a context
    manager with ``workers``, ``parallel``, ``submit(fn, *args)`` returning a future (``result``, ``cancel``),
    ``submit_segment``/``collect`` for the battery's segments and ``in_flight`` (how many segments are checked at
    once while the next is read), ``abort()`` and ``describe()``.
    ``initializer(*initargs)`` runs in every worker process after the stop-signal set-up.
    """

    def __init__(self, workers: int | None = None, initializer: Callable[..., None] | None = None,
                 initargs: tuple = ()):
        self.workers = workers or os.cpu_count() or 1
        self._pool: Any = None
        self._initializer = initializer
        self._initargs = initargs
        self.aborted = False

    def __enter__(self):
        if self.workers > 1:
            import multiprocessing as mp

            # fork: what the initializer gets reaches the workers without pickling (closures work too)
            ctx = mp.get_context("fork") if hasattr(os, "fork") else mp.get_context()
            self._pool = cf.ProcessPoolExecutor(max_workers=self.workers, mp_context=ctx, initializer=_init_worker,
                                                initargs=(self._initializer, self._initargs))
        return self

    def __exit__(self, *exc):
        if self._pool is not None:
            if exc[0] is None and not self.aborted and received_signal() is None:
                self._pool.shutdown(wait=True, cancel_futures=True)
            else:  # stopped (a signal, an error): workers are ended, never left running
                self.abort()
            self._pool = None

    @property
    def parallel(self) -> bool:
        return self._pool is not None

    def describe(self) -> str:
        return f"local processes ({self.workers})" if self.workers > 1 else "in-process"

    def submit(self, fn: Callable[..., Any], *args: Any) -> Any:
        """Run ``fn(*args)`` on a worker; in this process the task runs when its result is asked for."""
        if self._pool is None:
            return _Lazy(fn, args)
        return self._pool.submit(fn, *args)

    def abort(self, grace: float = WORKER_GRACE_S) -> None:
        """Stop the pool without waiting for its tasks: queued ones are cancelled, running workers get
        ``grace`` seconds, then SIGTERM, then SIGKILL. Never hangs."""
        self.aborted = True
        stop_pool(self._pool, grace)

    @property
    def in_flight(self) -> int:
        """Segments being checked at once while the next is read: one per worker (each worker takes a whole
        segment, so its views and shared tables are made once, in one process)."""
        return self.workers if self._pool is not None else 1

    def submit_segment(self, vals: np.ndarray, fmt: Format, checks: list[PlannedCheck], segment: int = 0) -> Any:
        """Start all of one segment's checks on one worker (in this process: run them now); see :meth:`collect`."""
        if self._pool is None:
            return ("done", _run_segment_task(vals, fmt, checks, segment))
        fut = self._pool.submit(_run_segment_task, vals, fmt, checks, segment)
        return ("futures", [list(range(len(checks)))], [fut], len(checks))

    def collect(self, handle: Any, timeout: float | None = None) -> list:
        """Results of a submitted segment, in plan order (``timeout``: seconds to wait in all)."""
        if handle[0] == "done":
            return handle[1]
        _, slices, futs, n = handle
        out: list[Any] = [None] * n
        end = None if timeout is None else time.monotonic() + timeout
        for sl, fut in zip(slices, futs):
            left = None if end is None else max(0.0, end - time.monotonic())
            for j, r in zip(sl, fut.result(left) if left is not None else fut.result()):
                out[j] = r
        return out


def run_plan(
    stream: Stream,
    plan: Plan,
    executor: Executor,
    checks: list[PlannedCheck] | None = None,
    progress: Callable[[str], None] | None = None,
    stage: str = "checks",
) -> "PlanRun":
    """Run (a subset of) the plan's checks over ``plan.segments`` fresh segments of the stream.

    Returns a :class:`PlanRun` (outcomes in plan order, complete?, reason when incomplete, the input error
    that stopped it). Ctrl-C (SIGINT, SIGTERM, SIGHUP inside a :func:`signal_guard`; also one that came
    before the run started), a source that dies and bad data mid-run end the run early: what finished is
    kept and the run is marked incomplete -- a result, never an exception carrying one.
    """
    from ..errors import InputError

    todo = list(checks if checks is not None else plan.checks)
    error = None
    outcomes = [Outcome(pc, [None] * pc.replicates) for pc in todo]
    reason = None
    prev_deferred = _Guard.deferred
    try:
        _Guard.deferred = False
        if _Guard.received is not None and _Guard.depth:
            raise Interrupted(_Guard.received)
        # read (and hash) the next segment while the workers check the ones before it (one per worker)
        from collections import deque

        pending: deque = deque()
        in_flight = executor.in_flight

        def absorb(j: int, active: list[Outcome], handle: Any, timeout: float | None = None) -> None:
            for o, (res, err, sec) in zip(active, executor.collect(handle, timeout)):
                o.bytes += o.check.bytes
                o.seconds += sec
                o.results[j] = res
                if err:
                    o.errors.append(f"replicate {j + 1}: {err}")

        try:
            for j in range(plan.segments):
                vals = _read_segment(stream, plan)
                if progress:
                    unit = "bytes" if plan.fmt.is_binary else "values"
                    progress(Stage(f"{stage}: segment {j + 1}/{plan.segments} read, {len(todo)} checks", (j + 1) *
                                   plan.segment_bytes, plan.segments * plan.segment_bytes, unit, stage))
                active = [o for o in outcomes if j < o.check.replicates]
                handle = executor.submit_segment(vals, plan.fmt, [o.check for o in active], j)
                pending.append((j, active, handle))
                while len(pending) > in_flight:
                    absorb(*pending.popleft())
        except BaseException as e:
            # keep what finished: the segments already being checked still count (after a stop
            # signal they get a grace period in all, then the workers are terminated)
            end = time.monotonic() + WORKER_GRACE_S
            while pending:
                left = max(0.0, end - time.monotonic()) if isinstance(e, KeyboardInterrupt) else None
                try:
                    absorb(*pending.popleft(), timeout=left)
                except BaseException:
                    pass
            raise
        while pending:
            absorb(*pending.popleft())
    except KeyboardInterrupt as e:
        signum = getattr(e, "signum", None) or received_signal()
        reason = "interrupted" + (f" by {signal_name(signum)}" if signum else "")
        executor.abort(grace=0.5)  # the segment being checked already had its grace period
    except InputError as e:
        # bad or missing data mid-run: keep what finished; the caller files it and reports the error
        error, reason = e, f"stopped by bad input: {e.line()}"
    except BrokenProcessPool:
        reason = "a worker process died"
        signum = received_signal()
        if signum:  # the stop signal reached the workers first
            reason = f"interrupted by {signal_name(signum)}"
        executor.abort()
    finally:
        _Guard.deferred = prev_deferred
    return PlanRun(outcomes, reason is None, reason, error)


def _bytes_had(stream: Stream, fmt: Format) -> int:
    """Bytes a binary stream gave: as read, or, for hex input, as decoded (what the plan counts)."""
    return stream.bytes_read if fmt.is_raw else stream.values_read * fmt.itemsize


def _read_segment(stream: Stream, plan: Plan) -> np.ndarray:
    from ..errors import InputError

    n = plan.segment_bytes // plan.fmt.itemsize if plan.fmt.is_binary else plan.segment_bytes
    vals = stream.read_values(n)  # an empty source raises "empty stream" here
    if vals.size < n:  # a pipe or device planned for its --budget ended early
        unit, have = ("bytes", _bytes_had(stream, plan.fmt)) if plan.fmt.is_binary else ("values", stream.values_read)
        size = stream.source.size_hint()  # a file's size when it was opened
        if plan.fmt.is_raw and size is not None and have < size:
            raise InputError(
                f"the file shrank while it was read: it held {size} bytes when opened, and ended after {have}",
                stream.source.where,
                "assay a file that is not being rewritten (copy it first)",
            )
        raise InputError(
            f"stream is shorter than the plan needs (it ended after {have} {unit}; "
            f"the plan reads {plan.bytes_total()} {unit})",
            stream.source.where,
            "give a smaller --budget",
        )
    return vals
