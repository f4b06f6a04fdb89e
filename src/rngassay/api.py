"""Python API: what the command line and users' own CI tests call.

``assay(source, budget=...)`` reads a stream, runs the checks and returns a report object with
``.verdict``, ``.checks``, ``.to_json()`` and ``.exit_code()``.
"""

from __future__ import annotations

import os
from typing import Any, Callable

import numpy as np

from .errors import InputError
from .intake.formats import parse_format
from .intake.sources import ArraySource, RawSource, draw_function, open_source
from .intake.stream import Stream
from .sizes import parse_size
from .battery.battery import run_battery, stopped_report
from .battery.run import armed, signal_guard, signal_name
from .battery.grade import DEFAULT_ALPHA
from .battery.plan import Plan, make_plan
from .model import Report
from .fitting import fit  # noqa: F401  (re-exported: rngassay.api.fit)

DEFAULT_BUDGET = 64 << 20
BUFFER_LIMIT = 256 << 20  # finite sources up to this size are read and validated before planning


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
    """Open a source and wrap it in a decoded, accounted :class:`Stream`.

    A built-in generator whose output is meant to be read in a format of its own (doubles: ``<f8``) is read
    in that format when ``fmt`` is not given."""
    if fmt is None and gen is not None and value_range is None:
        from .generators import GENERATORS

        info = GENERATORS.get(gen)
        fmt = info.default_format if info is not None else None
    f = parse_format(fmt, value_range)
    if isinstance(source, RawSource):
        raw = source
    elif source is not None and not isinstance(source, (str, os.PathLike)):
        # a numpy Generator / BitGenerator, or a draw(n_bytes) callable, handed over directly
        raw = ArraySource(type(source).__name__, draw_function(source, type(source).__name__), "python")
    else:
        raw = open_source(source, command=command, shell=shell, python=python, gen=gen, seed=seed)
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
    checks: list[str] | None = None,
    skip: list[str] | None = None,
    alpha: float = DEFAULT_ALPHA,
    workers: int | None = 1,
    retest: bool = True,
    progress: Callable[[str], None] | None = None,
    plan_only: bool = False,
    cluster: str | None = None,
) -> Report | Plan:
    """Assay a stream and return its :class:`~rngassay.model.Report`.

    ``source`` is a file path, ``"-"`` for standard input, or a :class:`RawSource`; or give one of
    ``command``, ``python``, ``gen`` (with ``seed``). ``budget`` is the number of bytes to assay
    (``"64MiB"`` or an int; default 64 MiB; a file shorter than that is read whole unless ``budget``
    is given). ``checks``/``skip`` select checks by key, family or identifier. With ``plan_only`` the
    :class:`~rngassay.battery.plan.Plan` is returned without reading any data.
    """
    import time

    t0 = time.perf_counter()
    if not (0 < alpha < 1):
        raise InputError(f"--alpha must be between 0 and 1, got {alpha}", "", "e.g. --alpha 0.001")
    explicit = budget is not None
    budget_bytes = parse_size(budget) if explicit else DEFAULT_BUDGET
    executor = None
    if cluster is not None and not plan_only:
        from .battery.cluster import DaskExecutor

        # connect before any data is read (unreachable: one InputError line); run_battery's `with` closes it
        executor = DaskExecutor(cluster).__enter__()
    stream = open_stream(
        source, fmt=fmt, value_range=value_range, command=command, shell=shell, python=python, gen=gen, seed=seed
    )
    with signal_guard(), stream:
        try:
            f = stream.fmt
            size = stream.source.size_hint()
            shared = not stream.unlimited
            if shared:
                if size == 0:
                    raise InputError("empty stream: no bytes to test", stream.source.where, "check the source produces data")
                if not f.is_binary:
                    # text: the budget counts values, and a finite text source is read whole up to it, so
                    # that every value decoded is examined (bytes read and the SHA-256 cover the same values)
                    stream = _buffered(stream, budget_bytes)
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
                if f.is_binary and _read_ahead(size, explicit, budget_bytes, f, plan_only):
                    # read (and validate) before planning: standard input of unknown length with no --budget
                    # (at most the default budget), and anything small enough -- so that bad values are
                    # reported before any work. A pipe, FIFO or device with a larger --budget is planned for
                    # that budget and read in segments like a file of that size (bounded memory).
                    stream = _buffered(stream, budget_bytes)
                    whole = budget_bytes - budget_bytes % f.itemsize
                    if explicit and stream.bytes_read < whole:
                        raise InputError(
                            f"stream is shorter than the plan needs ({whole} bytes needed, "
                            f"{stream.bytes_read} available)",
                            stream.source.where,
                            "give a smaller --budget",
                        )
                    budget_bytes = min(budget_bytes, stream.bytes_read)
            grid_note = None
            if isinstance(stream, _MemoryStream) and f.kind in ("floats", "text-floats"):
                f, grid_note = _value_grid(f, stream.source.vals)
                wrapped = getattr(getattr(stream._inner, "decoder", None), "wrapped_ones", 0)
                if wrapped:  # honest rounding of values just below 1 (see intake.formats)
                    grid_note += (f"; {wrapped} value{'s' if wrapped != 1 else ''} printed as 1.0 (rounded from "
                                  "just below 1) read as 0.0, the same point of the grid")
                stream.fmt = f
        except KeyboardInterrupt as e:
            # a stop signal while the source was read ahead (e.g. standard input): nothing was checked,
            # but the run still ends in a report -- "no verdict", marked incomplete
            plan = make_plan(stream.fmt, budget_bytes, shared=not stream.unlimited, checks=checks, skip=skip)
            return stopped_report(stream, plan, f"interrupted by {signal_name(getattr(e, 'signum', 2))} while "
                                  "reading the source", alpha=alpha, t0=t0,
                                  settings={"workers_used": workers, "retest": retest})
        plan = make_plan(f, budget_bytes, shared=shared, checks=checks, skip=skip)
        if plan_only:
            return plan
        settings = {"workers_used": workers, "retest": retest}
        if executor is not None:
            settings = {"executor": executor.describe(), "retest": retest}
        if grid_note:
            settings["value grid"] = grid_note
        report = run_battery(
            stream, plan, alpha=alpha, workers=workers, retest=retest, progress=progress,
            settings=settings, t0=t0, executor=executor,
        )
    return report


