"""Checks fed by one pass: accumulators that take a segment chunk by chunk and give the same result as the
check's function form on the whole segment.

The first step of the one-pass engine: counting checks share one histogram. A :class:`ByteHistogram` counts the
byte values of the chunks it is fed once; byte frequency, monobit and poker on 4- and 8-bit symbols are all
functions of those 256 counts (each check's ``from_table`` in its registry entry, with ``table=BYTE_COUNTS``), so one histogram serves
four checks; the runner uses the same functions. The 16-bit frequency keeps its own
65,536 counts and carries an odd byte from one chunk to the next.

Contract (as the function forms): ``update(chunk)`` with a 1-d uint8 array, any number of times, chunk
boundaries anywhere; ``finish()`` returns the :class:`~rngassay.checks.result.CheckResult` the function form
returns on the concatenated bytes (tests/checks/test_accumulators.py checks it on random chunk boundaries).
The bit order is the bits view's: most significant bit of each byte first (all four counting checks here are
invariant to it within a byte).
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from .bits.frequency import monobit_from_counts, poker_from_counts
from .classic.frequency import _u16_counts, byte_counts, byte_frequency_from_counts, need, u16_frequency_result
from .result import CheckResult

def _as_bytes(chunk: np.ndarray) -> np.ndarray:
    a = np.ascontiguousarray(chunk).reshape(-1)
    if a.dtype != np.uint8:
        raise InputError(f"accumulators take uint8 chunks, got dtype {a.dtype}", hint="pass the bytes view")
    return a


class ByteHistogram:
    """Counts of the 256 byte values over every chunk fed (the shared histogram of the counting checks)."""

    def __init__(self) -> None:
        self.counts = np.zeros(256, dtype=np.int64)
        self.n = 0

    def update(self, chunk: np.ndarray) -> None:
        b = _as_bytes(chunk)
        if b.size:
            self.counts += byte_counts(b)
            self.n += int(b.size)


class _FromHistogram:
    """A check computed from a (possibly shared) :class:`ByteHistogram`. ``owns``: feed it here too."""

    def __init__(self, hist: ByteHistogram | None = None):
        self.owns = hist is None
        self.hist = hist if hist is not None else ByteHistogram()

    def update(self, chunk: np.ndarray) -> None:
        if self.owns:  # a shared histogram is fed once, by whoever shares it out
            self.hist.update(chunk)


class ByteFrequency(_FromHistogram):
    """One-pass form of :func:`rngassay.checks.classic.frequency.check_byte_frequency`."""

    def finish(self) -> CheckResult:
        return byte_frequency_from_counts(self.hist.counts)


class Monobit(_FromHistogram):
    """One-pass form of :func:`rngassay.checks.bits.frequency.monobit_frequency` (whole bytes)."""

    def finish(self) -> CheckResult:
        return monobit_from_counts(self.hist.counts)


class PokerBits(_FromHistogram):
    """One-pass form of :func:`rngassay.checks.bits.frequency.poker_symbols` for m = 4 or 8 (whole bytes)."""

    def __init__(self, m: int = 4, hist: ByteHistogram | None = None):
        if m not in (4, 8):
            raise InputError(f"the one-pass poker takes m = 4 or 8 (whole bytes), got {m}")
        super().__init__(hist)
        self.m = m

    def finish(self) -> CheckResult:
        return poker_from_counts(self.hist.counts, {"m": self.m})


class U16Frequency:
    """One-pass form of :func:`rngassay.checks.classic.frequency.check_u16_frequency`: little-endian byte
    pairs, an odd byte carried to the next chunk (and unused at the end, as in the function form)."""

    def __init__(self) -> None:
        self.counts = np.zeros(65536, dtype=np.int64)
        self.pairs = 0
        self._carry: np.ndarray = np.empty(0, dtype=np.uint8)

    def update(self, chunk: np.ndarray) -> None:
        b = _as_bytes(chunk)
        if self._carry.size:
            b = np.concatenate([self._carry, b])
        m = b.size // 2
        if m:
            self.counts += _u16_counts(np.ascontiguousarray(b[: 2 * m]).view("<u2"))
            self.pairs += m
        self._carry = b[2 * m :].copy()

    def finish(self) -> CheckResult:
        need(self.pairs, 65536, "16-bit frequency (byte pairs)")
        return u16_frequency_result(self.counts.copy(), self.pairs)
