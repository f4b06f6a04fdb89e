"""Writing report files atomically and reading JSON reports back.

A report file is either the old one or the complete new one, never a half-written mix: the data goes to a
temporary file in the same directory, is flushed and fsynced, and then renamed over the target with
``os.replace`` (atomic on POSIX and Windows when both names are on the same file system).
"""

from __future__ import annotations

import json
import os
import stat
import tempfile
from pathlib import Path
from typing import Any

from ..errors import InputError
from ..model import GRADES, SCHEMA

SCHEMA_PREFIX = "rngassay-report/"


def safe_name(path: str) -> str:
    """A file name as it may appear in a one-line message: control characters (a newline, a tab, ESC)
    and undecodable bytes are shown escaped, never raw."""
    return "".join(ch if ch.isprintable() else ch.encode("unicode_escape", "backslashreplace").decode("ascii")
                   if not 0xDC80 <= ord(ch) <= 0xDCFF else f"\\x{ord(ch) - 0xDC00:02x}" for ch in str(path))


def _ident(st: os.stat_result) -> tuple[int, int]:
    return (st.st_dev, st.st_ino)


def _input_idents(inputs: list[str]) -> set[tuple[int, int]]:
    """(device, inode) of every existing input path, and of the file behind standard input when standard
    input is a regular file (``rngassay test - < data.bin``)."""
    ids: set[tuple[int, int]] = set()
    for p in inputs:
        if not p or p == "-":
            continue
        try:
            ids.add(_ident(os.stat(p)))
        except (OSError, ValueError):
            pass
    try:
        st = os.fstat(0)
        if stat.S_ISREG(st.st_mode):
            ids.add(_ident(st))
    except OSError:
        pass
    return ids


def _own_streams() -> dict[tuple[int, int], str]:
    """(device, inode) of this process's standard output and error: a report must never replace them (a file
    appended to by the shell would lose its earlier content; a pipe or terminal is no report file)."""
    out: dict[tuple[int, int], str] = {}
    for fd, name in ((1, "standard output"), (2, "standard error")):
        try:
            out[_ident(os.fstat(fd))] = name
        except OSError:
            pass
    return out


def check_report_paths(outputs: list[tuple[str, str]], inputs: list[str]) -> None:
    """Refuse report paths that would destroy something or cannot be written, before any work is done.

    Refused, each with one line (exit 2): an empty path; a name that is not valid UTF-8; a path naming an
    input of the run (compared by device and inode, so links and ``/dev/stdin`` count; standard input's own
    file counts too); this process's standard output or error (``--json /dev/stdout >> log`` would wipe
    the log); a device, pipe, socket or folder; the same file twice; a folder that does not exist or is not
    writable; an existing report file that is not writable.
    """
    seen: set[tuple[int, int] | str] = set()
    ins = _input_idents(inputs)
    own = _own_streams()
    for what, path in outputs:
        name = safe_name(path)
        if path is None or not str(path).strip():
            raise InputError(f"empty {what} path", "", "give a file name, e.g. report.json")
        try:
            str(path).encode("utf-8")
        except UnicodeEncodeError:
            raise InputError(f"{what} path is not valid UTF-8", name, "give a file name in UTF-8") from None
        full = os.path.realpath(path)
        try:
            st = os.stat(path)
        except FileNotFoundError:
            st = None
        except OSError as e:
            raise InputError(f"cannot use {what} path: {e.strerror or e}", name, "choose another report path") from None
        key: tuple[int, int] | str = _ident(st) if st is not None else full
        if key in seen:
            raise InputError("two reports would be written to the same file", name, "give each report its own path")
        seen.add(key)
        if st is not None:
            if _ident(st) in ins:
                raise InputError(f"the {what} would overwrite an input file of this run", name, "choose another report path")
            if _ident(st) in own:
                raise InputError(f"the {what} path is this run's {own[_ident(st)]}", name,
                                 "write reports to files of their own; the table goes to standard output")
            if stat.S_ISDIR(st.st_mode):
                raise InputError(f"{what} path is a directory", name, "give a file name")
            if not stat.S_ISREG(st.st_mode):
                raise InputError(f"{what} path is a device, pipe or socket, not a regular file", name, "give a file name")
            if not os.access(path, os.W_OK):
                raise InputError(f"cannot write {what}: the file is not writable", name, "check its permissions")
        parent = os.path.dirname(full) or "."
        if not os.path.isdir(parent):
            raise InputError(f"cannot write {what}: folder does not exist", name, "create the folder or choose another path")
        if not os.access(parent, os.W_OK | os.X_OK) or not _can_create_in(parent):
            raise InputError(f"cannot write {what}: the folder is not writable", name,
                             "check its permissions or choose another path")


def _can_create_in(folder: str) -> bool:
    """Whether a file can really be made in ``folder`` (a read-only file system stops root too, which
    ``os.access`` does not see): a probe file is made and removed at once."""
    import tempfile

    try:
        fd, probe = tempfile.mkstemp(dir=folder, prefix=".rngassay-probe-")
    except OSError:
        return False
    os.close(fd)
    try:
        os.unlink(probe)
    except OSError:  # pragma: no cover
        pass
    return True


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
        # mkstemp creates 0600: a report that already exists keeps its mode (a 0600 report stays private);
        # a new one gets the permissions a normally created file would have.
        try:
            mode = stat.S_IMODE(os.stat(target).st_mode)
        except OSError:
            umask = os.umask(0)
            os.umask(umask)
            mode = 0o666 & ~umask
        os.chmod(tmp_name, mode)
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


