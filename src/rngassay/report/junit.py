"""JUnit XML for continuous-integration servers: one ``<testcase>`` per check.

Mapping (so that a CI job turns red exactly when the assay found a failure):

- grade ``pass``        -> a passing testcase;
- grade ``notable``  -> a passing testcase with a ``<system-out>`` saying it is notable and why
  (not ``<skipped>``: the check did run, and skipped cases are easy to overlook or are treated as
  "not run" by CI dashboards; use ``--strict`` at the command line to make notable fail the job);
- grade ``fail``        -> a ``<failure>`` whose message gives the p-value and the Holm-adjusted p-value;
- a check that could not run (``error`` set) -> an ``<error>`` element with the reason;
- an incomplete run, or one in which no check finished (verdict "no verdict") -> one more testcase,
  ``run complete``, with an ``<error>`` saying what completed of what was planned (never ``tests="0"``
  with success).

The suite is named ``rngassay``; its ``<properties>`` record the source (``source.sha256``,
``source.bytes_read``, ``source.kind``, ``source.name``, ``source.format``) and the run (``verdict``,
``combined_p``, ``alpha``, ``budget_bytes``, ``incomplete``, ``tool_version``) and the audit trail
(``audit.command``, ``audit.started_utc``, ``audit.ended_utc``, ``audit.version.*``, ``audit.seed.N``,
``audit.selection``, ``audit.completed``, ``audit.left_out`` and ``audit.left_out.N``) and the findings in
words (``findings``: how many; ``finding.N``: sentence, evidence and p-value; also in the suite's ``<system-out>``).
Text is escaped by :mod:`xml.etree.ElementTree`; characters that XML 1.0 cannot carry at all are replaced by U+FFFD.
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET
from typing import Any

from . import trail as T
from .findings import findings_properties, findings_text
from .html import format_p, format_params
from ..model import CheckReport, Report

_NOT_XML = re.compile("[^\u0009\u000a\u000d\u0020-\ud7ff\ue000-\ufffd\U00010000-\U0010ffff]")


def _x(s: Any) -> str:
    """Text safe for XML 1.0 (ElementTree escapes <, >, & and quotes; it does not remove control characters)."""
    return _NOT_XML.sub("\ufffd", "" if s is None else str(s))


def _message(c: CheckReport) -> str:
    return f"p = {format_p(c.p_value)}, Holm-adjusted p = {format_p(c.adjusted_p)}"


def _details(c: CheckReport) -> str:
    lines = [
        f"check: {c.id}",
        f"family: {c.family}",
        f"parameters: {format_params(c.params)}",
        f"grade: {c.grade}",
        f"p-value: {format_p(c.p_value)}",
        f"Holm-adjusted p-value: {format_p(c.adjusted_p)}",
        f"bytes: {c.bytes}",
        f"replicates: {c.replicates}",
    ]
    if len(c.rounds) > 1:
        lines.append(
            "rounds: " + "; ".join(f"{i + 1}: p = {format_p(r.p_value)} over {r.replicates} replicates"
                                   for i, r in enumerate(c.rounds))
        )
    if c.null:
        lines.append(f"null hypothesis: {c.null}")
    return "\n".join(lines)


def _audit_properties(r: Report) -> list[tuple[str, Any]]:
    """The audit trail as ``audit.*`` properties (one per seed and per check left out, numbered from 1)."""
    a = r.audit or {}
    if not a:
        return []
    out: list[tuple[str, Any]] = [("audit.invocation", a.get("invocation", "")), ("audit.command", T.command_text(a)),
                                  ("audit.started_utc", a.get("started_utc", "")),
                                  ("audit.ended_utc", a.get("ended_utc", ""))]
    out += [(f"audit.version.{k}", v) for k, v in (a.get("versions") or {}).items()]
    out += [(f"audit.seed.{i}", t) for i, t in enumerate(T.seed_texts(a), 1)]
    out.append(("audit.selection", T.selection_text(a)))
    if a.get("completed"):
        out.append(("audit.completed", T.completed_text(r)))
    left = a.get("left_out") or []
    out.append(("audit.left_out", len(left)))
    out += [(f"audit.left_out.{i}", f"{e.get('check', '')}: {e.get('reason', '')}") for i, e in enumerate(left, 1)]
    return out


def render_junit(report: Report) -> str:
    """The report as a JUnit XML document (a string starting with the XML declaration)."""
    r = report
    src = r.source or {}
    n_fail = sum(1 for c in r.checks if c.grade == "fail" and not c.error)
    n_err = sum(1 for c in r.checks if c.error)
    # an incomplete run (or one where nothing finished) is never green: it gets an <error> case of its own
    stopped = r.incomplete or not r.checks
    n_tests = len(r.checks) + (1 if stopped else 0)
    n_err += 1 if stopped else 0
    root = ET.Element(
        "testsuites",
        {"name": "rngassay", "tests": str(n_tests), "failures": str(n_fail), "errors": str(n_err),
         "time": f"{r.elapsed_s:.3f}"},
    )
    suite = ET.SubElement(
        root,
        "testsuite",
        {"name": "rngassay", "tests": str(n_tests), "failures": str(n_fail), "errors": str(n_err),
         "skipped": "0", "time": f"{r.elapsed_s:.3f}"},
    )
    props = ET.SubElement(suite, "properties")
    values = [
        ("source.sha256", src.get("sha256", "")),
        ("source.bytes_read", src.get("bytes_read", "")),
        ("source.kind", src.get("kind", "")),
        ("source.name", src.get("name", "")),
        ("source.format", src.get("format", "")),
        ("verdict", r.verdict),
        ("combined_p", format_p(r.combined_p)),
        ("alpha", f"{r.alpha:g}"),
        ("budget_bytes", r.budget_bytes),
        ("incomplete", "true" if r.incomplete else "false"),
        ("tool_version", r.tool_version),
    ]
    values += _audit_properties(r)
    values += findings_properties(r)
    for name, value in values:
        ET.SubElement(props, "property", {"name": name, "value": _x(value)})
    for c in r.worst_first():
        case = ET.SubElement(suite, "testcase", {"classname": _x(f"rngassay.{c.family}"), "name": _x(c.id)})
        if c.error:
            el = ET.SubElement(case, "error", {"message": _x(f"could not run: {c.error}"), "type": "error"})
            el.text = _x(_details(c))
        elif c.grade == "fail":
            el = ET.SubElement(case, "failure", {"message": _x(_message(c)), "type": "fail"})
            el.text = _x(_details(c))
        elif c.grade == "notable":
            out = ET.SubElement(case, "system-out")
            out.text = _x(
                f"notable: {_message(c)}. The check would fail at a family-wise alpha ten times larger; a sound "
                "source gets such a grade in at most 10 alpha of its runs. Grow the run on fresh data (--grow-to) "
                "to settle it.\n" + _details(c)
            )
    if stopped:
        why = (r.incomplete_reason() or "no check finished") if r.incomplete else "no check finished"
        done = T.completed_text(r)
        if done and done not in why:
            why += f" ({done})"
        case = ET.SubElement(suite, "testcase", {"classname": "rngassay.run", "name": "run complete"})
        el = ET.SubElement(case, "error", {"message": _x(f"incomplete run: {why}"), "type": "incomplete"})
        el.text = _x(f"verdict: {r.verdict}\n{why}")
    summary = [f"verdict: {r.verdict}", f"combined p = {format_p(r.combined_p)} ({r.combined_method})"]
    if r.incomplete:
        summary.append("incomplete: the run stopped early; only the checks that finished are listed.")
    summary += findings_text(r) + list(r.notes) + list(r.cautions)
    ET.SubElement(suite, "system-out").text = _x("\n".join(summary))
    ET.indent(root, space="  ")
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="unicode") + "\n"
