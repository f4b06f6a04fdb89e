"""The findings collector: keeps the start of the first segment the battery reads, and runs
:func:`rngassay.checks.findings.diagnose` on it once the checks are done.

The sample is the first segment the run reads (every check also sees it), at most :data:`SAMPLE_BYTES` bytes
(text: :data:`SAMPLE_VALUES` values); nothing is read twice. Findings never change the verdict or the exit code:
they say in words what the sample shows. A failure of the search itself is a note, never a failed run.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..checks.findings import FINDINGS_ALPHA, diagnose
from ..intake.formats import Format

SAMPLE_BYTES = 8 << 20  #: at most this much of the first segment is searched (binary formats)
SAMPLE_VALUES = 1 << 20  #: text formats: at most this many values


class SampleTap:
    """A stream as the runner reads it, keeping a copy of the start of the first segment read.

    Everything else (accounting, hashing, ``ended``, ``source``) is the stream's own: attributes are
    passed through."""

    def __init__(self, stream: Any):
        self._stream = stream
        self.sample: np.ndarray | None = None

    def read_values(self, n: int) -> np.ndarray:
        vals = self._stream.read_values(n)
        if self.sample is None and vals.size:
            fmt = self._stream.fmt
            cap = SAMPLE_BYTES // fmt.itemsize if fmt.is_binary else SAMPLE_VALUES
            self.sample = np.array(vals[:cap], copy=True)
        return vals

    def __getattr__(self, name: str) -> Any:
        return getattr(self._stream, name)


def collect(tap: SampleTap, fmt: Format, alpha: float = FINDINGS_ALPHA) -> tuple[list[dict[str, Any]], str | None]:
    """(findings as plain dicts for the report, a note when the search could not run). Each finding also
    records the sample searched, the number of tests and the run-wide false-finding rate."""
    vals = tap.sample
    if vals is None or vals.size == 0:
        return [], None
    try:
        found, m = diagnose(vals, fmt, alpha)
    except Exception as e:  # the search must never take a run down
        return [], f"findings: the search failed ({type(e).__name__}: {e}); the checks are not affected"
    unit = "bytes" if fmt.is_binary else "values"
    size = int(vals.size) * (fmt.itemsize if fmt.is_binary else 1)
    scope = {"sample": f"the first {size} {unit} read", "tests": m, "alpha": alpha}
    return [dict(f.to_dict(), **scope) for f in found], None
