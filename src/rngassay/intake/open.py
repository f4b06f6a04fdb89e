"""Opening a source: a path, standard input, a command, a Python factory or a built-in generator, in a format,
as one decoded, accounted, hashed :class:`~rngassay.intake.stream.Stream`."""

from __future__ import annotations

import os
from dataclasses import dataclass
from typing import Any

from ..errors import InputError
from .formats import parse_format
from .sniff import SNIFF_BYTES, refuse_printed
from .sources import ArraySource, FileSource, RawSource, StdinSource, draw_function, open_source
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
    in that format when ``fmt`` is not given. A file or standard input opened here with no ``fmt`` is sniffed
    (:mod:`rngassay.intake.sniff`): printed numbers or hex digits stop with an error naming the format to pass."""
    if fmt is None and gen is not None and value_range is None:
        from ..generators import GENERATORS

        info = GENERATORS.get(gen)
        fmt = info.default_format if info is not None else None
    sniffing = fmt is None and gen is None and command is None and python is None and (
        source is None or isinstance(source, (str, os.PathLike)))
    # a bad format is refused before a source is opened; --range with no --format only after sniffing (which
    # names the format to pass when the input is printed numbers)
    f = parse_format(fmt, value_range) if not (sniffing and value_range is not None) else None
    if isinstance(source, RawSource):
        raw = source
    elif source is not None and not isinstance(source, (str, os.PathLike)):
        # a numpy Generator / BitGenerator, or a draw(n_bytes) callable, handed over directly
        raw = ArraySource(type(source).__name__, draw_function(source, type(source).__name__), "python")
    else:
        raw = open_source(source, command=command, shell=shell, python=python, gen=gen, seed=seed)
        if sniffing and isinstance(raw, (FileSource, StdinSource)):
            try:
                head = raw.peek(SNIFF_BYTES)
                refuse_printed(head, len(head) < SNIFF_BYTES, raw.where)
                f = f or parse_format(fmt, value_range)
            except BaseException:
                raw.close()
                raise
    return Stream(raw, f)


@dataclass(frozen=True)
class SourceSpec:
    """Where a run's values come from -- the one description of a source that api, the command line and seed
    sweeps share: a ``path`` (``"-"``: standard input), a ``command`` (``shell``: through the shell), a ``python``
    factory ``FILE.py:NAME``, a built-in generator ``gen`` (with ``seed``), or an object handed over in Python
    (``obj``: a RawSource, a numpy Generator/BitGenerator or a draw(n_bytes) callable); and the format."""

    path: str | None = None
    command: str | None = None
    shell: bool = False
    python: str | None = None
    gen: str | None = None
    seed: int | None = None
    fmt: str | None = None
    value_range: str | tuple[int, int] | None = None
    obj: Any = None

    def given(self) -> list[str]:
        """The kinds of source named (one expected)."""
        named = {"a path": self.path, "--command": self.command, "--python": self.python, "--gen": self.gen,
                 "an object": self.obj}
        return [k for k, v in named.items() if v is not None]

    def check(self) -> None:
        """Options that cannot go together: one line naming them, before anything is opened."""
        if self.shell and self.command is None:
            raise InputError("--shell applies to --command only", "", "drop --shell or give --command")

    def open(self) -> Stream:
        """The decoded, accounted, hashed stream of this source."""
        self.check()
        return open_stream(self.obj if self.obj is not None else self.path, fmt=self.fmt,
                           value_range=self.value_range, command=self.command, shell=self.shell, python=self.python,
                           gen=self.gen, seed=self.seed)

    def files(self, extra: tuple = ()) -> list[str]:
        """Every existing file a run with this source reads (never to be overwritten by a report): the path, the
        --python module's file, a command's arguments that name existing files (the program itself too), and
        ``extra`` (e.g. an odds file, a seeds file)."""
        import shlex

        paths = [p for p in (self.path, *extra) if isinstance(p, str) and p]
        if self.python:
            mod = self.python.rsplit(":", 1)[0] if ":" in self.python else self.python
            if os.path.exists(mod):
                paths.append(mod)
            elif mod and not mod.endswith(".py"):
                try:
                    import importlib.util

                    spec = importlib.util.find_spec(mod)
                    if spec is not None and spec.origin and os.path.exists(spec.origin):
                        paths.append(spec.origin)
                except (ImportError, ValueError, AttributeError):
                    pass
        if self.command:
            try:
                words = shlex.split(self.command)
            except ValueError:
                words = self.command.split()
            for w in words:
                for part in ([w] + (w.split("=", 1)[1:] if "=" in w else [])):
                    if part and os.path.exists(part) and not os.path.isdir(part):
                        paths.append(part)
        return paths
