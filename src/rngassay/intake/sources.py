"""Where bytes come from: files, standard input, commands, Python generators, built-in generators.

Every source is a :class:`RawSource`: ``read(n)`` blocks until it has ``n`` bytes or the source has
ended, and returns them (fewer only at the end, ``b""`` once ended). Sources stream: nothing holds
more than the caller asked for, so memory stays bounded whatever the stream's length.
"""

from __future__ import annotations

import collections
import importlib
import importlib.util
import inspect
import os
import shlex
import signal
import subprocess
import sys
import threading
from pathlib import Path
from typing import Any, Callable

import numpy as np

from ..errors import InputError


class RawSource:
    """Base class. ``kind`` is file, stdin, command, python or builtin; ``name`` describes it."""

    kind = "?"
    unlimited = False  # True when the source can always give more (generators)

    def __init__(self, name: str):
        self.name = name

    def read(self, n: int) -> bytes:  # pragma: no cover - abstract
        raise NotImplementedError

    def close(self) -> None:
        pass

    @property
    def where(self) -> str:
        return self.name

    def size_hint(self) -> int | None:
        """Total bytes available when known in advance (regular files), else None."""
        return None

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()


class _Peekable(RawSource):
    """A source whose first bytes can be looked at without consuming them (:meth:`peek`): they are read
    once, kept, and served again by :meth:`read` before the rest (so they are counted and hashed once)."""

    _peeked = b""

    def _read_raw(self, n: int) -> bytes:  # pragma: no cover - abstract
        raise NotImplementedError

    def peek(self, n: int) -> bytes:
        """The first ``n`` bytes (fewer only if the source ends first), left to be read again."""
        if len(self._peeked) < n:
            self._peeked += self._read_raw(n - len(self._peeked))
        return self._peeked[:n]

    def read(self, n: int) -> bytes:
        if not self._peeked:
            return self._read_raw(n)
        head, self._peeked = self._peeked[:n], self._peeked[n:]
        if len(head) == n:
            return head
        try:
            return head + self._read_raw(n - len(head))
        except InputError as e:  # the bytes served from the peek were consumed too
            e.partial_bytes = head + getattr(e, "partial_bytes", b"")  # type: ignore[attr-defined]
            raise


class FileSource(_Peekable):
    kind = "file"

    def __init__(self, path: str | os.PathLike):
        super().__init__(str(path))
        p = Path(path)
        if not p.exists():
            raise InputError("file not found", str(p), "check the path")
        if p.is_dir():
            raise InputError("is a directory, not a file", str(p), "give the path of a data file")
        try:
            self._f = open(p, "rb", buffering=0)
        except PermissionError:
            raise InputError("file is not readable (permission denied)", str(p), "check its permissions") from None
        except OSError as e:
            raise InputError(f"cannot open file: {e.strerror}", str(p), "check the path and permissions") from None
        try:
            st = os.fstat(self._f.fileno())
            self._size = st.st_size if p.is_file() else None
        except OSError:  # pragma: no cover
            self._size = None

    def size_hint(self) -> int | None:
        return self._size

    def _read_raw(self, n: int) -> bytes:
        parts = []
        got = 0
        while got < n:
            try:
                b = self._f.read(n - got)
            except OSError as e:
                raise _with_partial(InputError(f"read error: {e.strerror}", self.name, "check the file and device"),
                                    b"".join(parts)) from None
            if not b:
                break
            parts.append(b)
            got += len(b)
        return parts[0] if len(parts) == 1 else b"".join(parts)

    def close(self) -> None:
        self._f.close()


class StdinSource(_Peekable):
    kind = "stdin"

    def __init__(self, stream=None):
        super().__init__("stdin")
        self._f = stream if stream is not None else sys.stdin.buffer

    def _read_raw(self, n: int) -> bytes:
        # BufferedReader.read(n) blocks until n bytes or end of file, whatever the pipe's chunking;
        # raw streams may return short reads, so loop.
        parts = []
        got = 0
        while got < n:
            b = self._f.read(n - got)
            if not b:
                break
            parts.append(b)
            got += len(b)
        return parts[0] if len(parts) == 1 else b"".join(parts)


