"""The stages of a growth run in words (``--grow-to``), shared by the renderers."""

from __future__ import annotations

from ..model import Report
from ..sizes import format_size


def _size(n: int, unit: str) -> str:
    return format_size(n) if unit == "bytes" else f"{n} values"


def stage_lines(report: Report) -> list[str]:
    """One line per stage that ran, e.g. "stage 2: 2 MiB at level 1.9e-04: pass", then where growth stopped;
    empty for a run without growth."""
    g = report.growth
    if not g:
        return []
    unit = g.get("unit", "bytes")
    lines = []
    for s in g["stages"]:
        failed = f" ({len(s['failed'])} failed: {', '.join(s['failed'][:3])}{', ...' if len(s['failed']) > 3 else ''})" \
            if s["failed"] else ""
        lines.append(f"stage {s['stage']}: {_size(s['size'], unit)} at level {s['level']:.2g}: {s['verdict']}"
                     + (" (incomplete)" if s.get("incomplete") else "") + failed)
    planned = g.get("planned_sizes") or []
    lines.append(f"{g['stopped']}; planned {len(planned)} stages up to {_size(planned[-1], unit)}" if planned
                 else g["stopped"])
    return lines


def alpha_text(report: Report) -> str:
    """How the run's family-wise alpha is kept."""
    g = report.growth
    if not g:
        return f"family-wise alpha {report.alpha:g} (Holm)"
    return (f"family-wise alpha {report.alpha:g} over all stages (Holm within a stage, levels by "
            f"{g['spending']})")
