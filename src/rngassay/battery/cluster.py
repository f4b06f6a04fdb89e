"""Running the battery's (and the seed sweep's) tasks on a Dask distributed cluster.

:class:`DaskExecutor` can stand in for :class:`rngassay.battery.run.Executor`: it is a context manager,
has the executor protocol (``submit(fn, *args)`` returning futures with ``.result()``,
``submit_segment``/``collect``, ``describe``). Tasks are the same pure functions the local
process pool runs, so results are identical whichever executor runs them.

Failures: Dask retries a task whose worker died (``distributed.scheduler.allowed-failures``, default 3).
When it gives up (``KilledWorker``) or the connection to the scheduler is lost, ``.result()`` raises
:class:`concurrent.futures.process.BrokenProcessPool`, which the runner turns into an incomplete run
(what finished is kept and the report says so) -- never a silent partial verdict.

Start a cluster (``pip install rngassay[cluster]`` on every machine; the same rngassay version everywhere)::

    dask scheduler                       # on one machine; listens on tcp://HOST:8786
    dask worker tcp://HOST:8786 --nworkers 4 --nthreads 1     # on each machine

and give ``--cluster tcp://HOST:8786``.
"""

from __future__ import annotations

import concurrent.futures as cf
from typing import Any

import numpy as np

from ..errors import InputError
from .run import Executor, _run_segment_task

CONNECT_TIMEOUT_S = 10
_HINT = ("start a scheduler with `dask scheduler` and workers with `dask worker tcp://HOST:8786`, "
         "then give --cluster tcp://HOST:8786")


def import_distributed():
    """The ``distributed`` package, or one clear InputError when it is not installed."""
    try:
        import distributed  # noqa: F401
    except ImportError:
        raise InputError("--cluster needs the dask distributed package, which is not installed", "--cluster",
                         "pip install 'rngassay[cluster]'") from None
    return distributed


_SCHEMES = ("tcp", "tls", "ws", "wss", "ucx")


def validate_address(address: str) -> str:
    """Check the form of a scheduler address before any connection is tried: ``[SCHEME://]HOST:PORT`` with
    SCHEME one of tcp, tls, ws, wss, ucx, HOST a name, IPv4 address or bracketed IPv6 address, and PORT
    1..65535. Returns the address stripped; InputError (one line) for anything else, e.g. 'not a url'."""
    import re

    text = str(address or "").strip()
    if not text:
        raise InputError("empty --cluster address", "--cluster", _HINT)
    shown = text if len(text) <= 80 else text[:80] + "..."
    if text.startswith("inproc://") and not any(ch.isspace() for ch in text):  # an in-process test cluster
        return text
    m = re.fullmatch(r"(?:([A-Za-z][A-Za-z0-9+.-]*)://)?(\[[0-9A-Fa-f:.]+\]|[A-Za-z0-9_.-]+):([0-9]{1,5})",
                     text, flags=re.ASCII)
    if not m or (m.group(1) is not None and m.group(1).lower() not in _SCHEMES) or not 1 <= int(m.group(3)) <= 65535:
        raise InputError(f"--cluster {shown!r} is not a scheduler address", "",
                         "give SCHEME://HOST:PORT with SCHEME tcp, tls, ws, wss or ucx, e.g. tcp://10.0.0.5:8786")
    return text


def connect(address: str, timeout: float = CONNECT_TIMEOUT_S):
    """A ``distributed.Client`` connected to the scheduler at ``address``; InputError when unreachable."""
    address = validate_address(address)
    distributed = import_distributed()
    try:
        client = distributed.Client(address, timeout=f"{timeout}s", set_as_default=False)
    except (OSError, TimeoutError, ValueError) as e:
        raise InputError(f"cannot reach the Dask scheduler: {type(e).__name__}: {e}", f"--cluster {address}",
                         _HINT) from None
    try:
        n = sum(client.nthreads().values())
    except Exception:  # pragma: no cover - a scheduler that dies right after the handshake
        n = 0
    if n == 0:
        try:
            client.wait_for_workers(1, timeout=timeout)
        except Exception:
            client.close()
            raise InputError("the Dask scheduler has no workers", f"--cluster {address}", _HINT) from None
    return client