def _value_grid(f, vals: np.ndarray):
    """The grid float values read whole lie on, as a format the views follow, and a line for the report."""
    import dataclasses

    from .intake import views

    if f.kind == "text-floats":
        d = views.decimal_grid(vals)
        if d is not None and d >= 1:
            return dataclasses.replace(f, decimals=d), (
                f"printed with {d} decimals: every value on the 10^-{d} grid; bit views take the {d} bits "
                f"the digits carry, uniforms are spread over their grid cells (dither seed {views.DITHER_SEED})")
    claimed = views.uniform_resolution_bits(f)
    r = views.fraction_grid_bits(vals, claimed)
    line = (f"every value a multiple of 2^-{r} ({r} fraction bits; the format holds {claimed})"
            + ("; word and bit views take only these bits" if r < claimed else ""))
    return dataclasses.replace(f, grid_bits=r), line


def render_text(report: Report, color: bool = False) -> str:
    """The report as the terminal table the command line prints (worst checks first, verdict, cautions)."""
    from .report.terminal import render

    return render(report, color=color)


def sweep_seeds(*args, **kwargs):
    """The seed sweep; see :func:`rngassay.seeds.sweep.sweep_seeds` (same arguments, returns a Report)."""
    from .seeds.sweep import sweep_seeds as _sweep

    return _sweep(*args, **kwargs)


class _MemorySource(RawSource):
    """Values already read into memory, served again before the rest of the source."""

    def __init__(self, inner: Stream, vals: np.ndarray):
        super().__init__(inner.source.name)
        self.kind = inner.source.kind
        self.inner = inner
        self.vals = vals
        self.values_total = int(vals.size)

    @property
    def where(self) -> str:
        return self.inner.source.where


