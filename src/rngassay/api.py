"""Python API: what the command line and users' own CI tests call.

``assay(source, budget=...)`` reads a stream, runs the checks and returns a report object with
``.verdict``, ``.checks``, ``.to_json()`` and ``.exit_code()``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Callable

import numpy as np

from . import __version__
from .errors import InputError
from .intake.formats import parse_format
from .intake.sources import RawSource, open_source
from .intake.stream import Stream
from .intake import views
from .sizes import parse_size

DEFAULT_BUDGET = 64 << 20


@dataclass
class CheckOutcome:
    id: str
    family: str
    params: dict
    statistic: float
    p_value: float
    grade: str
    bytes: int
    replicates: int = 1
    p_left: float | None = None
    second_level: dict | None = None


@dataclass
class Report:
    source: dict
    budget_bytes: int
    checks: list[CheckOutcome] = field(default_factory=list)
    verdict: str = "pass"
    incomplete: bool = False
    elapsed_s: float = 0.0

    def exit_code(self, strict: bool = False) -> int:
        if self.verdict == "fail" or (strict and self.verdict == "borderline"):
            return 1
        return 0

    def to_dict(self) -> dict:
        return {
            "schema": "rngassay-report/0",
            "tool_version": __version__,
            "source": self.source,
            "budget_bytes": self.budget_bytes,
            "verdict": self.verdict,
            "incomplete": self.incomplete,
            "elapsed_s": self.elapsed_s,
            "checks": [c.__dict__ for c in self.checks],
        }

    def to_json(self) -> str:
        import json

        return json.dumps(self.to_dict(), indent=2)

    def to_text(self, color: bool = False) -> str:
        lines = []
        for c in sorted(self.checks, key=lambda c: c.p_value):
            lines.append(f"  {c.id:<40} p = {c.p_value:.3g}  {c.grade}")
        lines.append(f"verdict: {self.verdict}")
        lines.append(f"bytes read: {self.source['bytes_read']}  sha256: {self.source['sha256']}")
        return "\n".join(lines)


def open_stream(
    source: str | RawSource | None = None,
    *,
    fmt: str | None = None,
    value_range: str | tuple[int, int] | None = None,
    command: str | None = None,
    shell: bool = False,
    python: str | None = None,
    gen: str | None = None,
    seed: int | None = None,
) -> Stream:
    """Open a source and wrap it in a decoded, accounted :class:`Stream`."""
    f = parse_format(fmt, value_range)
    raw = source if isinstance(source, RawSource) else open_source(
        source, command=command, shell=shell, python=python, gen=gen, seed=seed
    )
    return Stream(raw, f)


def assay(
    source: str | RawSource | None = None,
    *,
    budget: str | int | None = None,
    fmt: str | None = None,
    value_range: str | tuple[int, int] | None = None,
    command: str | None = None,
    shell: bool = False,
    python: str | None = None,
    gen: str | None = None,
    seed: int | None = None,
    progress: Callable[[str], None] | None = None,
) -> Report:
    """Assay a stream (placeholder plan until the battery lands: one frequency check)."""
    import time

    t0 = time.perf_counter()
    explicit = budget is not None
    budget_bytes = parse_size(budget) if explicit else DEFAULT_BUDGET
    stream = open_stream(
        source, fmt=fmt, value_range=value_range, command=command, shell=shell, python=python, gen=gen, seed=seed
    )
    with stream:
        size = stream.source.size_hint()
        if not explicit and size is not None:
            budget_bytes = min(budget_bytes, size)
        f = stream.fmt
        if f.is_binary:
            # a budget that reaches the end of a file reads one value past it, so that a trailing
            # partial value is reported rather than silently dropped
            whole_file = size is not None and budget_bytes >= size
            n = -(-budget_bytes // f.itemsize) if whole_file else budget_bytes // f.itemsize
            if n == 0:
                raise InputError(f"budget {budget_bytes} bytes is less than one value", "", "give a larger --budget")
            if whole_file:
                vals = stream.read_values(n)
                if explicit and stream.bytes_read < budget_bytes:
                    stream.read_exact(n)  # raises: shorter than the budget asks
            elif explicit or size is not None:
                vals = stream.read_exact(n)
            else:
                vals = stream.read_values(n)
        else:
            chunks = []
            while stream.bytes_read < budget_bytes and not stream.ended:
                chunks.append(stream.read_values(1 << 16))
            vals = np.concatenate(chunks) if chunks else np.empty(0)
        if progress:
            progress(f"read {stream.bytes_read} bytes")
        outcome = _placeholder_check(vals, f, stream.bytes_read)
        report = Report(source=stream.info().to_dict(), budget_bytes=budget_bytes, checks=[outcome])
    report.verdict = outcome.grade
    report.elapsed_s = time.perf_counter() - t0
    return report


def _placeholder_check(vals: np.ndarray, f, nbytes: int) -> CheckOutcome:
    from scipy import stats

    if f.kind in ("bytes", "words"):
        b = views.as_bytes(vals, f)
        counts = np.bincount(b, minlength=256)
        res = stats.chisquare(counts)
        pr = float(stats.chi2.sf(res.statistic, 255))
        pl = float(stats.chi2.cdf(res.statistic, 255))
        ident, fam, params = "frequency bytes", "classic", {"bins": 256}
    elif f.kind == "text-integers":
        x, k = views.as_integers(vals, f)
        counts = np.bincount(x, minlength=k)
        res = stats.chisquare(counts)
        pr = float(stats.chi2.sf(res.statistic, k - 1))
        pl = float(stats.chi2.cdf(res.statistic, k - 1))
        ident, fam, params = "frequency outcomes", "categorical", {"k": k}
    else:
        u = views.as_uniforms(vals, f)
        res = stats.kstest(u, "uniform")
        pr, pl = float(res.pvalue), None
        ident, fam, params = "kolmogorov-smirnov uniforms", "classic", {}
    p2 = pr if pl is None else min(1.0, 2 * min(pr, pl))
    grade = "fail" if p2 < 1e-3 else "pass"
    return CheckOutcome(ident, fam, params, float(res.statistic), pr, grade, nbytes, 1, pl)
