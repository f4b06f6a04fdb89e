"""The watch loop: read new complete lines of an outcome log, map outcomes to declared tiers, feed the monitor,
hand each alarm to the caller, commit the state; then wait for more (follow) or stop (once).

Order within a chunk: monitor update, then one transaction (position, monitor state, alarms, skipped lines), then
the alarms are handed out. A crash before the commit reprocesses the chunk from the saved state (no double
counting); a crash between the commit and the printing loses only the printing (the alarms are on record).
"""

from __future__ import annotations

import hashlib
import os
import sys
import time
from dataclasses import dataclass, field
from typing import Any, Callable

import numpy as np

from ..errors import InputError, check_alpha
from ..signals import Interrupted, armed, defer_signals, received_signal, signal_guard, signals_deferred
from .log import Columns, LineParser, check_same_log, complete_part, identity, sniff_format
from .state import WatchState, default_state_path, set_aside

CHUNK_BYTES = 1 << 20


@dataclass
class WatchResult:
    log: str
    state_path: str | None
    outcomes_total: int = 0
    outcomes_this_run: int = 0
    alarms_this_run: list[dict] = field(default_factory=list)
    alarms_on_record: list[dict] = field(default_factory=list)
    skipped_total: int = 0
    skipped_this_run: int = 0
    offset: int = 0
    stopped_by: int | None = None  # the stop signal that ended a follow, if any
    set_aside: str | None = None   # where --start-over moved the old state
    summary: dict = field(default_factory=dict)
    history: dict = field(default_factory=dict)
    declared: Any = None


def _monitor_module():
    from . import monitor

    return monitor


class _Session:
    """One open watch: the log, its parser, the state and the monitor."""

    def __init__(self, log: str, odds: str, state_path: str | None, columns: Columns, fmt: str | None, alpha: float,
                 skip_bad: bool, start_over: bool, mon: Any):
        self.log, self.is_stdin = log, log == "-"
        self.where = "stdin" if self.is_stdin else log
        if not self.is_stdin:
            if not os.path.exists(log):
                raise InputError("log not found", log, "check the path (or give '-' for standard input)")
            if os.path.isdir(log):
                raise InputError("log is a directory", log, "give the outcome log file")
        if not os.path.isfile(odds):
            raise InputError("odds file not found", odds, "check the --odds path")
        with open(odds, "rb") as f:
            odds_hash = hashlib.sha256(f.read()).hexdigest()
        self.declared = mon.declared_from_odds(odds)
        self.tier_of = {t: i for i, t in enumerate(self.declared.tiers)}
        if state_path is None and not self.is_stdin:
            state_path = default_state_path(log)
        if state_path is not None and os.path.abspath(state_path) == os.path.abspath(log if not self.is_stdin else ""):
            raise InputError("the state path is the log itself", state_path, "give another --state path")
        self.moved = set_aside(state_path) if (start_over and state_path) else None
        self.state = WatchState(state_path)
        self.fmt = fmt or sniff_format("" if self.is_stdin else log, self._first_bytes())
        self.state.bind({"odds_sha256": odds_hash, "alpha": alpha, "columns": columns.as_dict(), "format": self.fmt,
                         "log": os.path.abspath(log) if not self.is_stdin else "-", "odds": os.path.abspath(odds)})
        pos = self.state.position()
        self.offset, self.line, self.n = pos["offset"], pos["line"], pos["outcomes"]
        if self.is_stdin:
            self.offset = 0  # standard input continues the recorded stream: its bytes are all new
        saved = self.state.monitor_state()
        self.monitor = (mon.Monitor.from_state(self.declared, saved) if saved is not None
                        else mon.Monitor(self.declared, alpha=alpha))
        self.parser = LineParser(self.where, self.fmt, columns, header=pos["header"], skip_bad=skip_bad)

    def _first_bytes(self) -> bytes:
        if self.is_stdin:  # look at what has arrived without consuming it (waits for the first bytes)
            stream = getattr(sys.stdin, "buffer", sys.stdin)
            return stream.peek(256)[:256] if hasattr(stream, "peek") else b""
        with open(self.log, "rb") as f:
            return f.read(256)

    def process(self, data: bytes, consumed: int, on_alarm: Callable[[dict], None] | None,
                result: WatchResult) -> None:
        """Process complete lines ``data`` (``consumed`` bytes of the log) and commit them as one chunk."""
        parsed = self.parser.parse(data, self.line + 1)
        tiers = np.empty(len(parsed.outcomes), dtype=np.int64)
        keep = np.ones(len(parsed.outcomes), dtype=bool)
        for k, name in enumerate(parsed.outcomes):
            i = self.tier_of.get(name)
            if i is None:
                what = f"undeclared outcome {name[:40]!r} (declared: {', '.join(self.declared.tiers)[:200]})"
                if not self.parser.skip_bad:
                    raise InputError(what, f"{self.where} line {parsed.lines[k]}",
                                     "fix the log or the odds file (or pass --skip-bad to skip and count such lines)")
                parsed.skipped.append((parsed.lines[k], what))
                keep[k] = False
            else:
                tiers[k] = i
        c = self.parser.columns
        sel = np.flatnonzero(keep)
        alarms: list[dict] = []
        if len(sel):
            stakes = np.asarray(parsed.stakes, dtype=np.float64)[sel] if c.stake else None
            payouts = np.asarray(parsed.payouts, dtype=np.float64)[sel] if c.payout else None
            times = [parsed.times[k] for k in sel] if c.time else None
            alarms = self.monitor.update_many(tiers[sel], stakes, payouts, self.n, times=times)
            lines = [parsed.lines[k] for k in sel]
            for a in alarms:
                j = a["index"] - self.n
                if 0 <= j < len(lines):
                    a.setdefault("line", lines[j])
        self.offset += consumed
        self.line += data.count(b"\n")
        self.n += len(sel)
        ident = None if self.is_stdin else identity(self.log, self.offset)
        self.state.commit(offset=self.offset, line=self.line, outcomes=self.n, identity=ident,
                          header=self.parser.header, monitor=self.monitor.state(), alarms=alarms,
                          skipped=parsed.skipped)
        result.outcomes_this_run += len(sel)
        result.skipped_this_run += len(parsed.skipped)
        result.alarms_this_run.extend(alarms)
        for a in alarms:
            if on_alarm:
                on_alarm(a)