class CommandSource(RawSource):
    """Runs a command and reads its standard output.

    Spawned without a shell unless ``shell=True``. Once the caller has read enough it calls
    :meth:`close`, which closes the pipe and terminates the command. If the command ends before
    the caller is satisfied with a non-zero status or no output, :meth:`read` raises
    :class:`InputError` quoting the tail of its standard error.
    """

    kind = "command"
    unlimited = True

    def __init__(self, command: str, shell: bool = False):
        super().__init__(command)
        if not command or not command.strip():
            raise InputError("empty --command", "", "give the program and its arguments, e.g. --command 'mygen --seed 1'")
        try:
            args: Any = command if shell else shlex.split(command)
        except ValueError as e:
            raise InputError(f"cannot parse --command: {e}", "", "check the quoting") from None
        try:
            self._p = subprocess.Popen(
                args, shell=shell, stdin=subprocess.DEVNULL, stdout=subprocess.PIPE, stderr=subprocess.PIPE, bufsize=0,
                start_new_session=True,  # its own process group: ending it ends what it started too
            )
        except FileNotFoundError:
            prog = args if shell else args[0]
            raise InputError(
                f"command not found: {prog}", "--command", "check the program name and PATH (use --shell for shell syntax)"
            ) from None
        except PermissionError:
            raise InputError("command is not executable", "--command", "check its permissions") from None
        self._stderr_tail: collections.deque[bytes] = collections.deque(maxlen=64)
        self._t = threading.Thread(target=self._drain_stderr, daemon=True)
        self._t.start()
        self._total = 0
        self._closed = False

    def _drain_stderr(self) -> None:
        assert self._p.stderr is not None
        for line in iter(self._p.stderr.readline, b""):
            self._stderr_tail.append(line)

    def _tail(self) -> str:
        self._t.join(timeout=2)
        text = b"".join(self._stderr_tail).decode("utf-8", "replace").strip()
        text = " | ".join(s for s in text.splitlines()[-3:] if s.strip())
        return text[-300:]

    def read(self, n: int) -> bytes:
        assert self._p.stdout is not None
        parts = []
        got = 0
        while got < n:
            b = self._p.stdout.read(n - got)
            if not b:
                break
            parts.append(b)
            got += len(b)
        self._total += got
        data = parts[0] if len(parts) == 1 else b"".join(parts)
        if got < n:
            try:
                rc = self._p.wait(timeout=COMMAND_EXIT_TIMEOUT_S)
            except subprocess.TimeoutExpired:
                # it closed its standard output but keeps running: end it, the data it wrote counts
                self.close()
                raise _with_partial(InputError(
                    f"command closed its standard output after {self._total} bytes but did not exit within "
                    f"{COMMAND_EXIT_TIMEOUT_S:g} s; it was ended",
                    f"--command {self.name!r}",
                    "make the command exit when it stops writing, or give a smaller --budget",
                ), data)
            tail = self._tail()
            extra = f"; its stderr ends: {tail}" if tail else ""
            if rc != 0:
                raise _with_partial(InputError(
                    f"command exited with status {rc} after {self._total} bytes{extra}",
                    f"--command {self.name!r}",
                    "fix the command or run it by hand to see why",
                ), data)
            if self._total == 0:
                raise InputError(
                    f"command produced no output{extra}",
                    f"--command {self.name!r}",
                    "make it write its random bytes to standard output",
                )
        return data

    def close(self) -> None:
        if self._closed:
            return
        self._closed = True
        try:
            if self._p.stdout:
                self._p.stdout.close()
        except OSError:  # pragma: no cover
            pass
        running = self._p.poll() is None
        self._signal_group(signal.SIGTERM)  # the command and anything it started (a shell's children)
        if running:
            try:
                self._p.wait(timeout=5)
            except subprocess.TimeoutExpired:  # pragma: no cover
                self._signal_group(signal.SIGKILL)
                self._p.kill()
                self._p.wait()

    def _signal_group(self, sig: int) -> None:
        try:
            os.killpg(self._p.pid, sig)
        except (ProcessLookupError, PermissionError, OSError):
            pass


COMMAND_EXIT_TIMEOUT_S = 5.0  # a command that closed its output gets this long to exit before it is ended


