"""Compare two reports check by check (``rngassay diff BASE NEW``), matching checks by id.

A report whose checks repeat an id is refused (ValueError): a later passing duplicate must not hide an
earlier failure. (:func:`rngassay.report.files.read_report_json` refuses it earlier, with the file name.)

Each check gets one change label, decided in this order:

1. ``added`` (only in NEW) / ``removed`` (only in BASE);
2. ``new fail``  -- NEW grades it ``fail`` and BASE did not;
3. ``fixed``     -- BASE graded it ``fail`` and NEW does not;
4. ``stronger evidence`` -- the grade rose from ``pass`` to ``notable``, or the grade is the same and
   -log10 p rose by at least ``MARKED`` (3, i.e. p fell by a factor of 1000 or more);
5. ``weaker evidence``   -- the grade fell from ``notable`` to ``pass``, or the grade is the same and
   -log10 p fell by at least ``MARKED``;
6. ``same`` otherwise.

**NEW is worse** (``DiffResult.worse``; exit 1 at the command line) when NEW is marked incomplete, or
when any check

- is a ``new fail``, or was ``added`` with grade ``fail``;
- was ``removed`` (a check that no longer runs can no longer vouch for anything);
- went from ``pass`` to ``notable``;
- or shows markedly stronger evidence, judged on the Holm-adjusted p-values (``adjusted_p``) when both
  reports carry them: -log10 adjusted p rose by at least 3 *and* the new adjusted p is below 0.01.
  Holm's adjustment already accounts for the number of checks, so for two sound streams the chance of
  a false "worse" from this rule is at most about 0.01 per diff, whatever the number of checks.
  Reports without adjusted p-values fall back to the raw ones (rise of 3 and new p below 1e-3); that
  fallback trips falsely with probability about 5e-4 per check.

p-values are clipped to [1e-300, 1] before taking logarithms; a missing or non-finite p-value never
counts as stronger or weaker evidence.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from .html import format_p
from ..model import Report

MARKED = 3.0  # change in -log10 p that counts as marked
WORSE_P = 1e-3  # ... and the new raw p-value must be below this for "worse" (fallback rule)
WORSE_ADJ = 0.01  # ... or the new Holm-adjusted p-value below this (rule used when both have adjusted p)
P_FLOOR = 1e-300
_RANK = {"pass": 0, "notable": 1, "borderline": 1, "fail": 2}  # ("borderline": the middle grade's name before 2e)
_ORDER = ("new fail", "stronger evidence", "added", "removed", "weaker evidence", "fixed", "same")


@dataclass
class DiffRow:
    id: str
    base_grade: str | None
    base_p: float | None
    new_grade: str | None
    new_p: float | None
    change: str
    delta: float | None  # -log10 p(new) - -log10 p(base); positive = stronger evidence in NEW
    worse: bool


@dataclass
class DiffResult:
    rows: list[DiffRow]
    worse: bool
    base_verdict: str | None
    new_verdict: str | None
    base_source: dict[str, Any] = field(default_factory=dict)
    new_source: dict[str, Any] = field(default_factory=dict)
    new_incomplete: bool = False

    def counts(self) -> dict[str, int]:
        return {k: sum(1 for r in self.rows if r.change == k) for k in _ORDER}

    @property
    def same_input(self) -> bool:
        a, b = self.base_source.get("sha256"), self.new_source.get("sha256")
        return bool(a) and a == b


def _as_dict(r: dict[str, Any] | Report) -> dict[str, Any]:
    return r.to_dict() if isinstance(r, Report) else r


def _p(x: Any) -> float | None:
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def _nl(p: float) -> float:
    return -math.log10(min(1.0, max(P_FLOOR, p)))


def _compare(cid: str, b: dict[str, Any] | None, n: dict[str, Any] | None) -> DiffRow:
    bg, ng = (b or {}).get("grade"), (n or {}).get("grade")
    bp, np_ = _p((b or {}).get("p_value")), _p((n or {}).get("p_value"))
    delta = _nl(np_) - _nl(bp) if bp is not None and np_ is not None else None
    if b is None:
        return DiffRow(cid, None, None, ng, np_, "added", None, ng == "fail")
    if n is None:  # a check that vanished can no longer vouch for anything: a gate must notice
        return DiffRow(cid, bg, bp, None, None, "removed", None, True)
    br, nr = _RANK.get(bg, 2), _RANK.get(ng, 2)  # an unknown grade is treated as fail (the safe side)
    marked_up = delta is not None and delta >= MARKED
    marked_down = delta is not None and delta <= -MARKED
    if nr == 2 and br < 2:
        change = "new fail"
    elif br == 2 and nr < 2:
        change = "fixed"
    elif nr > br or (nr == br and marked_up):
        change = "stronger evidence"
    elif nr < br or (nr == br and marked_down):
        change = "weaker evidence"
    else:
        change = "same"
    ba, na = _p(b.get("adjusted_p")), _p(n.get("adjusted_p"))
    if ba is not None and na is not None:
        marked_worse = _nl(na) - _nl(ba) >= MARKED and na < WORSE_ADJ
    else:
        marked_worse = marked_up and np_ is not None and np_ < WORSE_P
    worse = change == "new fail" or (br == 0 and nr == 1) or marked_worse
    return DiffRow(cid, bg, bp, ng, np_, change, delta, worse)


def _by_id(report: dict[str, Any], which: str) -> dict[str, dict[str, Any]]:
    """The report's checks by id; a repeated id is damage (a later passing duplicate must never hide an
    earlier failure), so it raises ValueError."""
    out: dict[str, dict[str, Any]] = {}
    for c in report.get("checks", []):
        if c["id"] in out:
            raise ValueError(f"the {which} report lists check {c['id']!r} twice; a damaged report cannot be compared")
        out[c["id"]] = c
    return out


def diff_reports(base: dict[str, Any] | Report, new: dict[str, Any] | Report) -> DiffResult:
    """Compare NEW against BASE check by check (matched by id); see the module docstring for the rules."""
    b, n = _as_dict(base), _as_dict(new)
    bchecks = _by_id(b, "base")
    nchecks = _by_id(n, "new")
    ids = list(nchecks) + [i for i in bchecks if i not in nchecks]
    rows = [_compare(i, bchecks.get(i), nchecks.get(i)) for i in ids]
    rank = {k: i for i, k in enumerate(_ORDER)}
    rows.sort(key=lambda r: (not r.worse, rank[r.change], -(r.delta or 0.0), r.id))
    return DiffResult(
        rows=rows,
        worse=any(r.worse for r in rows) or bool(n.get("incomplete")),
        new_incomplete=bool(n.get("incomplete")),
        base_verdict=b.get("verdict"),
        new_verdict=n.get("verdict"),
        base_source=dict(b.get("source") or {}),
        new_source=dict(n.get("source") or {}),
    )


def _side(grade: str | None, p: float | None) -> str:
    if grade is None:
        return "\u2014"
    return f"{grade} {format_p(p)}"


def _src(s: dict[str, Any]) -> str:
    sha = str(s.get("sha256") or "")
    return f"{s.get('name', '?')} (sha256 {sha[:12]}\u2026)" if sha else str(s.get("name", "?"))


def render_diff_text(result: DiffResult, show_same: bool = False) -> str:
    """Plain-text rendering: a headline, one line per changed check (worse ones first), and the rule used."""
    r = result
    lines = [
        f"base: {_src(r.base_source)}  verdict {r.base_verdict}",
        f"new:  {_src(r.new_source)}  verdict {r.new_verdict}",
    ]
    if r.same_input:
        lines.append("both reports are of the same input (same SHA-256)")
    c = r.counts()
    lines.append(", ".join(f"{v} {k}" for k, v in c.items() if v) or "no checks in either report")
    n_worse = sum(1 for x in r.rows if x.worse)
    if r.new_incomplete:
        lines.append("new is worse: the new report is marked incomplete (an interrupted or failed run)")
    if r.worse and n_worse:
        lines.append(f"new is worse: {n_worse} check{'s' if n_worse != 1 else ''} now show{'s' if n_worse == 1 else ''} "
                     "more evidence against randomness than in the base report, or no longer ran")
    else:
        lines.append("new is not worse than base")
    shown = [x for x in r.rows if show_same or x.change != "same"]
    if shown:
        w = max(len(x.id) for x in shown)
        w = min(max(w, 5), 60)
        lines.append("")
        lines.append(f"  {'change':<18} {'check':<{w}}  {'base':<22} new")
        for x in shown:
            mark = "!" if x.worse else " "
            cid = x.id if len(x.id) <= w else x.id[: w - 1] + "\u2026"
            delta = f"  \u0394(-log10 p) = {x.delta:+.1f}" if x.delta is not None and abs(x.delta) >= 0.05 else ""
            lines.append(
                f"{mark} {x.change:<18} {cid:<{w}}  {_side(x.base_grade, x.base_p):<22} "
                f"{_side(x.new_grade, x.new_p):<22}{delta}".rstrip()
            )
    hidden = len(r.rows) - len(shown)
    if hidden:
        lines.append(f"  ({hidden} unchanged check{'s' if hidden != 1 else ''} not shown)")
    lines.append("")
    lines.append(
        "rule: new is worse when a check newly fails, goes from pass to notable, is removed, or its "
        f"Holm-adjusted -log10 p rises by at least {MARKED:g} to an adjusted p below {WORSE_ADJ:g} (raw p below "
        f"{WORSE_P:g} for reports without adjusted p-values), or when the new report is incomplete ('!' marks checks)"
    )
    return "\n".join(lines) + "\n"