def _read_file_round(s: _Session, on_alarm, result: WatchResult) -> None:
    """Process every complete line now in the file, chunk by chunk (after checking it is still the same log)."""
    saved = s.state.position()["identity"]
    if saved is not None:
        why = check_same_log(s.log, saved, s.offset)
        if why:
            raise InputError(why, s.log, "investigate; to begin again from the start of this log with a new state, "
                             "pass --start-over (the old state is kept beside it)")
    with open(s.log, "rb") as f:
        while True:
            f.seek(s.offset)
            data = complete_part(f.read(CHUNK_BYTES))
            if not data:
                return
            s.process(data, len(data), on_alarm, result)


def _read_stdin(s: _Session, on_alarm, result: WatchResult) -> None:
    stream = getattr(sys.stdin, "buffer", sys.stdin)
    read = getattr(stream, "read1", stream.read)  # read1: what has arrived, without waiting for a full block
    pending = b""
    while True:
        with armed():
            block = read(CHUNK_BYTES)
        if not block:
            break
        pending += block
        data = complete_part(pending)
        if data:
            pending = pending[len(data):]
            s.process(data, len(data), on_alarm, result)
    if pending:  # the last line of a finished stream needs no newline
        s.process(pending + b"\n", len(pending), on_alarm, result)


def watch(log: str, odds: str, *, state_path: str | None = None, once: bool = False, poll: float = 1.0,
          columns: Columns = Columns(), fmt: str | None = None, alpha: float = 1e-3, skip_bad: bool = False,
          start_over: bool = False, on_alarm: Callable[[dict], None] | None = None,
          monitor_module: Any = None) -> WatchResult:
    """Watch ``log`` (a path, or '-' for standard input) against the odds file ``odds``; see the module doc.

    ``once``: process what is there and return; otherwise follow a file (poll every ``poll`` seconds) until a stop
    signal (SIGINT/SIGTERM/SIGHUP), which ends the wait cleanly with the state saved (``stopped_by`` says which).
    Standard input is read to its end either way.
    """
    check_alpha(alpha, 1.0)  # no middle grade here
    if not poll > 0:
        raise InputError(f"--poll must be a positive number of seconds, got {poll}", "", "e.g. --poll 1")
    mon = monitor_module or _monitor_module()
    s = _Session(log, odds, state_path, columns, fmt, alpha, skip_bad, start_over, mon)
    result = WatchResult(log=log, state_path=s.state.path, set_aside=s.moved, declared=s.declared)
    try:
        with signal_guard():
            was_deferred = signals_deferred()
            defer_signals(True)  # a chunk is processed and committed whole; the wait and the reads are interruptible
            try:
                if s.is_stdin:
                    _read_stdin(s, on_alarm, result)
                else:
                    _read_file_round(s, on_alarm, result)
                    while not once and received_signal() is None:
                        with armed():
                            time.sleep(poll)
                        _read_file_round(s, on_alarm, result)
            except Interrupted as e:
                result.stopped_by = e.signum
            finally:
                defer_signals(was_deferred)
            if result.stopped_by is None and received_signal() is not None:
                result.stopped_by = received_signal()
        result.outcomes_total, result.offset = s.n, s.offset
        result.alarms_on_record = s.state.alarms()
        result.skipped_total = len(s.state.skipped())
        result.summary, result.history = s.monitor.summary(), s.monitor.history()
    finally:
        s.state.close()
    return result