def _with_partial(e: InputError, data: bytes) -> InputError:
    """Attach the bytes a failing read had already taken (``e.partial_bytes``): the stream hashes and
    counts them, so the byte count and SHA-256 cover every byte consumed."""
    e.partial_bytes = data  # type: ignore[attr-defined]
    return e


class ArraySource(RawSource):
    """A draw(n) callable as a source; used for Python specs and built-in generators."""

    unlimited = True

    def __init__(self, name: str, draw: Callable[[int], Any], kind: str):
        super().__init__(name)
        self.kind = kind
        self._draw = draw
        self._pending = b""

    def read(self, n: int) -> bytes:
        out = [self._pending[:n]]
        got = len(out[0])
        self._pending = self._pending[n:]
        while got < n:
            try:
                drawn = self._draw(n - got)
            except InputError as e:
                raise _with_partial(e, b"".join(out))
            except KeyboardInterrupt:
                raise
            except (Exception, SystemExit, GeneratorExit) as e:  # the user's generator died mid-stream
                what = f"exited (SystemExit {e.code!r})" if isinstance(e, SystemExit) else f"raised {type(e).__name__}"
                msg = f": {e}" if str(e) and not isinstance(e, SystemExit) else ""
                raise _with_partial(InputError(
                    f"the generator {what}{msg} after {got} bytes of this read",
                    f"--python {self.name}" if self.kind == "python" else self.name,
                    "fix the generator",
                ), b"".join(out)) from None
            try:
                b = _as_bytes(drawn, self.name)
            except InputError as e:
                raise _with_partial(e, b"".join(out))
            if not b:
                break
            if len(b) > n - got:
                self._pending = b[n - got :]
                b = b[: n - got]
            out.append(b)
            got += len(b)
        return b"".join(out)


def _as_bytes(value: Any, name: str) -> bytes:
    if isinstance(value, (bytes, bytearray, memoryview)):
        return bytes(value)
    if isinstance(value, np.ndarray):
        if value.dtype.kind == "f":
            raise InputError(
                f"draw() returned floats ({value.dtype}); it must return raw random bytes or unsigned integers",
                f"--python {name}",
                "return bytes or an unsigned-integer array; for floats write them to a file and use --format <f8",
            )
        if value.dtype.kind not in "ui":
            raise InputError(
                f"draw() returned an array of dtype {value.dtype}", f"--python {name}", "return bytes or an unsigned-integer array"
            )
        return np.ascontiguousarray(value).tobytes()
    raise InputError(
        f"draw() returned {type(value).__name__}, not bytes or a numpy array",
        f"--python {name}",
        "make draw(n_bytes) return bytes or an unsigned-integer numpy array",
    )


def load_python_spec(spec: str) -> Callable[..., Any]:
    """Resolve ``FILE.py:name`` or ``pkg.module:name`` to the named attribute."""
    if ":" not in spec:
        raise InputError(
            f"bad --python spec {spec!r}", "", "write FILE.py:callable or package.module:callable"
        )
    target, _, attr = spec.rpartition(":")
    if not target or not attr:
        raise InputError(f"bad --python spec {spec!r}", "", "write FILE.py:callable or package.module:callable")
    try:
        if target.endswith(".py") or os.sep in target or "/" in target:
            path = Path(target)
            if not path.is_file():
                raise InputError("Python file not found", target, "check the path in --python FILE.py:callable")
            mod_name = f"_rngassay_user_{abs(hash(str(path.resolve())))}"
            sp = importlib.util.spec_from_file_location(mod_name, path)
            if sp is None or sp.loader is None:  # pragma: no cover
                raise InputError("cannot load Python file", target, "check that it is a .py file")
            module = importlib.util.module_from_spec(sp)
            sys.modules[mod_name] = module
            sp.loader.exec_module(module)
        else:
            module = importlib.import_module(target)
    except InputError:
        raise
    except Exception as e:  # the user's code may raise anything while importing
        raise InputError(
            f"cannot import {target}: {type(e).__name__}: {e}", f"--python {spec}", "fix the module or the spec"
        ) from None
    try:
        obj = getattr(module, attr)
    except AttributeError:
        raise InputError(f"{target} has no attribute {attr!r}", f"--python {spec}", "check the name after the colon") from None
    if not callable(obj):
        raise InputError(f"{attr!r} in {target} is not callable", f"--python {spec}", "name a factory function")
    return obj


