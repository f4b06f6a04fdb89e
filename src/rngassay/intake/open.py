"""Opening a source: a path, standard input, a command, a Python factory or a built-in generator, in a format,
as one decoded, accounted, hashed :class:`~rngassay.intake.stream.Stream`."""

from __future__ import annotations

import os

from .formats import parse_format
from .sources import ArraySource, RawSource, draw_function, open_source
from .stream import Stream


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
        from ..generators import GENERATORS

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
