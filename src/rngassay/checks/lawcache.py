"""Null laws that take a while to compute, kept on disk between runs.

Some checks' exact null laws depend only on their parameters and cost a noticeable part of a short run to
compute (e.g. the exact mean number of repeated birthday spacings: about 0.4 s; the exact run-length
moments: about 0.3 s). Each run computed them again, and so did every worker process. :func:`kept` keeps such a
function's results in a small JSON file in the user's cache folder, so they are computed once per machine.

- The file's name carries a hash of the function's source: a changed function starts a new file, never reads
  an old one's values.
- Values are stored exactly: floats by their shortest round-trip repr (JSON), integers and fractions as text.
- The cache folder is ``$RNGASSAY_CACHE_DIR`` if set (set it empty to turn the cache off), else
  ``$XDG_CACHE_HOME/rngassay`` or ``~/.cache/rngassay``. A folder that cannot be written, or a file that cannot
  be read, only means the values are computed; never an error.
- Files are replaced atomically; two processes writing at once lose at most each other's new entries, which
  are then computed again.
"""

from __future__ import annotations

import functools
import hashlib
import inspect
import json
import numbers
import os
import tempfile
from fractions import Fraction
from typing import Any, Callable


def cache_dir() -> str | None:
    """The folder the laws are kept in, or None when the cache is turned off."""
    env = os.environ.get("RNGASSAY_CACHE_DIR")
    if env is not None:
        return env or None
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return os.path.join(base, "rngassay")


def _encode(v: Any) -> Any:
    if isinstance(v, bool) or v is None or isinstance(v, str):
        return v
    if isinstance(v, numbers.Integral):  # numpy integers too
        return {"int": str(int(v))}
    if isinstance(v, (float, numbers.Real)) and not isinstance(v, Fraction):
        return float(v)
    if isinstance(v, Fraction):
        return {"fraction": f"{v.numerator}/{v.denominator}"}
    if isinstance(v, (tuple, list)):
        return {"tuple" if isinstance(v, tuple) else "list": [_encode(x) for x in v]}
    raise TypeError(f"lawcache cannot keep a {type(v).__name__}")


def _decode(v: Any) -> Any:
    if isinstance(v, dict):
        (kind, x), = v.items()
        if kind == "int":
            return int(x)
        if kind == "fraction":
            return Fraction(x)
        items = [_decode(y) for y in x]
        return tuple(items) if kind == "tuple" else items
    return v


def kept(func: Callable[..., Any]) -> Callable[..., Any]:
    """Keep ``func``'s results on disk, keyed by its arguments (ints, floats, strings) and its source."""
    digest = hashlib.sha256(inspect.getsource(func).encode()).hexdigest()[:16]
    filename = f"{func.__module__}.{func.__qualname__}-{digest}.json"
    memo: dict[str, Any] | None = None
    path: str | None = None

    def load() -> dict[str, Any]:
        nonlocal path
        folder = cache_dir()
        path = None if folder is None else os.path.join(folder, filename)
        if path is None:
            return {}
        try:
            with open(path, encoding="utf-8") as f:
                data = json.load(f)
            return data if isinstance(data, dict) else {}
        except (OSError, ValueError):
            return {}

    def save(table: dict[str, Any]) -> None:
        if path is None:
            return
        try:
            os.makedirs(os.path.dirname(path), exist_ok=True)
            fd, tmp = tempfile.mkstemp(dir=os.path.dirname(path), prefix=".lawcache-", suffix=".tmp")
            try:
                with os.fdopen(fd, "w", encoding="utf-8") as f:
                    json.dump(table, f)
                os.replace(tmp, path)
            except BaseException:
                os.unlink(tmp)
                raise
        except OSError:
            pass  # a read-only or full disk: the values are simply computed next time too

    @functools.wraps(func)
    def wrapper(*args: Any) -> Any:
        nonlocal memo
        if memo is None:
            memo = load()
        try:
            key = json.dumps([_encode(a) for a in args])
        except TypeError:  # an argument the cache cannot name: just compute
            return func(*args)
        if key in memo:
            try:
                return _decode(memo[key])
            except (TypeError, ValueError, AttributeError):
                pass  # a damaged entry: compute it again
        value = func(*args)
        try:
            encoded = _encode(value)
        except TypeError:  # a value the cache cannot keep exactly: returned, not kept
            return value
        fresh = load()  # entries other processes kept meanwhile
        fresh.update(memo)
        fresh[key] = encoded
        memo = fresh
        save(memo)
        return value

    wrapper.cache_file = lambda: None if cache_dir() is None else os.path.join(cache_dir(), filename)  # type: ignore[attr-defined]
    wrapper.forget = lambda: _forget()  # type: ignore[attr-defined]

    def _forget() -> None:
        nonlocal memo
        memo = None

    return wrapper
