"""Writing report files atomically and reading JSON reports back.

A report file is either the old one or the complete new one, never a half-written mix: the data goes to a
temporary file in the same directory, is flushed and fsynced, and then renamed over the target with
``os.replace`` (atomic on POSIX and Windows when both names are on the same file system).
"""

from __future__ import annotations

import json
import os
import tempfile
from pathlib import Path
from typing import Any

from ..errors import InputError
from .model import GRADES, SCHEMA

SCHEMA_PREFIX = "rngassay-report/"


def check_report_paths(outputs: list[tuple[str, str]], inputs: list[str]) -> None:
    """Refuse report paths that would destroy something: an input file, a device or pipe, a folder,
    the same file twice, or a path in a folder that does not exist. Called before any work is done."""
    seen: set[str] = set()
    real_inputs = [os.path.realpath(p) for p in inputs if p and p != "-" and os.path.exists(p)]
    for what, path in outputs:
        full = os.path.realpath(path)
        if full in seen:
            raise InputError("two reports would be written to the same file", path, "give each report its own path")
        seen.add(full)
        if full in real_inputs:
            raise InputError(f"the {what} would overwrite an input file", path, "choose another report path")
        if os.path.isdir(full):
            raise InputError(f"{what} path is a directory", path, "give a file name")
        if os.path.exists(full) and not os.path.isfile(full):
            raise InputError(f"{what} path is a device, pipe or socket, not a regular file", path, "give a file name")
        if not os.path.isdir(os.path.dirname(full)):
            raise InputError(f"cannot write {what}: folder does not exist", path, "create the folder or choose another path")


def write_atomic(path: str | os.PathLike[str], data: str | bytes) -> None:
    """Write ``data`` (text is UTF-8 encoded) to ``path`` atomically.

    Raises :class:`InputError` when the parent directory is missing, when ``path`` is an existing directory,
    or when the file system refuses the write; no partial file and no temporary file is left behind.
    """
    where = str(path)
    target = Path(os.path.realpath(path))  # a symlink's target gets the report, not the link replaced
    if isinstance(data, str):
        data = data.encode("utf-8")
    if target.exists() and not target.is_file() and not target.is_dir():
        raise InputError(
            "cannot write report: the path is a device, pipe or socket, not a regular file", where,
            "give a file name, e.g. report.json",
        )
    if target.is_dir():
        raise InputError("cannot write report: the path is a directory", where, "give a file name, e.g. report.html")
    parent = target.parent if str(target.parent) else Path(".")
    if not parent.is_dir():
        raise InputError(
            "cannot write report: the directory does not exist", where, f"create {parent} first or choose another path"
        )
    tmp_name: str | None = None
    try:
        fd, tmp_name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=parent)
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        # mkstemp creates 0600; give the report the permissions a normally created file would have.
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp_name, 0o666 & ~umask)
        os.replace(tmp_name, target)
        tmp_name = None
    except OSError as e:
        raise InputError(
            f"cannot write report: {e.strerror or e}", where, "check the path and its permissions, and free disk space"
        ) from e
    finally:
        if tmp_name is not None:
            try:
                os.unlink(tmp_name)
            except OSError:
                pass
    _fsync_dir(parent)


def _fsync_dir(directory: Path) -> None:
    """Make the rename durable where the platform allows it (best effort)."""
    try:
        fd = os.open(directory, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def read_report_json(path: str | os.PathLike[str]) -> dict[str, Any]:
    """Read a JSON report written by ``rngassay`` and return it as a dict.

    Raises :class:`InputError` (exit 2 at the command line) when the file cannot be read, is not JSON, is not
    a JSON object, has no ``schema`` starting with ``rngassay-report/``, or has no list of checks.
    """
    where = str(path)
    hint_json = "give a report written with --json (schema " + SCHEMA + ")"
    try:
        text = Path(path).read_text(encoding="utf-8")
    except IsADirectoryError:
        raise InputError("cannot read report: the path is a directory", where, hint_json) from None
    except FileNotFoundError:
        raise InputError("cannot read report: no such file", where, "check the path") from None
    except UnicodeDecodeError:
        raise InputError("cannot read report: not UTF-8 text", where, hint_json) from None
    except OSError as e:
        raise InputError(f"cannot read report: {e.strerror or e}", where, "check the path and its permissions") from e
    try:
        d = json.loads(text)
    except json.JSONDecodeError as e:
        raise InputError(f"not a JSON report: {e.msg} at line {e.lineno} column {e.colno}", where, hint_json) from None
    if not isinstance(d, dict):
        raise InputError("not a JSON report: the top level is not an object", where, hint_json)
    schema = d.get("schema")
    if not isinstance(schema, str) or not schema.startswith(SCHEMA_PREFIX):
        what = "not an rngassay report: no 'schema' field" if schema is None else f"not an rngassay report: schema {schema!r}"
        raise InputError(what, where, hint_json)
    if not isinstance(d.get("checks"), list):
        raise InputError("damaged report: 'checks' is missing or not a list", where, "write the report again")
    if not isinstance(d.get("source", {}), dict):
        raise InputError("damaged report: 'source' is not an object", where, "write the report again")
    for i, c in enumerate(d["checks"]):
        bad = None
        if not isinstance(c, dict):
            bad = "is not an object"
        elif not isinstance(c.get("id"), str):
            bad = "has no text 'id'"
        elif c.get("grade") not in GRADES:
            bad = f"has an unknown grade {c.get('grade')!r}"
        elif not (isinstance(c.get("p_value"), (int, float)) and not isinstance(c.get("p_value"), bool)
                  and 0.0 <= c["p_value"] <= 1.0):
            bad = "has no p_value between 0 and 1"
        if bad:
            raise InputError(f"damaged report: check {i + 1} {bad}", where, "write the report again")
    return d
