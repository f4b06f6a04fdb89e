"""Checks fed by one pass: accumulators that take a segment chunk by chunk and give the same result as the
check's function form on the whole segment.

The first step of the one-pass engine: counting checks share one histogram. A :class:`ByteHistogram` counts the
byte values of the chunks it is fed once; byte frequency, monobit and poker on 4- and 8-bit symbols are all
functions of those 256 counts (each check's ``from_table`` in its registry entry, with ``table=BYTE_COUNTS``), so one histogram serves
four checks; the runner uses the same functions. The 16-bit frequency keeps its own
65,536 counts and carries an odd byte from one chunk to the next. :class:`CyclicPatterns` counts the
overlapping 16-bit windows of the bit stream, carrying the last 15 bits from chunk to chunk and closing the
cycle with the first 15 at the end; the serial test (orders 1, 2) and approximate entropy are functions of
those counts (``from_table`` with ``table=CYCLIC_PATTERNS``).

Contract (as the function forms): ``update(chunk)`` with a 1-d uint8 array, any number of times, chunk
boundaries anywhere; ``finish()`` returns the :class:`~rngassay.checks.result.CheckResult` the function form
returns on the concatenated bytes (tests/checks/test_accumulators.py checks it on random chunk boundaries).
The bit order is the bits view's: most significant bit of each byte first (all four counting checks here are
invariant to it within a byte).
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from .bits._common import to_u64
from .bits.frequency import monobit_from_counts, poker_from_counts
from .bits.serial import TABLE_M, _cyclic_counts, apen_from_table, serial_from_table
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


class CyclicPatterns:
    """The cyclic 16-bit pattern counts of the bits of every chunk fed (most significant bit of each byte
    first). A window is counted once its 16 bits have arrived; the last two bytes are carried to the next chunk
    (the windows starting in their last 15 bits are not complete yet), and ``table`` adds the 15 windows that
    wrap round to the first bits, so the table equals the function form's on the whole stream."""

    def __init__(self) -> None:
        self.counts = np.zeros(1 << TABLE_M, dtype=np.int64)
        self.n_bits = 0
        self._tail = np.empty(0, dtype=np.uint8)  # the last (up to) 2 bytes of the stream so far
        self._head = np.empty(0, dtype=np.uint8)  # the first (up to) 2 bytes, for the windows that wrap round

    @staticmethod
    def _windows(buf: np.ndarray, starts: int) -> np.ndarray:
        """Counts of the windows starting at bits 0 .. starts - 1 of ``buf`` (each within ``buf``)."""
        u = to_u64(buf, buf.size * 8)
        w = np.zeros(u.size + 2, dtype=np.uint64)  # zero words past the end: the kernel reads one word ahead
        w[: u.size] = u
        return _cyclic_counts(w, starts, TABLE_M)

    def update(self, chunk: np.ndarray) -> None:
        b = _as_bytes(chunk)
        if not b.size:
            return
        if self._head.size < 2:
            self._head = np.concatenate([self._head, b[: 2 - self._head.size]])
        buf = np.concatenate([self._tail, b]) if self._tail.size else b
        starts = buf.size * 8 - (TABLE_M - 1)  # windows that lie wholly in buf
        if starts > 0:
            self.counts += self._windows(buf, starts)
            if self._tail.size == 2:  # the window at the tail's first bit was counted with the previous chunk
                self.counts[(int(buf[0]) << 8) | int(buf[1])] -= 1
        self._tail = buf[-2:].copy()
        self.n_bits += int(b.size) * 8

    def table(self) -> np.ndarray:
        """The cyclic counts of all the bits fed so far."""
        if self.n_bits < TABLE_M:
            raise InputError(f"the cyclic pattern table needs at least {TABLE_M} bits, got {self.n_bits}")
        # the 15 windows not yet counted start at bits 1..15 of the tail (2 bytes), and wrap into the head
        wrap = np.concatenate([self._tail, self._head])
        counts = self.counts + self._windows(wrap, TABLE_M)
        counts[(int(wrap[0]) << 8) | int(wrap[1])] -= 1  # the window at bit 0 of the tail: already counted
        return counts


class SerialPsi2:
    """One-pass form of :func:`rngassay.checks.bits.serial.serial_psi2` (whole bytes; m <= 16)."""

    def __init__(self, m: int = 16, order: int = 1, table: CyclicPatterns | None = None):
        if not 2 <= m <= TABLE_M:
            raise InputError(f"the one-pass serial test takes m = 2..{TABLE_M}, got {m}")
        self.owns = table is None
        self.tab = table if table is not None else CyclicPatterns()
        self.m, self.order = m, order

    def update(self, chunk: np.ndarray) -> None:
        if self.owns:
            self.tab.update(chunk)

    def finish(self) -> CheckResult:
        return serial_from_table(self.tab.table(), {"n_bits": self.tab.n_bits, "m": self.m, "order": self.order})


class ApproximateEntropy(SerialPsi2):
    """One-pass form of :func:`rngassay.checks.bits.serial.approximate_entropy` (whole bytes; m + 1 <= 16)."""

    def __init__(self, m: int = 10, table: CyclicPatterns | None = None):
        if not 1 <= m < TABLE_M:
            raise InputError(f"the one-pass approximate entropy takes m = 1..{TABLE_M - 1}, got {m}")
        self.owns = table is None
        self.tab = table if table is not None else CyclicPatterns()
        self.m = m

    def finish(self) -> CheckResult:
        return apen_from_table(self.tab.table(), {"n_bits": self.tab.n_bits, "m": self.m})
