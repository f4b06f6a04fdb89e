"""Terminal rendering: a compact table, worst checks first, then the verdict, bytes read and SHA-256."""

from __future__ import annotations

from ..model import Report, is_left_out_note
from .stages import alpha_text, stage_lines
from .findings import findings_lines
from .trail import completed_text, left_out_lines, trail_rows

_COLORS = {"fail": "\033[31;1m", "notable": "\033[33;1m", "pass": "\033[32m"}
_RESET = "\033[0m"


def fmt_p(p: float | None) -> str:
    """Scientific notation, 3 significant digits; never printed as 0 (shared with the HTML report)."""
    from .html import format_p

    return "-" if p is None else format_p(p)


def _grade(g: str, color: bool) -> str:
    text = f"{g:<10}"
    return f"{_COLORS.get(g, '')}{text}{_RESET}" if color else text


def render(report: Report, color: bool = False, limit: int | None = None) -> str:
    src = report.source
    lines = []
    rows = report.worst_first()
    shown = rows if limit is None else rows[:limit]
    idw = max([len("check")] + [len(c.id) for c in shown])
    lines.append(f"  {'grade':<10} {'p-value':>9} {'holm p':>9} {'rounds':>6}  {'check':<{idw}}  family")
    for c in shown:
        adj = fmt_p(c.adjusted_p)
        err = f"  ({c.error})" if c.error else ""
        lines.append(
            f"  {_grade(c.grade, color)} {fmt_p(c.p_value):>9} {adj:>9} {len(c.rounds):>6}  {c.id:<{idw}}  {c.family}{err}"
        )
    if limit is not None and len(rows) > limit:
        lines.append(f"  ... {len(rows) - limit} more checks, all graded as listed in the JSON/HTML report")
    lines += findings_lines(report)  # what was found, in words (report/findings.py)
    counts = {g: sum(1 for c in report.checks if c.grade == g) for g in ("fail", "notable", "pass")}
    lines.append("")
    done = completed_text(report) if report.incomplete else ""
    verdict = report.verdict + ((f" (incomplete run: {done})" if done else " (incomplete run)") if report.incomplete
                                else "")
    lines.append(f"verdict      {_grade(verdict, color).rstrip()}   "
                 f"{counts['fail']} fail, {counts['notable']} notable, {counts['pass']} pass "
                 f"of {len(report.checks)} checks; {alpha_text(report)}")
    for t in stage_lines(report):
        lines.append(f"growth       {t}")
    lines.append(f"combined p   {fmt_p(report.combined_p)} ({report.combined_method})")
    lines.append(f"source       {src.get('kind')}: {src.get('name')} (format {src.get('format')})")
    lines.append(f"bytes read   {src.get('bytes_read')}")
    lines.append(f"sha-256      {src.get('sha256')}")
    for n in report.notes:
        if not (report.audit and is_left_out_note(n)) and not n.startswith("left out"):
            lines.append(f"note         {n}")
    lines += _footer(report)
    for c in report.cautions:
        lines.append(f"caution      {c}")
    return "\n".join(lines)


def _footer(report: Report) -> list[str]:
    """The audit trail in a few lines, and the checks left out with the reason (grouped when many)."""
    lines = [f"{label:<12} {t}" for label, t in trail_rows(report)]
    left = (report.audit or {}).get("left_out") or []
    for t in left_out_lines(left):
        lines.append(f"{'left out':<12} {t}")
    return lines
