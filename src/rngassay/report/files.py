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
from .model import SCHEMA

SCHEMA_PREFIX = "rngassay-report/"


def write_atomic(path: str | os.PathLike[str], data: str | bytes) -> None:
    """Write ``data`` (text is UTF-8 encoded) to ``path`` atomically.

    Raises :class:`InputError` when the parent directory is missing, when ``path`` is an existing directory,
    or when the file system refuses the write; no partial file and no temporary file is left behind.
    """
    target = Path(path)
    where = str(target)
    if isinstance(data, str):
        data = data.encode("utf-8")
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
    return d
