"""The audit trail in words, shared by the renderers (terminal, HTML, JUnit): how the run was started, when,
with which versions and seeds, the selection, the checks left out (grouped by reason when there are many) and
what completed of what was planned."""

from __future__ import annotations

import re
import shlex
from typing import Any

from ..model import Report, completed_line

VERSION_NAMES = (("rngassay", "rngassay"), ("python", "Python"), ("numpy", "numpy"), ("scipy", "scipy"),
                 ("numba", "numba"))


def command_text(audit: dict[str, Any]) -> str:
    """The command line as run (shell-quoted), or the Python API call with its options."""
    if audit.get("argv"):
        return shlex.join(str(a) for a in audit["argv"])
    if audit.get("invocation") == "Python API":
        opts = ", ".join(f"{k}={v!r}" for k, v in (audit.get("options") or {}).items())
        return f"Python API: {audit.get('call', '')}({opts})"
    return ""


def versions_text(audit: dict[str, Any]) -> str:
    v = audit.get("versions") or {}
    return ", ".join(f"{label} {v[k]}" for k, label in VERSION_NAMES if k in v)


def seed_texts(audit: dict[str, Any]) -> list[str]:
    """One line per seeded source: the seed and where it came from."""
    out = []
    for s in audit.get("seeds") or []:
        seed, src, origin = s.get("seed"), s.get("source", ""), s.get("origin", "")
        if "spec" in s:  # a seed sweep: the list of seeds
            out.append(f"seed sweep {s['spec']} ({s.get('count')} seeds, {s.get('first')} to {s.get('last')})")
        elif seed is None:
            out.append(f"none recorded for {src} ({origin})")
        elif origin == "drawn":
            out.append(f"{seed} for {src}, drawn from OS entropy (repeat with --seed {seed})")
        else:
            out.append(f"{seed} for {src} ({origin})")
    return out


def selection_text(audit: dict[str, Any]) -> str:
    sel = audit.get("selection") or {}
    parts = [f"--{k} {','.join(map(str, v))}" for k, v in sel.items() if v]
    return " ".join(parts) if parts else "all checks that the data allow"


def times_text(audit: dict[str, Any]) -> str:
    return f"{audit.get('started_utc', '?')} to {audit.get('ended_utc', '?')} (UTC)"


def completed_text(report: Report) -> str:
    return completed_line((report.audit or {}).get("completed") or [])


_NUMBER = re.compile(r"\d+(\.\d+)?")


def left_out_groups(entries: list[dict[str, str]]) -> list[tuple[str, list[str]]]:
    """Left-out checks grouped by reason (reasons that differ only in their numbers are one group), in the
    order first seen: [(reason, [check, ...]), ...]."""
    groups: dict[str, tuple[list[str], list[str]]] = {}
    for e in entries:
        reason = str(e.get("reason", ""))
        key = _NUMBER.sub("#", reason)
        reasons, checks = groups.setdefault(key, ([], []))
        reasons.append(reason)
        checks.append(str(e.get("check", "")))
    out = []
    for reasons, checks in groups.values():
        if len(set(reasons)) == 1:
            why = reasons[0]
        elif reasons[0].startswith("needs"):
            why = "needs more data per replicate than the budget gives"
        else:
            why = reasons[0] + " (and similar)"
        out.append((why, checks))
    return out


def left_out_lines(entries: list[dict[str, str]], each_up_to: int = 5, names: int = 4) -> list[str]:
    """The left-out checks in a few lines: each with its reason when there are few, else one line per reason."""
    if len(entries) <= each_up_to:
        return [f"{e.get('check', '')}: {e.get('reason', '')}" for e in entries]
    lines = []
    for why, checks in left_out_groups(entries):
        shown = ", ".join(checks[:names]) + (f" and {len(checks) - names} more" if len(checks) > names else "")
        lines.append(f"{len(checks)} {'check' if len(checks) == 1 else 'checks'} {why}: {shown}"
                     if len(checks) > 1 else f"{checks[0]}: {why}")
    return lines


def trail_rows(report: Report) -> list[tuple[str, str]]:
    """(label, text) rows of the audit trail, in the order the terminal footer and the HTML show them."""
    a = report.audit or {}
    if not a:
        return []
    rows = [("run", command_text(a)), ("time", times_text(a)), ("versions", versions_text(a))]
    rows += [("seed", t) for t in seed_texts(a)]
    rows.append(("selection", selection_text(a)))
    if report.incomplete and a.get("completed"):
        rows.append(("completed", completed_text(report)))
    return rows
