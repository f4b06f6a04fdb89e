"""The report data model: what a run found, as plain data that every renderer (terminal, JSON, HTML, JUnit)
reads. It sits below the battery and the seed sweep, which build it; ``report/`` only renders it.

The JSON form is versioned (``schema``); :func:`Report.from_dict` reads it back for ``rngassay diff``.
Every report carries an audit trail (``Report.audit``, see :func:`begin_audit` and :func:`close_audit`): how the
run was started, when (UTC), with which versions, every seed used, the selection, every check left out and why,
and what completed of what was planned. Keys are only ever added to schema 1 (old readers ignore them).
"""

from __future__ import annotations

import json
from dataclasses import asdict, dataclass, field
from typing import Any

from ._version import __version__

SCHEMA = "rngassay-report/1"
GRADES = ("pass", "notable", "fail")
NO_VERDICT = "no verdict"  # the run's verdict when no check finished (an interrupted or dying source)

CAUTIONS = (
    "A pass means these checks found no evidence against randomness at the sample size used; it is not a proof.",
    "Statistical tests cannot prove unpredictability: a stream can pass every check and still be predictable "
    "to anyone who knows the generator's design or state.",
    "For gaming or cryptographic use, defer to the applicable technical standards, local regulation and "
    "accredited test laboratories.",
)


@dataclass
class Round:
    """One round of a check: its replicates on disjoint segments, and the second-level result."""

    replicates: int
    bytes: int
    p_value: float  # the check's p-value for this round (second level over replicates)
    replicate_p: list[float] = field(default_factory=list)  # first-level p-values (two-sided where both tails count)
    statistic: float | None = None  # first replicate's statistic, or the pooled statistic for discrete checks
    second_level: dict[str, Any] = field(default_factory=dict)


@dataclass
class CheckReport:
    id: str
    key: str
    family: str
    params: dict[str, Any]
    view: str
    kind: str
    statistic: float | None
    p_value: float  # final p-value of the check (its last round)
    grade: str
    bytes: int  # bytes of the stream this check consumed, all rounds
    replicates: int  # replicates of the last round
    adjusted_p: float | None = None  # Holm-adjusted p-value across the run's checks
    second_level: dict[str, Any] = field(default_factory=dict)
    rounds: list[Round] = field(default_factory=list)
    null: str = ""
    title: str = ""
    error: str | None = None  # a check that could not run says why here (and is graded "fail")
    seconds: float = 0.0  # time spent in the check (timing only: differs between runs)

    def to_dict(self) -> dict[str, Any]:
        return asdict(self)

    @classmethod
    def row(cls, id: str, key: str, family: str, params: dict[str, Any], view: str, kind: str, *,
            statistic: float | None, p_value: float, nbytes: int, replicates: int,
            second_level: dict[str, Any] | None = None, round_second_level: dict[str, Any] | None = None,
            replicate_p: list[float] | None = None, null: str = "", title: str = "", error: str | None = None,
            seconds: float = 0.0) -> "CheckReport":
        """The one way a check's result becomes a report row (battery, seeds and fit alike): one round of
        ``replicates`` on ``nbytes`` bytes, ungraded ("pass", no adjusted p) until the run is graded; a row
        with an ``error`` has no round and fails."""
        sl = dict(second_level or {})
        rounds = [] if error else [Round(replicates=int(replicates), bytes=int(nbytes), p_value=float(p_value),
                                         replicate_p=list(replicate_p or []), statistic=statistic,
                                         second_level=sl if round_second_level is None else round_second_level)]
        return cls(id=id, key=key, family=family, params=dict(params), view=view, kind=kind,
                   statistic=None if statistic is None else float(statistic), p_value=float(p_value),
                   grade="fail" if error else "pass", bytes=int(nbytes), replicates=int(replicates), adjusted_p=None,
                   second_level=sl, rounds=rounds, null=null, title=title, error=error, seconds=round(seconds, 4))


@dataclass
class Report:
    command: str
    source: dict[str, Any]
    budget_bytes: int
    alpha: float
    verdict: str
    combined_p: float | None
    checks: list[CheckReport]
    incomplete: bool = False
    elapsed_s: float = 0.0
    plan: list[dict[str, Any]] = field(default_factory=list)
    combined_method: str = "harmonic mean p-value (Wilson 2019)"
    settings: dict[str, Any] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    tool_version: str = __version__
    schema: str = SCHEMA
    cautions: list[str] = field(default_factory=lambda: list(CAUTIONS))
    audit: dict[str, Any] = field(default_factory=dict)  # the audit trail (see begin_audit / close_audit)
    growth: dict[str, Any] | None = None  # the stages of a growth run (battery.growth), else None
    # fit only: the values against the declared law, for the report's figures (checks.transform.picture)
    fit_picture: dict[str, Any] = field(default_factory=dict)
    # findings in words (rngassay.checks.findings): kind, test, where, evidence, p_value, law, exact, sentence, stats
    findings: list[dict[str, Any]] = field(default_factory=list)
    # not part of the JSON: the bad-input error (what, where, hint) that stopped the run, when one did
    input_error: Any = field(default=None, repr=False, compare=False)

    # -- outcomes ------------------------------------------------------------------------------
    def exit_code(self, strict: bool = False) -> int:
        """0 pass (and notable unless strict), 1 fail, 2 "no verdict" (nothing finished: never green)."""
        if self.verdict == "fail" or (strict and self.verdict == "notable"):
            return 1
        if self.verdict == NO_VERDICT:
            return 2
        return 0

    def incomplete_reason(self) -> str | None:
        """Why the run stopped early and what completed of what was planned (None for a complete run)."""
        if not self.incomplete:
            return None
        for n in self.notes:
            if n.startswith("incomplete run: "):
                return n[len("incomplete run: "):]
        return "the run stopped early"

    def worst_first(self) -> list[CheckReport]:
        order = {"fail": 0, "notable": 1, "pass": 2}
        return sorted(self.checks, key=lambda c: (order.get(c.grade, 0), c.p_value, c.id))

    # -- serialisation -------------------------------------------------------------------------
    def to_dict(self) -> dict[str, Any]:
        d = {
            "schema": self.schema,
            "tool_version": self.tool_version,
            "command": self.command,
            "source": self.source,
            "budget_bytes": self.budget_bytes,
            "alpha": self.alpha,
            "verdict": self.verdict,
            "combined_p": self.combined_p,
            "combined_method": self.combined_method,
            "incomplete": self.incomplete,
            "elapsed_s": round(self.elapsed_s, 3),
            "settings": self.settings,
            "plan": self.plan,
            "checks": [c.to_dict() for c in self.checks],
            "notes": self.notes,
            "cautions": self.cautions,
            "audit": self.audit,
            "findings": self.findings,
        }
        if self.growth is not None:  # a growth run's stages (only then: other reports keep their keys)
            d["growth"] = self.growth
        if self.fit_picture:  # fit reports only (a key added to schema 1)
            d["fit_picture"] = self.fit_picture
        return d

    def to_json(self) -> str:
        return json.dumps(self.to_dict(), indent=2, allow_nan=False, default=_json_default)

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> "Report":
        checks = []
        for c in d["checks"]:
            c = dict(c)
            c["rounds"] = [Round(**r) for r in c.get("rounds", [])]
            checks.append(CheckReport(**c))
        fields = {k: v for k, v in d.items() if k != "checks" and k in cls.__dataclass_fields__}
        return cls(checks=checks, **fields)


