"""The budget, resolved once: how much of a source a run reads, in the unit the format counts.

Binary formats count bytes; text counts values (a text file's bytes say little about how many values it
holds). :func:`resolve` applies the rules of a run to an open stream: a finite source shorter than the default
budget is read whole, a finite text source is read whole (every value decoded is examined), a finite binary
source up to :data:`~rngassay.intake.memory.BUFFER_LIMIT` is read ahead (validated before any work), and a
budget larger than the source is refused. It returns the stream to read from (possibly one served from
memory), the budget, and the value grid found when float values were read whole.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..errors import InputError
from ..sizes import parse_size
from .memory import DEFAULT_BUDGET, MemoryStream, buffered, read_ahead, value_grid
from .stream import Stream


@dataclass(frozen=True)
class Budget:
    """``amount`` of ``unit`` ("bytes" for binary formats, "values" for text); ``explicit``: the user gave it."""

    amount: int
    unit: str
    explicit: bool

    def __int__(self) -> int:
        return self.amount

    def describe(self) -> str:
        return f"{self.amount} {self.unit}"


@dataclass
class Resolved:
    stream: Stream
    budget: Budget
    grid_note: str | None = None


def requested(budget: str | int | None, fmt) -> Budget:
    """The budget as asked for (default 64 MiB, or 64 Mi values for text), before the source is looked at."""
    explicit = budget is not None
    amount = parse_size(budget) if explicit else DEFAULT_BUDGET
    return Budget(amount, "bytes" if fmt.is_binary else "values", explicit)


def resolve(stream: Stream, budget: Budget, plan_only: bool = False) -> Resolved:
    """Apply the run's rules to an open stream (see the module's docstring); reading ahead is interruptible."""
    explicit, budget_bytes = budget.explicit, budget.amount
    f = stream.fmt
    # hex: the file's size counts digits and white space, not the decoded bytes the budget counts; unknown
    # until decoded, so it is read like a pipe (read ahead up to the budget, or planned for an explicit one)
    size = stream.source.size_hint() if f.encoding is None else None
    shared = not stream.unlimited
    if shared:
        if size == 0:
            raise InputError("empty stream: no bytes to test", stream.source.where, "check the source produces data")
        if not f.is_binary:
            # text: the budget counts values, and a finite text source is read whole up to it, so
            # that every value decoded is examined (bytes read and the SHA-256 cover the same values)
            stream = buffered(stream, budget_bytes)
            if explicit and stream.source.values_total < budget_bytes:
                raise InputError(
                    f"stream is shorter than the plan needs ({budget_bytes} values needed, "
                    f"{stream.source.values_total} available)",
                    stream.source.where,
                    "give a smaller --budget (for text it counts values)",
                )
            budget_bytes = stream.source.values_total
        elif not explicit and size is not None:
            budget_bytes = min(budget_bytes, size)
            if f.is_binary and size % f.itemsize and budget_bytes == size:
                left = size % f.itemsize
                raise InputError(
                    f"stream length {size} bytes is not a whole number of {f.itemsize}-byte values "
                    f"({left} byte{'s' if left != 1 else ''} left over)",
                    f"{stream.source.where} byte offset {size - left}",
                    "check --format, or trim the stream to whole values (no data is dropped silently)",
                )
        if f.is_binary and explicit and size is not None and size < budget_bytes:
            raise InputError(
                f"stream is shorter than the plan needs ({budget_bytes} bytes needed, {size} available)",
                stream.source.where,
                "give a smaller --budget",
            )
        if f.is_binary and read_ahead(size, explicit, budget_bytes, f, plan_only):
            # read (and validate) before planning: standard input of unknown length with no --budget
            # (at most the default budget), and anything small enough -- so that bad values are
            # reported before any work. A pipe, FIFO or device with a larger --budget is planned for
            # that budget and read in segments like a file of that size (bounded memory).
            stream = buffered(stream, budget_bytes)
            whole = budget_bytes - budget_bytes % f.itemsize
            got = stream.source.values_total * f.itemsize  # bytes read (hex: decoded bytes)
            if explicit and got < whole:
                raise InputError(
                    f"stream is shorter than the plan needs ({whole} bytes needed, {got} available"
                    + (", decoded from hex)" if f.encoding else ")"),
                    stream.source.where,
                    "give a smaller --budget",
                )
            budget_bytes = min(budget_bytes, got)
    grid_note = None
    if isinstance(stream, MemoryStream) and f.kind in ("floats", "text-floats"):
        f, grid_note = value_grid(f, stream.source.vals)
        wrapped = getattr(getattr(stream._inner, "decoder", None), "wrapped_ones", 0)
        if wrapped:  # honest rounding of values just below 1 (see intake.formats)
            grid_note += (f"; {wrapped} value{'s' if wrapped != 1 else ''} printed as 1.0 (rounded from "
                          "just below 1) read as 0.0, the same point of the grid")
        stream.fmt = f
    return Resolved(stream, Budget(budget_bytes, budget.unit, explicit), grid_note)
