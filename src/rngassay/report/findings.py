"""Findings in words (``Report.findings``, made by :mod:`rngassay.checks.findings`) for the terminal, JUnit and
HTML reports.

When they are shown: always, whenever there are any. Each finding is reported only at a run-wide
false-finding rate of 1e-6 (Bonferroni over all the searches' tests), far stricter than the checks' own level,
so a finding is strong evidence on its own, also in a run whose checks pass (the report then says so).
Findings never change the verdict or the exit code. A run without findings shows nothing extra.
"""

from __future__ import annotations

import html
import math
from typing import Any

from ..model import Report

_P_TINY = 1e-300  # as the other renderers: a p-value at the floor is shown as "< 1e-300", never as 0


def finding_p(f: dict[str, Any]) -> str:
    """"exact" for exact statements with a bound below 1e-300, else "p = 1.23e-45" (or "p <= ..." for a bound)."""
    p = f.get("p_value")
    try:
        p = float(p)
    except (TypeError, ValueError):
        return "p n/a"
    if not math.isfinite(p):
        return "p n/a"
    rel = "<=" if str(f.get("law", "")).startswith("union bound") else "="
    return f"p < {_P_TINY:.0e}" if p < _P_TINY else f"p {rel} {p:.2e}"


def _scope(report: Report) -> str:
    fs = report.findings or []
    if not fs:
        return ""
    f0 = fs[0]
    alpha = f0.get("alpha", 1e-6)
    return (f"{f0.get('sample', 'a sample')}; each kept at a run-wide false-finding rate of {alpha:g} "
            f"({f0.get('tests', '?')} tests, Bonferroni)")


def _quiet_run(report: Report) -> bool:
    return bool(report.findings) and report.verdict == "pass"


def findings_lines(report: Report) -> list[str]:
    """The terminal block: a heading line with the scope, then one line per finding (sentence, evidence, p)."""
    fs = report.findings or []
    if not fs:
        return []
    head = "findings     " + _scope(report)
    if _quiet_run(report):
        head += "; found although no check failed"
    lines = ["", head]
    for f in fs:
        lines.append(f"  {f.get('kind', ''):<7}{f.get('sentence', '')}")
        lines.append(f"  {'':<7}{f.get('evidence', '')} ({finding_p(f)})")
        conv = (f.get("where") or {}).get("convention") or (f.get("where") or {}).get("lanes")
        if isinstance(conv, str):
            lines.append(f"  {'':<7}lanes: {conv}")
    return lines


def findings_properties(report: Report) -> list[tuple[str, str]]:
    """JUnit properties: ``findings`` (how many) and ``finding.N`` (sentence, evidence, p-value), numbered from 1."""
    fs = report.findings or []
    out = [("findings", str(len(fs)))]
    for i, f in enumerate(fs, 1):
        out.append((f"finding.{i}", f"{f.get('kind', '')}: {f.get('sentence', '')} Evidence: {f.get('evidence', '')} "
                                    f"({finding_p(f)}, {f.get('law', '')})"))
    return out


def findings_text(report: Report) -> list[str]:
    """Plain lines for a JUnit ``system-out``: the scope, then one sentence per finding."""
    fs = report.findings or []
    if not fs:
        return []
    return [f"findings ({_scope(report)}):"] + [f"- {f.get('sentence', '')} ({finding_p(f)})" for f in fs]


_CSS = """
section.findings { margin: 1rem 0 0; padding: .7rem 1rem; background: #fff; border: 1px solid var(--line, #d8dde3);
  border-left: 8px solid #5a4a9c; border-radius: 6px; }
section.findings h2 { margin: 0 0 .4rem; border: 0; padding: 0; }
section.findings ol { margin: 0; padding-left: 1.3rem; }
section.findings li { margin: .35rem 0; }
section.findings .ev { color: var(--muted, #5b6570); font-size: .92em; overflow-wrap: anywhere; }
section.findings .kind { display: inline-block; min-width: 4.5em; font-size: .8em; text-transform: uppercase;
  letter-spacing: .04em; color: #5a4a9c; font-weight: 600; }
section.findings p.scope { margin: .4rem 0 0; color: var(--muted, #5b6570); font-size: .88em; }
"""


def findings_html(report: Report) -> str:
    """The findings as one HTML section (its own small style), or "" when there are none."""
    fs = report.findings or []
    if not fs:
        return ""
    e = html.escape
    items = []
    for f in fs:
        where = f.get("where") or {}
        conv = where.get("convention") or where.get("lanes")
        lanes = f'<br><span class="ev">lanes: {e(conv)}</span>' if isinstance(conv, str) else ""
        items.append(f'<li><span class="kind">{e(str(f.get("kind", "")))}</span> {e(str(f.get("sentence", "")))}'
                     f'<br><span class="ev">{e(str(f.get("evidence", "")))} ({e(finding_p(f))}, '
                     f'{e(str(f.get("law", "")))})</span>{lanes}</li>')
    quiet = " Found although no check failed." if _quiet_run(report) else ""
    return "\n".join([
        f"<style>{_CSS}</style>",
        '<section class="findings" aria-label="findings">',
        "<h2>What was found</h2>",
        "<ol>", *items, "</ol>",
        f'<p class="scope">Searched {e(_scope(report))}.{quiet} Findings do not change the verdict.</p>',
        "</section>",
    ])