# -- the audit trail --------------------------------------------------------------------------------
AUDIT_TIMES = ("started_utc", "ended_utc")  # the only audit keys that differ between two runs of one command


def utc_now() -> str:
    """The current time in UTC, ISO 8601 with a 'Z', to the second."""
    from datetime import datetime, timezone

    return datetime.now(timezone.utc).isoformat(timespec="seconds").replace("+00:00", "Z")


def versions() -> dict[str, str]:
    """Versions of rngassay, Python and the numerical libraries a result depends on."""
    import platform
    from importlib import metadata

    out = {"rngassay": __version__, "python": platform.python_version()}
    for dist in ("numpy", "scipy", "numba"):
        try:
            out[dist] = metadata.version(dist)
        except metadata.PackageNotFoundError:
            out[dist] = "not installed"
    return out


def begin_audit(argv: list[str] | None = None, call: str | None = None,
                options: dict[str, Any] | None = None) -> dict[str, Any]:
    """The start of a run's audit trail: the command line as typed (``argv``), or for the Python API the
    function called (``call``) and its options; the UTC start time."""
    if argv is not None:
        head: dict[str, Any] = {"invocation": "command line", "argv": [str(a) for a in argv]}
    else:
        head = {"invocation": "Python API", "call": call or "",
                "options": {k: _plain(v) for k, v in (options or {}).items() if v is not None}}
    return {**head, "started_utc": utc_now()}


def _plain(v: Any) -> Any:
    """An option value as JSON can hold it (objects handed over in Python are named by their type)."""
    if v is None or isinstance(v, (bool, int, float, str)):
        return v
    if isinstance(v, (list, tuple)):
        return [_plain(x) for x in v]
    return f"<{type(v).__name__}>"


def close_audit(report: "Report", start: dict[str, Any], *, seeds: list[dict[str, Any]] | None = None,
                selection: dict[str, Any] | None = None, left_out: list[dict[str, str]] | None = None) -> "Report":
    """Finish ``report.audit``: ``start`` (see :func:`begin_audit`), the UTC end, versions, the seeds used, the
    selection, every check left out with the reason (those named in the notes, then ``left_out``), and what
    completed of what was planned (kept from the run when it set one)."""
    done = report.audit.get("completed")
    named = left_out_from_notes(report.notes)
    seen = {e["check"] for e in named}
    report.audit = {
        **start,
        "ended_utc": utc_now(),
        "versions": versions(),
        "seeds": list(seeds or []),
        "selection": dict(selection or {}),
        "left_out": named + [e for e in (left_out or []) if e["check"] not in seen],
        "completed": done if done is not None else [],
    }
    return report


def left_out_from_notes(notes: list[str]) -> list[dict[str, str]]:
    """The checks a report's notes say were left out, as {check, reason}: "left out ID: REASON" (the battery's
    plan) and "ID left out: REASON" (fit and seed checks)."""
    out = []
    for n in notes:
        if n.startswith("left out "):
            body = n[len("left out "):]
            pre = "pit: " if body.startswith("pit: ") else ""
            check, sep, reason = body[len(pre):].partition(": ")
            out.append({"check": pre + check, "reason": reason if sep else "left out"})
        elif " left out: " in n:
            check, _, reason = n.partition(" left out: ")
            out.append({"check": check, "reason": reason})
    return out


def is_left_out_note(note: str) -> bool:
    return note.startswith("left out ") or " left out: " in note


def completed_line(completed: list[dict[str, Any]]) -> str:
    """What completed of what was planned, e.g. "11 of 64 replicates; 40 of 95 checks complete"."""
    return "; ".join(f"{c['done']} of {c['planned']} {c['what']}" for c in completed)


def _json_default(o: Any) -> Any:
    import numpy as np

    if isinstance(o, np.integer):
        return int(o)
    if isinstance(o, np.floating):
        return float(o)
    if isinstance(o, np.ndarray):
        return o.tolist()
    raise TypeError(f"not JSON serialisable: {type(o).__name__}")
