"""Reading an outcome log incrementally: complete lines from a byte offset, parsed as CSV (with a header) or JSON
lines, and the log's identity (device, inode, size, a hash of the bytes before the offset) for noticing a log that
was truncated, rotated or rewritten between runs.

Only complete lines (ending in a newline) are consumed; a partial last line waits for the rest. Blank lines are
not outcomes and are passed over (they still count as lines for file:line messages).
"""

from __future__ import annotations

import csv
import hashlib
import json
import math
import os
from dataclasses import dataclass, field

from ..errors import InputError

#: How many bytes before the saved offset are hashed to recognise the same log on restart.
TAIL_BYTES = 4096


@dataclass(frozen=True)
class Columns:
    """Names of the log's columns (CSV header names or JSON keys)."""

    outcome: str = "outcome"
    stake: str | None = None
    payout: str | None = None
    time: str | None = None

    def as_dict(self) -> dict:
        return {"outcome": self.outcome, "stake": self.stake, "payout": self.payout, "time": self.time}


@dataclass
class Parsed:
    """The outcomes of a run of complete lines, in log order, with their line numbers; the lines skipped."""

    outcomes: list[str] = field(default_factory=list)
    stakes: list[float] = field(default_factory=list)
    payouts: list[float] = field(default_factory=list)
    times: list[str] = field(default_factory=list)
    lines: list[int] = field(default_factory=list)
    skipped: list[tuple[int, str]] = field(default_factory=list)  # (line number, reason)


def sniff_format(name: str, first_bytes: bytes) -> str:
    """``jsonl`` for a name ending .jsonl/.ndjson/.json or content starting with '{', else ``csv``."""
    low = name.lower()
    if low.endswith((".jsonl", ".ndjson", ".json")):
        return "jsonl"
    if low.endswith((".csv", ".txt")):
        return "csv"
    if not first_bytes.strip():  # nothing to tell it by: guessing would bind the state to a guess
        raise InputError("the log is empty and its name does not say its format", name or "standard input",
                         "give --log-format csv or --log-format jsonl")
    return "jsonl" if first_bytes.lstrip().startswith(b"{") else "csv"


def complete_part(data: bytes) -> bytes:
    """The complete lines at the start of ``data`` (up to and including its last newline)."""
    end = data.rfind(b"\n")
    return data[: end + 1] if end >= 0 else b""


