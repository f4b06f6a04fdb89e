"""Seeded-stream factories: how a seed becomes bytes.

A :class:`SeedFactory` is a small, picklable description that any worker process (local or on a Dask
cluster) turns into streams: ``factory.stream(seed, n)`` returns the first ``n`` bytes made from ``seed``.

- ``python``: ``FILE.py:NAME`` or ``package.module:NAME``; ``NAME(seed)`` returns a numpy BitGenerator,
  a numpy Generator (its bit generator's raw 64-bit words, little-endian) or a callable ``draw(n_bytes)``.
  The file's text travels with the factory, so a worker that cannot see the file at the same path
  still runs the same code (a module name must be importable on the workers).
- ``command``: a command line with a ``{seed}`` placeholder, run once per seed (no shell unless asked);
  the first ``n`` bytes of its standard output are the stream.
- ``gen``: a built-in reference generator (:func:`rngassay.generators.make_generator`).
- ``callable``: a Python callable handed to the API directly (same contract as ``python``).

The same seed must always give the same bytes: the sweep reads a seed's first bytes more than once
(early outputs, avalanche), and results must not depend on which worker made them.
"""

from __future__ import annotations

import hashlib
import os
import sys
import types
from dataclasses import dataclass, field
from typing import Any, Callable

import numpy as np

from ..errors import InputError

_LOADED: dict[tuple[str, str], Callable[..., Any]] = {}  # per process: (spec, digest) -> factory


