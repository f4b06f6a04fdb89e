"""Where the sweep's tasks run: in this process, in local worker processes, or on a Dask cluster.

Every task is a pure function of (factory, seeds, settings), so the results are the same whichever
runner runs it; the sweep collects them in task order.
"""

from __future__ import annotations

import concurrent.futures as cf
import os
from dataclasses import dataclass
from typing import Any, Callable

from ..battery.run import Executor, _worker_init
from ..errors import InputError
from .factory import SeedFactory

_FACTORY: SeedFactory | None = None  # the factory of this worker process (local pool: set by the initializer)


def _install(factory: SeedFactory) -> None:
    _worker_init()  # stop signals are the main process's; a SIGTERM from it still ends this worker
    global _FACTORY
    _FACTORY = factory


@dataclass
class TaskFailure:
    """Bad input met inside a task (e.g. the factory failed for one seed), carried back intact."""

    what: str
    where: str
    hint: str

    def error(self) -> InputError:
        return InputError(self.what, self.where, self.hint)


def task_entry(factory: SeedFactory | None, fn: Callable[..., Any], *args: Any) -> Any:
    """Run ``fn(factory, *args)`` in a worker; InputError comes back as a :class:`TaskFailure`."""
    f = factory if factory is not None else _FACTORY
    if f is None:  # pragma: no cover - a pool without its initializer
        raise RuntimeError("no seed factory installed in this worker")
    try:
        return fn(f, *args)
    except InputError as e:
        return TaskFailure(e.what, e.where, e.hint)


class _Lazy:
    """An in-process 'future': the task runs when its result is first asked for."""

    def __init__(self, fn: Callable[..., Any], args: tuple):
        self._fn, self._args = fn, args
        self._done = False
        self._value: Any = None

    def result(self, timeout: float | None = None) -> Any:
        if not self._done:
            self._value = self._fn(*self._args)
            self._done = True
        return self._value

    def cancel(self) -> bool:
        return True


class SweepRunner:
    """``workers`` local processes (1: in this process), or a Dask cluster (``cluster`` address or ``client``)."""

    def __init__(self, factory: SeedFactory, workers: int | None = 1, cluster: str | None = None,
                 client: Any = None):
        if workers is not None and workers < 1:
            raise InputError(f"--workers must be at least 1, got {workers}", "", "e.g. --workers 2")
        self.factory = factory
        self.workers = workers or os.cpu_count() or 1
        self.cluster = cluster
        self.client = client
        self.mode = "dask" if (cluster is not None or client is not None) else ("local" if self.workers > 1 else "serial")
        self._pool: cf.ProcessPoolExecutor | None = None
        self._dask: Any = None
        self.battery_executor: Executor | None = None

    def __enter__(self) -> "SweepRunner":
        if self.mode == "dask":
            from ..battery.cluster import DaskExecutor

            self._dask = DaskExecutor(self.cluster, client=self.client).__enter__()
            self.battery_executor = self._dask
        elif self.mode == "local":
            import multiprocessing as mp

            ctx = mp.get_context("fork") if hasattr(os, "fork") else mp.get_context()
            # fork: the factory reaches the workers without pickling (lambdas and closures work too)
            self._pool = cf.ProcessPoolExecutor(max_workers=self.workers, mp_context=ctx, initializer=_install,
                                                initargs=(self.factory,))
            ex = Executor(self.workers)
            ex._pool = self._pool  # the battery on merged streams shares the same processes
            self.battery_executor = ex
        else:
            self.battery_executor = Executor(1)
        return self

    def __exit__(self, *exc: Any) -> None:
        if self._pool is not None:
            from ..battery.run import received_signal, stop_pool

            if exc[0] is None and received_signal() is None:
                self._pool.shutdown(wait=True, cancel_futures=True)
            else:  # stopped (a signal, an error): workers are ended, never left running
                stop_pool(self._pool)
            self._pool = None
        if self._dask is not None:
            self._dask.__exit__(*exc)
            self._dask = None

    def describe(self) -> str:
        if self.mode == "dask":
            return self._dask.describe() if self._dask is not None else f"dask {self.cluster}"
        if self.mode == "local":
            return f"local processes ({self.workers})"
        return "in-process"

    def submit(self, fn: Callable[..., Any], *args: Any) -> Any:
        if self.mode == "serial":
            return _Lazy(task_entry, (self.factory, fn) + args)
        if self.mode == "local":
            assert self._pool is not None
            return self._pool.submit(task_entry, None, fn, *args)
        return self._dask._pool.submit(task_entry, self.factory, fn, *args)