class LineParser:
    """Turns complete lines of one log into outcomes. ``where`` names the log in messages (its path or "stdin").

    For CSV the first non-blank line is the header; ``header`` (a list of names) is set once it has been read and
    is kept in the state, so that a resumed run parses the rest the same way.
    """

    def __init__(self, where: str, fmt: str, columns: Columns, header: list[str] | None = None,
                 skip_bad: bool = False):
        if fmt not in ("csv", "jsonl"):
            raise InputError(f"unknown log format {fmt!r}", "", "use csv or jsonl")
        self.where, self.fmt, self.columns, self.header, self.skip_bad = where, fmt, columns, header, skip_bad
        self._index: dict[str, int] | None = None
        if header is not None:
            self._set_header(header, 0)

    # -- errors -------------------------------------------------------------------------------------------------

    def _bad(self, out: Parsed, line_no: int, what: str, hint: str) -> None:
        if not self.skip_bad:
            raise InputError(what, f"{self.where} line {line_no}", hint + " (or pass --skip-bad to skip and count such lines)")
        out.skipped.append((line_no, what))

    # -- CSV ------------------------------------------------------------------------------------------------------

    def _set_header(self, names: list[str], line_no: int) -> None:
        index = {n: i for i, n in enumerate(names)}
        wanted = [c for c in (self.columns.outcome, self.columns.stake, self.columns.payout, self.columns.time) if c]
        missing = [c for c in wanted if c not in index]
        if missing:
            raise InputError(f"CSV header has no column {missing[0]!r} (columns: {', '.join(names)[:200]})",
                             f"{self.where} line {line_no}" if line_no else self.where,
                             "name the columns with --outcome-column, --stake-column, --payout-column, --time-column")
        self.header, self._index = names, index

    def _fields_csv(self, text: str, line_no: int) -> dict | str:
        try:
            row = next(csv.reader([text], strict=True))
        except csv.Error as e:
            return f"malformed CSV: {e}"
        row = [c.strip() for c in row]
        if self._index is None:
            self._set_header(row, line_no)
            return {}
        if len(row) != len(self.header or ()):
            return f"expected {len(self.header or ())} fields as in the header, got {len(row)}"
        return {name: row[i] for name, i in self._index.items()}

    # -- JSON lines -----------------------------------------------------------------------------------------------

    @staticmethod
    def _fields_json(text: str) -> dict | str:
        try:
            obj = json.loads(text)
        except ValueError as e:
            return f"malformed JSON: {str(e)[:120]}"
        if not isinstance(obj, dict):
            return "a JSON line must be an object such as {\"outcome\": \"win\"}"
        return obj

    # -- both ------------------------------------------------------------------------------------------------------

    def parse(self, data: bytes, first_line: int) -> Parsed:
        """Parse complete lines ``data`` whose first line is line number ``first_line`` (1-based)."""
        out = Parsed()
        c = self.columns
        for k, raw in enumerate(data.split(b"\n")[:-1] if data.endswith(b"\n") else data.split(b"\n")):
            line_no = first_line + k
            try:
                text = raw.decode("utf-8").rstrip("\r")
            except UnicodeDecodeError:
                self._bad(out, line_no, "line is not UTF-8 text", "fix the line")
                continue
            if not text.strip():
                continue
            fields = self._fields_csv(text, line_no) if self.fmt == "csv" else self._fields_json(text)
            if isinstance(fields, str):
                self._bad(out, line_no, fields, "fix the line")
                continue
            if not fields and self.fmt == "csv":
                continue  # the header
            rec = self._record(fields, out, line_no, c)
            if rec is None:
                continue
            out.outcomes.append(rec[0])
            out.stakes.append(rec[1])
            out.payouts.append(rec[2])
            out.times.append(rec[3])
            out.lines.append(line_no)
        return out

    def _record(self, fields: dict, out: Parsed, line_no: int, c: Columns):
        outcome = fields.get(c.outcome)
        if outcome is None or (isinstance(outcome, str) and not outcome.strip()):
            self._bad(out, line_no, f"no outcome in column {c.outcome!r}", f"every line needs a {c.outcome!r} value")
            return None
        if isinstance(outcome, (dict, list)):
            self._bad(out, line_no, f"outcome {str(outcome)[:40]!r} is not a label", "give the tier name or number")
            return None
        outcome = outcome.strip() if isinstance(outcome, str) else str(outcome)
        nums = []
        for col, label in ((c.stake, "stake"), (c.payout, "payout")):
            if col is None:
                nums.append(math.nan)
                continue
            v = fields.get(col)
            try:
                x = float(v)  # type: ignore[arg-type]
                ok = math.isfinite(x) and x >= 0 and not isinstance(v, bool)
            except (TypeError, ValueError):
                ok = False
            if not ok:
                self._bad(out, line_no, f"{label} {str(v)[:40]!r} in column {col!r} is not a number >= 0",
                          f"write the {label} as a plain number such as 2.50")
                return None
            nums.append(x)
        t = fields.get(c.time) if c.time else None
        return outcome, nums[0], nums[1], None if t is None else str(t)


# -- the log's identity ----------------------------------------------------------------------------------------------


def tail_hash(path: str, offset: int) -> str:
    """SHA-256 of the (up to) :data:`TAIL_BYTES` bytes just before ``offset`` in ``path``."""
    start = max(0, offset - TAIL_BYTES)
    with open(path, "rb") as f:
        f.seek(start)
        data = f.read(offset - start)
    return hashlib.sha256(data).hexdigest()


def identity(path: str, offset: int) -> dict:
    """What a later run compares: device and inode, size now, the hash of the bytes before ``offset``."""
    st = os.stat(path)
    return {"dev": st.st_dev, "ino": st.st_ino, "size": st.st_size, "tail_sha256": tail_hash(path, offset)}


def check_same_log(path: str, saved: dict, offset: int) -> str | None:
    """Why ``path`` is no longer the log the state was made from (truncated, rotated or rewritten), or None."""
    try:
        st = os.stat(path)
    except FileNotFoundError:
        return "the log is gone (moved or deleted) since the state was saved"
    if (st.st_dev, st.st_ino) != (saved["dev"], saved["ino"]):
        return "the log was replaced (rotated): its inode changed since the state was saved"
    if st.st_size < offset:
        return f"the log was truncated: it has {st.st_size} bytes, fewer than the {offset} already read"
    if tail_hash(path, offset) != saved["tail_sha256"]:
        return f"the log was rewritten: the bytes before offset {offset} differ from those read"
    return None
