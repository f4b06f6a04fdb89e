"""Issue 11, item 1: no report replaces an input of the run, the run's own output, a pipe or a device;
each refused before any work with one line and exit 2. Report folders are checked before the run; a failed
write still prints the verdict and the table; a 0600 report keeps its mode; file names never split the
error line."""

from __future__ import annotations

import os
import stat
import subprocess
import sys

import click
import numpy as np
import pytest

from rngassay.cli import finish
from rngassay.errors import InputError
from rngassay.report.files import check_report_paths, safe_name, write_atomic
from rngassay.model import Report

GEN_MODULE = """import numpy as np
def make(seed=None):
    return np.random.Generator(np.random.PCG64(1))
"""


@pytest.fixture
def data(tmp_path):
    p = tmp_path / "v.bin"
    p.write_bytes(np.random.default_rng(3).bytes(1 << 12))
    return p


def _refused(r, *words):
    assert r.code == 2, (r.code, r.err)
    assert r.err.count("\n") == 1 and r.err.startswith("rngassay: error:"), r.err
    for w in words:
        assert w in r.err, r.err


def _rngassay(*args, stdin=None, stdout=None, cwd=None):
    return subprocess.run([sys.executable, "-m", "rngassay", *map(str, args)], stdin=stdin, stdout=stdout,
                          stderr=subprocess.PIPE, cwd=cwd, timeout=120)


def test_stdin_file_is_an_input(tmp_path, data):
    # `rngassay test - --json v.bin < v.bin`: standard input's file is compared by device and inode
    before = data.read_bytes()
    with open(data, "rb") as fh:
        r = _rngassay("test", "-", "--json", data, stdin=fh, stdout=subprocess.PIPE)
    assert r.returncode == 2, r.stderr
    assert b"overwrite an input" in r.stderr and r.stderr.count(b"\n") == 1
    assert data.read_bytes() == before


def test_appending_to_own_stdout_is_refused(tmp_path, data):
    # `--json /dev/stdout >> build.log` would replace the log by the report (the earlier content lost)
    log = tmp_path / "build.log"
    log.write_text("earlier content\n")
    with open(log, "ab") as fh:
        r = _rngassay("test", data, "--json", "/dev/stdout", stdout=fh)
    assert r.returncode == 2, r.stderr
    assert b"standard output" in r.stderr and r.stderr.count(b"\n") == 1
    assert log.read_text() == "earlier content\n"


def test_pipe_target_refused_before_work(data):
    # `--json /dev/stdout | cat`: a pipe is no report file; refused at once
    r = _rngassay("test", data, "--json", "/dev/stdout", stdout=subprocess.PIPE)
    assert r.returncode == 2 and r.stdout == b"", r.stderr


def test_python_module_is_an_input(run_cli, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "g.py").write_text(GEN_MODULE)
    r = run_cli("test", "--python", "g.py:make", "--budget", "1MiB", "--json", "g.py")
    _refused(r, "overwrite an input")
    assert (tmp_path / "g.py").read_text() == GEN_MODULE


def test_seeds_file_and_module_are_inputs(run_cli, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "s.txt").write_text("1\n2\n")
    (tmp_path / "g.py").write_text(GEN_MODULE)
    _refused(run_cli("seeds", "--gen", "pcg64", "--seeds", "@s.txt", "--checks", "overlaps", "--json", "s.txt"),
             "overwrite an input")
    _refused(run_cli("seeds", "--python", "g.py:make", "--seeds", "0..7", "--checks", "overlaps", "--html", "g.py"),
             "overwrite an input")
    assert (tmp_path / "s.txt").read_text() == "1\n2\n"
    assert (tmp_path / "g.py").read_text() == GEN_MODULE


def test_command_file_argument_is_an_input(run_cli, tmp_path, monkeypatch, data):
    monkeypatch.chdir(tmp_path)
    before = data.read_bytes()
    _refused(run_cli("test", "--command", "cat v.bin", "--junit", "v.bin"), "overwrite an input")
    assert data.read_bytes() == before


def test_odds_file_is_an_input(run_cli, tmp_path):
    odds = tmp_path / "o.csv"
    odds.write_text("outcome,probability\na,0.5\nb,0.5\n")
    vals = tmp_path / "x.txt"
    vals.write_text("a b a b\n")
    _refused(run_cli("fit", vals, "--odds", odds, "--json", odds), "overwrite an input")
    assert odds.read_text().startswith("outcome")


def test_empty_and_non_utf8_report_names(run_cli, data, tmp_path):
    _refused(run_cli("test", data, "--json", ""), "empty json report path")
    bad = os.fsdecode(os.path.join(os.fsencode(tmp_path), b"a\xff.json"))
    _refused(run_cli("test", data, "--html", bad), "not valid UTF-8", "a\\xff.json")


def test_newline_in_file_name_stays_on_one_line(run_cli, data, tmp_path):
    r = run_cli("test", data, "--json", str(tmp_path / "no\nsuch" / "r.json"))
    _refused(r, "folder does not exist", "no\\nsuch")
    assert safe_name("a\x1b[31mb\tc") == "a\\x1b[31mb\\tc"


def test_unwritable_folder_found_before_the_run(run_cli, data, tmp_path, monkeypatch):
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o500)
    if os.geteuid() == 0:  # root may write anywhere (CI runs as root): the folder refuses new files (as a
        import tempfile  # read-only file system would), which the probe write finds

        real = tempfile.mkstemp

        def refuse(*a, dir=None, **k):
            if dir is not None and os.fspath(dir) == str(ro):
                raise PermissionError(13, "Permission denied")
            return real(*a, dir=dir, **k)

        monkeypatch.setattr(tempfile, "mkstemp", refuse)
    try:
        _refused(run_cli("test", data, "--json", ro / "r.json"), "not writable")
    finally:
        ro.chmod(0o700)


def test_folder_check_unit(tmp_path):
    # the folder test also runs as root: a missing folder and a directory target are refused
    with pytest.raises(InputError, match="folder does not exist"):
        check_report_paths([("json report", str(tmp_path / "nope" / "r.json"))], [])
    with pytest.raises(InputError, match="directory"):
        check_report_paths([("json report", str(tmp_path))], [])
    link = tmp_path / "link.bin"
    target = tmp_path / "in.bin"
    target.write_bytes(b"x")
    link.symlink_to(target)
    with pytest.raises(InputError, match="overwrite an input"):
        check_report_paths([("json report", str(link))], [str(target)])


def test_rewriting_a_private_report_keeps_its_mode(tmp_path):
    p = tmp_path / "r.json"
    p.write_text("{}")
    p.chmod(0o600)
    write_atomic(p, "{\"new\": 1}")
    assert stat.S_IMODE(p.stat().st_mode) == 0o600 and p.read_text() == "{\"new\": 1}"


def test_failed_write_still_prints_verdict_and_table(tmp_path, capsys):
    rep = Report(command="test", source={"kind": "file", "name": "v.bin"}, budget_bytes=64, alpha=1e-3,
                 verdict="pass", combined_p=0.5, checks=[])
    target = tmp_path / "gone" / "r.json"  # folder removed between the check and the write
    with pytest.raises(InputError, match="cannot write report"):
        finish(rep, [("json report", str(target))], strict=False)
    out = capsys.readouterr().out
    assert "pass" in out
    # and a successful write prints the same table, then exits
    with pytest.raises(click.exceptions.Exit):
        finish(rep, [("json report", str(tmp_path / "ok.json"))], strict=False)
    assert "pass" in capsys.readouterr().out and (tmp_path / "ok.json").exists()
