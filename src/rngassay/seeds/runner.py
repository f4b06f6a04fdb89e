"""Where the sweep's tasks run: in this process, in local worker processes, or on a Dask cluster.

Every task is a pure function of (factory, seeds, settings), so the results are the same whichever
runner runs it; the sweep collects them in task order.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from typing import Any, Callable

from ..battery.run import Executor
from ..errors import InputError
from .factory import SeedFactory

_FACTORY: SeedFactory | None = None  # the factory of this worker process (local pool: set by the initializer)


def _install(factory: SeedFactory) -> None:
    """Worker start-up (after the executor's stop-signal set-up): keep the factory for the tasks."""
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


class SweepRunner:
    """``workers`` local processes (1: in this process), or a Dask cluster (``cluster`` address or ``client``).

    A thin layer over the one executor protocol (:class:`rngassay.battery.run.Executor`, or the Dask
    executor): the local pool's workers get the factory once, at start (fork: no pickling), so tasks carry
    only their seeds; in this process and on Dask the factory travels with each task.
    """

    def __init__(self, factory: SeedFactory, workers: int | None = 1, cluster: str | None = None,
                 client: Any = None):
        if workers is not None and workers < 1:
            raise InputError(f"--workers must be at least 1, got {workers}", "", "e.g. --workers 2")
        self.factory = factory
        self.workers = workers or os.cpu_count() or 1
        self.cluster = cluster
        self.client = client
        self.mode = "dask" if (cluster is not None or client is not None) else ("local" if self.workers > 1 else "serial")
        self.executor: Executor | None = None

    @property
    def battery_executor(self) -> Executor | None:
        """The same executor runs the battery on merged streams (the same processes or cluster)."""
        return self.executor

    def __enter__(self) -> "SweepRunner":
        if self.mode == "dask":
            from ..battery.cluster import DaskExecutor

            self.executor = DaskExecutor(self.cluster, client=self.client).__enter__()
        elif self.mode == "local":
            self.executor = Executor(self.workers, initializer=_install, initargs=(self.factory,)).__enter__()
        else:
            self.executor = Executor(1).__enter__()
        return self

    def __exit__(self, *exc: Any) -> None:
        if self.executor is not None:
            self.executor.__exit__(*exc)
            self.executor = None

    def describe(self) -> str:
        if self.executor is not None:
            return self.executor.describe()
        return f"dask {self.cluster}" if self.mode == "dask" else ("in-process" if self.mode == "serial" else
                                                                  f"local processes ({self.workers})")

    @property
    def workers_used(self) -> int | None:
        return self.executor.workers if self.executor is not None else None

    def submit(self, fn: Callable[..., Any], *args: Any) -> Any:
        assert self.executor is not None, "SweepRunner used outside its `with` block"
        if self.mode == "local":
            return self.executor.submit(task_entry, None, fn, *args)
        return self.executor.submit(task_entry, self.factory, fn, *args)
