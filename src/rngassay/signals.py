"""Stop signals (a leaf utility: intake, battery, seeds and the command line all use it).

SIGINT, SIGTERM and SIGHUP (Ctrl-C, a CI timeout, a closed terminal) end a run early but never lose it:
the first one raises :class:`Interrupted` (a KeyboardInterrupt) in the main thread, which the runner turns
into an incomplete result; later ones are only recorded, so that grading and writing the reports marked
incomplete cannot be cut short by a second Ctrl-C. The exit status is 128 + the signal number.

A signal that arrives while numba or llvmlite is compiling or loading a kernel is only recorded: raising there
would unwind through a C callback of the compiler and crash the process (seen as exit -11 when a stop signal
came during the first, compiling run of a check). The run then stops at the next check of
:func:`stop_if_signalled` (after each check in this process) or :func:`armed` (each read).
"""

from __future__ import annotations

import contextlib
import os
import signal
import threading
from typing import Any

STOP_SIGNALS = tuple(getattr(signal, n) for n in ("SIGINT", "SIGTERM", "SIGHUP") if hasattr(signal, n))


class Interrupted(KeyboardInterrupt):
    """A stop signal arrived; ``signum`` says which."""

    def __init__(self, signum: int):
        super().__init__(signal_name(signum))
        self.signum = signum


def signal_name(signum: int) -> str:
    try:
        return signal.Signals(signum).name
    except ValueError:  # pragma: no cover
        return f"signal {signum}"


class _Guard:
    depth = 0
    received: int | None = None
    deferred = False
    pid = 0  # the process whose guard this is (a forked worker inherits the state, not the guard)
    saved: dict[int, Any] = {}


def _in_compiler(frame: Any) -> bool:
    """Whether the interrupted code runs inside numba or llvmlite (a kernel being compiled or loaded)."""
    while frame is not None:
        name = frame.f_code.co_filename.replace("\\", "/")
        if "/numba/" in name or "/llvmlite/" in name:
            return True
        frame = frame.f_back
    return False


def _on_signal(signum: int, frame: Any) -> None:
    if _Guard.received is None:
        _Guard.received = signum
        if not _Guard.deferred and not _in_compiler(frame):
            raise Interrupted(signum)
    # a second signal while the report is being made: recorded by the first, ignored


@contextlib.contextmanager
def armed():
    """Within a :func:`signal_guard`: a stop signal raises :class:`Interrupted` here even when signals are
    deferred around it (reading and checking data are interruptible); one that came while deferred raises
    on entry. The deferral state is restored on exit."""
    prev = _Guard.deferred
    _Guard.deferred = False
    try:
        if _Guard.received is not None and _Guard.depth:
            raise Interrupted(_Guard.received)
        yield
    finally:
        _Guard.deferred = prev


def signals_deferred() -> bool:
    return _Guard.deferred


def defer_signals(on: bool = True) -> None:
    """While on (until turned off or the outermost :func:`signal_guard` ends), a stop signal is only
    recorded: grading and writing the reports run to the end; the caller checks :func:`received_signal`."""
    _Guard.deferred = on


def stop_if_signalled() -> None:
    """Raise :class:`Interrupted` for a stop signal that was recorded but not raised (it came while a kernel was
    being compiled), unless signals are deferred. Only in the process that holds the guard, in its main thread."""
    if (_Guard.received is not None and _Guard.depth and not _Guard.deferred and os.getpid() == _Guard.pid
            and threading.current_thread() is threading.main_thread()):
        raise Interrupted(_Guard.received)


def received_signal() -> int | None:
    """The stop signal that arrived inside the current :func:`signal_guard`, if any."""
    return _Guard.received


@contextlib.contextmanager
def signal_guard(ignore_after_stop: bool = False):
    """Turn SIGINT/SIGTERM/SIGHUP into one :class:`Interrupted` for the duration (nestable; main thread
    only, elsewhere a no-op). The previous handlers are restored when the outermost guard ends -- unless
    ``ignore_after_stop`` (the command line, about to exit) and a stop signal came: then later ones are
    ignored, so that a repeated Ctrl-C cannot print a traceback on the way out."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    if _Guard.depth == 0:
        _Guard.received = None
        _Guard.deferred = False
        _Guard.pid = os.getpid()
        _Guard.saved = {}
        for s in STOP_SIGNALS:
            try:
                _Guard.saved[s] = signal.signal(s, _on_signal)
            except (OSError, ValueError):  # pragma: no cover
                pass
    _Guard.depth += 1
    try:
        yield
    finally:
        _Guard.depth -= 1
        if _Guard.depth == 0:
            _Guard.deferred = False
            stopped = ignore_after_stop and _Guard.received is not None
            for s, h in _Guard.saved.items():
                try:
                    signal.signal(s, signal.SIG_IGN if stopped else h if h is not None else signal.SIG_DFL)
                except (OSError, ValueError):  # pragma: no cover
                    pass
            _Guard.saved = {}