class _MemoryStream(Stream):
    """A stream whose first values were read ahead (to validate and size them); the rest follows."""

    def __init__(self, inner: Stream, vals: np.ndarray):
        self.source = _MemorySource(inner, vals)
        self.fmt = inner.fmt
        self.values_read = 0
        self._inner = inner
        self._pos = 0

    @property
    def bytes_read(self) -> int:  # type: ignore[override]
        return self._inner.bytes_read

    @property
    def ended(self) -> bool:  # type: ignore[override]
        return self._pos >= self.source.vals.size and self._inner.ended

    @property
    def unlimited(self) -> bool:
        return self._inner.unlimited

    def read_values(self, n: int) -> np.ndarray:
        out = self.source.vals[self._pos : self._pos + n]
        self._pos += out.size
        if out.size < n and not self._inner.ended:
            more = self._inner.read_values(n - out.size)
            out = np.concatenate([out, more]) if out.size else more
        self.values_read += out.size
        return out

    def info(self):
        info = self._inner.info()
        info.format = self.fmt.describe()  # names the grid found when the values were read whole
        return info

    def close(self) -> None:
        self._inner.close()


def _read_ahead(size: int | None, explicit: bool, budget_bytes: int, f, plan_only: bool) -> bool:
    """Whether a finite binary source is read into memory before planning (see :func:`assay`): the same
    rule for a pipe, FIFO or device as for a file, so the same bytes give the same report; never more
    than BUFFER_LIMIT (or the default budget when the length is unknown and no budget is given)."""
    if size is None and not explicit:
        return True  # unknown length, no budget: read up to the default budget to learn it
    return budget_bytes <= BUFFER_LIMIT and not plan_only


def _buffered(stream: Stream, budget_bytes: int) -> Stream:
    """Read up to ``budget_bytes`` of the stream into memory (whole values) and serve them again.

    Reading is interruptible (a stop signal raises even where signals are otherwise deferred)."""
    with armed():
        return _read_into_memory(stream, budget_bytes)


def _read_into_memory(stream: Stream, budget_bytes: int) -> Stream:
    chunks = []
    if stream.fmt.is_binary:
        vals = stream.read_values(budget_bytes // stream.fmt.itemsize)
        if stream.ended:
            stream.read_values(1)  # reaches the end: a trailing partial value raises
        chunks.append(vals)
    else:  # text: budget_bytes counts values
        got = 0
        while got < budget_bytes and not stream.ended:
            chunks.append(stream.read_values(min(1 << 20, budget_bytes - got)))
            got += chunks[-1].size
    vals = np.concatenate(chunks) if chunks else np.empty(0, dtype=stream.fmt.dtype)
    if vals.size == 0:
        raise InputError("empty stream: no values to test", stream.source.where, "check the source produces data")
    return _MemoryStream(stream, vals)


class _ArrayRaw(RawSource):
    kind = "python"

    def __init__(self, name: str, data: bytes):
        super().__init__(name)
        self._data, self._pos = data, 0

    def size_hint(self) -> int | None:
        return len(self._data)

    def read(self, n: int) -> bytes:
        out = self._data[self._pos : self._pos + n]
        self._pos += len(out)
        return out


def stream_from_array(values: np.ndarray, fmt: str = "<f8", name: str = "array", kind: str = "derived") -> Stream:
    """A finite stream over an in-memory array (e.g. PIT uniforms made from a supplier's variates).

    The array is encoded in ``fmt`` (validated like any input) and read back through the normal intake,
    so the battery treats it exactly as a file with that content.
    """
    raw = _ArrayRaw(name, np.ascontiguousarray(values, dtype=np.dtype(fmt)).tobytes())
    raw.kind = kind
    return Stream(raw, parse_format(fmt))


def assay_stream(
    stream: Stream,
    *,
    budget: int | None = None,
    checks: list[str] | None = None,
    skip: list[str] | None = None,
    alpha: float = DEFAULT_ALPHA,
    workers: int | None = 1,
    retest: bool = True,
    progress: Callable[[str], None] | None = None,
    command: str = "test",
    strict_selectors: bool = True,
    windows: bool = True,
) -> Report:
    """Run the battery on an already-open finite stream (all of it, or ``budget`` bytes).

    ``strict_selectors=False`` lets selectors that name no battery check pass silently (for callers such
    as ``fit`` whose selectors also name checks of their own)."""
    size = stream.source.size_hint()
    budget_bytes = budget if budget is not None else (size if size is not None else DEFAULT_BUDGET)
    plan = make_plan(stream.fmt, budget_bytes, shared=not stream.unlimited, checks=checks, skip=skip,
                     strict_selectors=strict_selectors, windows=windows)
    return run_battery(stream, plan, alpha=alpha, workers=workers, retest=retest, progress=progress,
                       command=command, settings={"workers_used": workers, "retest": retest})
