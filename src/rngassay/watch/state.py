"""The state of a watch in SQLite (stdlib sqlite3): the run's settings, the position read in the log and the
log's identity, the monitor's state (JSON), every alarm, every skipped line.

One transaction per processed chunk (:meth:`WatchState.commit`): position, monitor state, alarms and skipped
lines are written together, so a crash leaves the state of the last whole chunk and a restart neither rereads
nor double counts.
"""

from __future__ import annotations

import datetime
import json
import os
import sqlite3

from ..errors import InputError

SCHEMA_VERSION = 1

_SCHEMA = """
CREATE TABLE IF NOT EXISTS settings (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS position (id INTEGER PRIMARY KEY CHECK (id = 1), offset INTEGER NOT NULL,
    line INTEGER NOT NULL, outcomes INTEGER NOT NULL, identity TEXT, header TEXT, updated TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS monitor (id INTEGER PRIMARY KEY CHECK (id = 1), state TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS alarms (seq INTEGER PRIMARY KEY AUTOINCREMENT, idx INTEGER NOT NULL, time TEXT,
    line INTEGER, statistic TEXT NOT NULL, value REAL, threshold REAL, tier TEXT, message TEXT, raised TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS skipped (line INTEGER PRIMARY KEY, reason TEXT NOT NULL);
"""

#: Settings a resumed run must share with the state (a change would mix two different watches).
BINDING = ("odds_sha256", "alpha", "columns", "format")


def default_state_path(log_path: str) -> str:
    return os.fspath(log_path) + ".watch.sqlite"


def _now() -> str:
    return datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="seconds")


class WatchState:
    """An open state database. ``path`` None keeps it in memory (standard input without --state)."""

    def __init__(self, path: str | None):
        self.path = path
        if path is not None and os.path.isdir(path):
            raise InputError("state path is a directory", path, "give a file path for --state")
        try:
            self.db = sqlite3.connect(path if path is not None else ":memory:", isolation_level=None)
            self.db.execute("PRAGMA journal_mode=WAL" if path else "PRAGMA journal_mode=MEMORY")
            self.db.executescript(_SCHEMA)
            if not self._get_setting("schema"):
                self._put("settings", ("schema", str(SCHEMA_VERSION)))
        except sqlite3.DatabaseError as e:
            raise InputError(f"cannot use the state database: {e}", path or "memory",
                             "give another --state path, or move the file away") from None

    # -- settings ---------------------------------------------------------------------------------------------------

    def _get_setting(self, key: str) -> str | None:
        row = self.db.execute("SELECT value FROM settings WHERE key = ?", (key,)).fetchone()
        return row[0] if row else None

    def _put(self, table: str, row: tuple) -> None:
        self.db.execute(f"INSERT OR REPLACE INTO {table} VALUES ({', '.join('?' * len(row))})", row)

    def is_new(self) -> bool:
        return self.db.execute("SELECT count(*) FROM position").fetchone()[0] == 0

    def settings(self) -> dict:
        return {k: json.loads(v) for k, v in self.db.execute("SELECT key, value FROM settings WHERE key != 'schema'")}

    def bind(self, settings: dict) -> None:
        """Record the run's settings in a new state, or check that a resumed one has the same (InputError if not)."""
        if self.is_new():
            with self.db:
                self.db.execute("BEGIN")
                for k, v in settings.items():
                    self._put("settings", (k, json.dumps(v, sort_keys=True)))
                self._put("position", (1, 0, 0, 0, None, None, _now()))
            return
        have = self.settings()
        for k in BINDING:
            if k in settings and have.get(k) != settings[k]:
                what = {"odds_sha256": "the odds file differs from the one", "alpha": "--alpha differs from the one",
                        "columns": "the column options differ from those", "format": "the log format differs from the one"}[k]
                raise InputError(f"{what} this state was made with (state: {have.get(k)!r}, now: {settings[k]!r})",
                                 self.path or "", "use the same settings, or --start-over to begin a new state "
                                 "(the old one is kept beside it)")

    # -- position and monitor ---------------------------------------------------------------------------------------

    def position(self) -> dict:
        row = self.db.execute("SELECT offset, line, outcomes, identity, header FROM position WHERE id = 1").fetchone()
        off, line, n, ident, header = row
        return {"offset": off, "line": line, "outcomes": n, "identity": json.loads(ident) if ident else None,
                "header": json.loads(header) if header else None}

    def monitor_state(self) -> dict | None:
        row = self.db.execute("SELECT state FROM monitor WHERE id = 1").fetchone()
        return json.loads(row[0]) if row else None

    def commit(self, *, offset: int, line: int, outcomes: int, identity: dict | None, header: list[str] | None,
               monitor: dict, alarms: list[dict], skipped: list[tuple[int, str]]) -> None:
        """Write one processed chunk in one transaction: position, monitor state, its alarms, its skipped lines."""
        raised = _now()
        with self.db:
            self.db.execute("BEGIN IMMEDIATE")
            self._put("position", (1, offset, line, outcomes, json.dumps(identity) if identity else None,
                                   json.dumps(header) if header is not None else None, raised))
            self._put("monitor", (1, json.dumps(monitor)))
            for a in alarms:
                self.db.execute("INSERT INTO alarms (idx, time, line, statistic, value, threshold, tier, message, raised)"
                                " VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
                                (a["index"], a.get("time"), a.get("line"), a["statistic"], a.get("value"),
                                 a.get("threshold"), a.get("tier"), a.get("message"), raised))
            self.db.executemany("INSERT OR REPLACE INTO skipped VALUES (?, ?)", skipped)

    # -- records ----------------------------------------------------------------------------------------------------

    def alarms(self) -> list[dict]:
        cols = ("index", "time", "line", "statistic", "value", "threshold", "tier", "message", "raised")
        rows = self.db.execute("SELECT idx, time, line, statistic, value, threshold, tier, message, raised FROM alarms "
                               "ORDER BY seq")
        return [dict(zip(cols, r)) for r in rows]

    def skipped(self) -> list[tuple[int, str]]:
        return [tuple(r) for r in self.db.execute("SELECT line, reason FROM skipped ORDER BY line")]

    def close(self) -> None:
        self.db.close()


def set_aside(path: str) -> str | None:
    """Move an existing state file (and its WAL companions) aside for --start-over; the new name, or None."""
    if not os.path.exists(path):
        return None
    stamp = datetime.datetime.now().strftime("%Y%m%dT%H%M%S")
    new, k = f"{path}.{stamp}.old", 1
    while os.path.exists(new):
        new, k = f"{path}.{stamp}-{k}.old", k + 1
    os.replace(path, new)
    for suffix in ("-wal", "-shm"):
        if os.path.exists(path + suffix):
            os.replace(path + suffix, new + suffix)
    return new