def draw_function(obj: Any, name: str) -> Callable[[int], Any]:
    """Adapt what a factory returned (BitGenerator, Generator or draw callable) to draw(n_bytes)."""
    if isinstance(obj, np.random.Generator):
        obj = obj.bit_generator
    if isinstance(obj, np.random.BitGenerator):
        bg = obj

        def draw(n: int) -> bytes:
            words = bg.random_raw(-(-n // 8))
            return np.asarray(words, dtype="<u8").tobytes()

        return draw
    if callable(obj):
        return obj
    raise InputError(
        f"the factory returned {type(obj).__name__}; expected a numpy BitGenerator, a numpy Generator "
        "or a callable draw(n_bytes)",
        f"--python {name}",
        "return one of those from the factory",
    )


class PythonSource(ArraySource):
    kind = "python"

    def __init__(self, spec: str, seed: int | None = None):
        factory = load_python_spec(spec)
        # the seed actually used, and where it came from (the report's audit trail records both): without
        # --seed, a factory that takes a seed gets one drawn from OS entropy (64 bits), so the run can be repeated
        # (a factory whose seed parameter defaults to an integer uses that default, as before)
        self.seed, self.seed_origin = seed, "given"
        takes, default = _seed_parameter(factory)
        if seed is None:
            if isinstance(default, int) and not isinstance(default, bool):
                self.seed, self.seed_origin = default, "the factory's default"
            elif takes:
                import secrets

                self.seed, self.seed_origin = secrets.randbits(64), "drawn"
            else:
                self.seed_origin = "none: the factory is called without a seed"
        try:
            made = factory(self.seed) if self.seed is not None else factory()
        except InputError:
            raise
        except Exception as e:
            raise InputError(
                f"the factory raised {type(e).__name__}: {e}", f"--python {spec}", "fix the factory"
            ) from None
        super().__init__(spec, draw_function(made, spec), "python")


def _seed_parameter(factory: Callable[..., Any]) -> tuple[bool, Any]:
    """Whether ``factory`` can be called with one positional argument (the seed), and that parameter's default
    (None when it has none)."""
    try:
        sig = inspect.signature(factory)
    except (TypeError, ValueError):  # pragma: no cover - builtins without signature
        return False, None
    for p in sig.parameters.values():
        if p.kind in (p.POSITIONAL_ONLY, p.POSITIONAL_OR_KEYWORD, p.VAR_POSITIONAL):
            return True, None if p.default is p.empty or p.kind == p.VAR_POSITIONAL else p.default
    return False, None


class BuiltinSource(ArraySource):
    kind = "builtin"

    def __init__(self, name: str, seed: int | None = None):
        from ..generators import GENERATORS, make_generator

        gen = make_generator(name, seed)
        self.seed = GENERATORS[name].default_seed if seed is None else seed
        self.seed_origin = "given" if seed is not None else "the generator's default"
        super().__init__(f"{name} seed={self.seed}", lambda n: gen.read(n).tobytes(), "builtin")
        self.generator_name = name


def open_source(
    path: str | None = None,
    *,
    command: str | None = None,
    shell: bool = False,
    python: str | None = None,
    gen: str | None = None,
    seed: int | None = None,
) -> RawSource:
    """Open exactly one source from CLI-style arguments."""
    given = [x for x in (path, command, python, gen) if x is not None]
    if len(given) > 1:
        raise InputError(
            "more than one source given", "", "give one of: a file path, '-', --command, --python, --gen"
        )
    if seed is not None and (path is not None or command is not None):
        raise InputError("--seed applies to --gen and --python only", "", "drop --seed (or use {seed} in --command for seed sweeps)")
    if command is not None:
        return CommandSource(command, shell=shell)
    if python is not None:
        return PythonSource(python, seed)
    if gen is not None:
        return BuiltinSource(gen, seed)
    if path is None or path == "-":
        return StdinSource()
    return FileSource(path)