MAX_REPORT_BYTES = 64 << 20  # a JSON report larger than this is refused (reports are a few hundred KiB)
KNOWN_SCHEMAS = (SCHEMA,)  # report schema versions this version of rngassay can read


def _check_number(c: dict[str, Any], key: str, required: bool) -> str | None:
    v = c.get(key)
    if v is None and not required:
        return None
    if not (isinstance(v, (int, float)) and not isinstance(v, bool) and 0.0 <= v <= 1.0):
        return f"has no {key} between 0 and 1" if required else f"has {key} {str(v)[:30]!r} outside [0, 1]"
    return None


def read_report_json(path: str | os.PathLike[str]) -> dict[str, Any]:
    """Read a JSON report written by ``rngassay`` and return it as a dict.

    Raises :class:`InputError` (exit 2 at the command line) when the file cannot be read, is larger than
    ``MAX_REPORT_BYTES`` (64 MiB; ``/dev/zero`` is refused after that many bytes, never read to the end),
    is not UTF-8 JSON (nesting too deep for the parser, a number of more than 4300 digits and a lone
    surrogate count as damage), is not a JSON object, has a schema other than those in ``KNOWN_SCHEMAS``,
    has no list of checks, or a check without a text id, a known grade and a p_value in [0, 1], with an
    ``adjusted_p`` outside [0, 1], or with the id of an earlier check.
    """
    where = safe_name(str(path))
    hint_json = "give a report written with --json (schema " + SCHEMA + ")"
    try:
        with open(path, "rb") as fh:
            raw = fh.read(MAX_REPORT_BYTES + 1)
    except IsADirectoryError:
        raise InputError("cannot read report: the path is a directory", where, hint_json) from None
    except FileNotFoundError:
        raise InputError("cannot read report: no such file", where, "check the path") from None
    except OSError as e:
        raise InputError(f"cannot read report: {e.strerror or e}", where, "check the path and its permissions") from e
    if len(raw) > MAX_REPORT_BYTES:
        raise InputError(f"not a report: larger than {MAX_REPORT_BYTES >> 20} MiB", where, hint_json)
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise InputError("cannot read report: not UTF-8 text", where, hint_json) from None
    try:
        d = json.loads(text)
    except json.JSONDecodeError as e:
        raise InputError(f"not a JSON report: {e.msg} at line {e.lineno} column {e.colno}", where, hint_json) from None
    except RecursionError:
        raise InputError("not a JSON report: nested too deeply", where, hint_json) from None
    except (ValueError, MemoryError) as e:  # e.g. an integer of more than 4300 digits
        what = "a number has more digits than Python reads (4300)" if "digits" in str(e) else type(e).__name__
        raise InputError(f"not a JSON report: {what}", where, hint_json) from None
    if not isinstance(d, dict):
        raise InputError("not a JSON report: the top level is not an object", where, hint_json)
    schema = d.get("schema")
    if not isinstance(schema, str) or not schema.startswith(SCHEMA_PREFIX):
        what = ("not an rngassay report: no 'schema' field" if schema is None
                else f"not an rngassay report: schema {safe_name(str(schema))[:60]!r}")
        raise InputError(what, where, hint_json)
    if schema not in KNOWN_SCHEMAS:
        raise InputError(f"unknown report schema version {safe_name(schema)[:60]!r}", where,
                         f"this rngassay reads {', '.join(KNOWN_SCHEMAS)}; use the rngassay version that wrote it")
    if not isinstance(d.get("checks"), list):
        raise InputError("damaged report: 'checks' is missing or not a list", where, "write the report again")
    if not isinstance(d.get("source", {}), dict):
        raise InputError("damaged report: 'source' is not an object", where, "write the report again")
    seen: dict[str, int] = {}
    for i, c in enumerate(d["checks"]):
        bad = None
        if not isinstance(c, dict):
            bad = "is not an object"
        elif not isinstance(c.get("id"), str):
            bad = "has no text 'id'"
        elif not _encodes(c["id"]):
            bad = "has an id that is not valid Unicode text (a lone surrogate)"
        elif c["id"] in seen:
            bad = f"repeats the id of check {seen[c['id']] + 1} ({safe_name(c['id'])[:60]!r})"
        elif c.get("grade") not in GRADES:
            bad = f"has an unknown grade {safe_name(str(c.get('grade')))[:30]!r}"
        else:
            bad = _check_number(c, "p_value", True) or _check_number(c, "adjusted_p", False)
        if bad:
            raise InputError(f"damaged report: check {i + 1} {bad}", where, "write the report again")
        seen[c["id"]] = i
    try:
        json.dumps(d, ensure_ascii=False).encode("utf-8")
    except UnicodeEncodeError:
        raise InputError("damaged report: a text field holds a lone surrogate (not valid Unicode)", where,
                         "write the report again") from None
    except (RecursionError, ValueError):
        raise InputError("not a JSON report: nested too deeply", where, hint_json) from None
    return d


def _encodes(text: str) -> bool:
    try:
        text.encode("utf-8")
    except UnicodeEncodeError:
        return False
    return True