@dataclass
class SeedFactory:
    kind: str  # python | command | gen | callable
    spec: str  # what the user gave (for messages and the report)
    shell: bool = False
    source_text: str | None = None  # python files: the file's text (travels to remote workers)
    obj: Any = field(default=None, repr=False)  # callable kind: the factory itself

    # -- construction ------------------------------------------------------------------------------------
    @classmethod
    def from_spec(cls, spec: Any) -> "SeedFactory":
        """The factory of a :class:`~rngassay.intake.open.SourceSpec` (its seed is left to the sweep; ``obj``:
        a callable factory(seed))."""
        return cls.from_options(python=spec.python, command=spec.command, gen=spec.gen, shell=spec.shell,
                                factory=spec.obj)

    @classmethod
    def from_options(cls, python: str | None = None, command: str | None = None, gen: str | None = None,
                     shell: bool = False, factory: Callable[..., Any] | None = None) -> "SeedFactory":
        given = [x for x in (python, command, gen, factory) if x is not None]
        if not given:
            raise InputError("no factory given", "", "use --python FILE.py:FACTORY, --command \"prog --seed {seed}\" "
                             "or --gen NAME")
        if len(given) > 1:
            raise InputError("more than one factory given", "", "give one of --python, --command, --gen")
        if shell and command is None:
            raise InputError("--shell applies to --command only", "", "drop --shell")
        if factory is not None:
            if not callable(factory):
                raise InputError(f"factory {factory!r} is not callable", "", "pass a function factory(seed)")
            name = getattr(factory, "__qualname__", type(factory).__name__)
            return cls("callable", name, obj=factory)
        if command is not None:
            if not command.strip():
                raise InputError("empty --command", "", "give e.g. --command \"mygen --seed {seed}\"")
            if "{seed}" not in command:
                raise InputError("--command has no {seed} placeholder", f"--command {command!r}",
                                 "write where the seed goes, e.g. --command \"mygen --seed {seed}\"")
            return cls("command", command, shell=shell)
        if gen is not None:
            from ..generators import GENERATORS

            if gen not in GENERATORS:
                raise InputError(f"unknown generator {gen!r} (known: {', '.join(GENERATORS)})", "--gen",
                                 "see `rngassay catalog`")
            return cls("gen", gen)
        assert python is not None
        from ..intake.sources import load_python_spec

        obj = load_python_spec(python)  # resolve now: a bad spec is one clear error before any work
        target = python.rpartition(":")[0]
        text = None
        if target.endswith(".py") or os.sep in target or "/" in target:
            try:
                with open(target, encoding="utf-8") as fh:
                    text = fh.read()
            except (OSError, UnicodeDecodeError):  # loaded above, so it exists; keep the path only
                text = None
        made = cls("python", python, source_text=text)
        _LOADED[made._key()] = obj  # this process need not import the file a second time
        return made

    def describe(self) -> str:
        return {"python": "--python ", "command": "--command ", "gen": "--gen ", "callable": "python callable "}[
            self.kind] + self.spec

    # -- use ---------------------------------------------------------------------------------------------
    def _key(self) -> tuple[str, str]:
        return (self.spec, hashlib.sha256((self.source_text or "").encode()).hexdigest())

    def _factory(self) -> Callable[..., Any]:
        if self.kind == "callable":
            return self.obj
        key = self._key()
        f = _LOADED.get(key)
        if f is None:
            f = _load_python(self.spec, self.source_text)
            _LOADED[key] = f
        return f

    def stream(self, seed: int, n: int) -> np.ndarray:
        """The first ``n`` bytes of the stream of ``seed`` as a uint8 array; InputError if it cannot."""
        seed = int(seed)
        where = f"seed {seed}"
        if self.kind == "gen":
            from ..generators import make_generator

            return np.asarray(make_generator(self.spec, seed).read(n), dtype=np.uint8)
        if self.kind == "command":
            from ..intake.sources import CommandSource

            cmd = self.spec.replace("{seed}", str(seed))
            src = CommandSource(cmd, shell=self.shell)
            try:
                b = src.read(n)
            finally:
                src.close()
            if len(b) < n:
                raise InputError(f"command produced only {len(b)} bytes, {n} needed", f"{where}: --command {cmd!r}",
                                 "make it write more, or give a smaller --bytes-per-seed")
            return np.frombuffer(b, dtype=np.uint8)
        from ..intake.sources import ArraySource, draw_function

        factory = self._factory()
        try:
            made = factory(seed)
        except InputError:
            raise
        except Exception as e:  # the user's code may raise anything
            raise InputError(f"the factory raised {type(e).__name__}: {e}", f"{where}: {self.describe()}",
                             "fix the factory (it is called as factory(seed))") from None
        draw = draw_function(made, self.spec)
        try:
            b = ArraySource(self.spec, draw, "python").read(n)
        except InputError:
            raise
        except Exception as e:
            raise InputError(f"drawing from the factory's result raised {type(e).__name__}: {e}",
                             f"{where}: {self.describe()}", "fix the factory") from None
        if len(b) < n:
            raise InputError(f"the factory's stream ended after {len(b)} bytes, {n} needed",
                             f"{where}: {self.describe()}", "give a smaller --bytes-per-seed")
        return np.frombuffer(b, dtype=np.uint8)

    def streams(self, seeds: np.ndarray, n: int) -> np.ndarray:
        """Streams of several seeds as a (len(seeds), n) uint8 matrix (one factory call per seed)."""
        out = np.empty((len(seeds), n), dtype=np.uint8)
        for i, s in enumerate(seeds):  # a loop over seeds (factory calls), not over data values
            out[i] = self.stream(int(s), n)
        return out


def _same_text(path: str, text: str) -> bool:
    try:
        with open(path, encoding="utf-8") as fh:
            return fh.read() == text
    except (OSError, UnicodeDecodeError):
        return False


def _load_python(spec: str, source_text: str | None) -> Callable[..., Any]:
    from ..intake.sources import load_python_spec

    target, _, attr = spec.rpartition(":")
    if source_text is None or _same_text(target, source_text):
        return load_python_spec(spec)
    # a worker without the file (or with another file at that path): run the text that travelled along
    name = f"_rngassay_seed_factory_{hashlib.sha256(source_text.encode()).hexdigest()[:16]}"
    module = types.ModuleType(name)
    module.__file__ = target
    sys.modules[name] = module
    try:
        exec(compile(source_text, target, "exec"), module.__dict__)
    except Exception as e:
        raise InputError(f"cannot import {target} on a worker: {type(e).__name__}: {e}", f"--python {spec}",
                         "make the file and what it imports available to the workers") from None
    obj = getattr(module, attr, None)
    if not callable(obj):
        raise InputError(f"{target} has no callable {attr!r}", f"--python {spec}", "check the name after the colon")
    return obj