def _lost(e: BaseException) -> bool:
    """Is this a lost worker or a lost scheduler connection (as opposed to an error raised by the task)?"""
    names = {t.__name__ for t in type(e).__mro__}
    return bool(names & {"KilledWorker", "CommClosedError", "FutureCancelledError", "CancelledError"})


class _Future:
    """A dask future whose ``result()`` reports a lost worker the way a local pool does."""

    def __init__(self, fut: Any):
        self._f = fut

    def result(self, timeout: float | None = None) -> Any:
        try:
            return self._f.result(timeout=timeout)
        except Exception as e:
            if _lost(e):
                raise cf.process.BrokenProcessPool(f"a Dask worker was lost: {type(e).__name__}: {e}") from e
            raise

    def done(self) -> bool:
        return self._f.done()

    def cancel(self) -> bool:
        self._f.cancel()
        return True


class _DaskPool:
    """``submit(fn, *args)`` like a concurrent.futures executor; every task is impure (never cached)."""

    def __init__(self, client: Any):
        self.client = client

    def submit(self, fn, *args, **kwargs) -> _Future:
        return _Future(self.client.submit(fn, *args, pure=False, **kwargs))

    def scatter(self, data: Any) -> Any:
        return self.client.scatter(data, broadcast=False, hash=False)


class DaskExecutor(Executor):
    """The battery's executor on a Dask cluster: ``DaskExecutor("tcp://host:8786")`` or ``client=``.

    ``workers`` (for slicing a segment's checks) defaults to the cluster's total threads; the results do
    not depend on it.
    """

    def __init__(self, address: str | None = None, *, client: Any = None, workers: int | None = None,
                 timeout: float = CONNECT_TIMEOUT_S):
        if address is None and client is None:
            raise InputError("no Dask scheduler address given", "--cluster", _HINT)
        super().__init__(workers or 1)
        self.address = address
        self._client = client
        self._own = client is None
        self._timeout = timeout
        self._requested = workers

    @property
    def client(self) -> Any:
        return self._client

    def __enter__(self):
        if self._client is None:
            self._client = connect(self.address, self._timeout)
        self._pool = _DaskPool(self._client)  # type: ignore[assignment]
        if self._requested is None:
            try:
                self.workers = max(1, sum(self._client.nthreads().values()))
            except Exception:  # pragma: no cover
                self.workers = 1
        return self

    def __exit__(self, *exc):
        if self._own and self._client is not None:
            try:
                self._client.close()
            finally:
                self._client = None
        self._pool = None

    def describe(self) -> str:
        try:
            addr = self._client.scheduler.address if self._client is not None else self.address
        except Exception:  # pragma: no cover
            addr = self.address
        return f"dask {addr}"

    @property
    def in_flight(self) -> int:
        """One segment at a time, spread over the cluster in slices (a cluster's many workers must not make this
        process hold one segment per worker)."""
        return 1

    def submit_segment(self, vals: np.ndarray, fmt, checks, segment: int = 0) -> Any:
        """Start checks on one segment, spread over the cluster in fixed interleaved slices; the segment is
        sent to the cluster once. :meth:`collect` (inherited) returns the results in plan order."""
        if self._pool is None:
            raise RuntimeError("DaskExecutor used outside its `with` block")
        if not checks:
            return ("done", [])
        w = max(1, min(self.workers, len(checks)))
        slices = [list(range(i, len(checks), w)) for i in range(w)]
        data = self._pool.scatter(vals) if len(slices) > 1 else vals
        futs = [self._pool.submit(_run_segment_task, data, fmt, [checks[j] for j in s], segment) for s in slices]
        return ("futures", slices, futs, len(checks))
