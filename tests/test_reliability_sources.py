"""Dying, ending and hanging sources never give a green run; what they gave is counted and hashed;
piped input is read in segments like a file (issue 11, items 2, 5, 6, 7)."""

from __future__ import annotations

import os
import hashlib
import io
import json
import re
import sys
import textwrap
import time
import xml.etree.ElementTree as ET

import numpy as np
import pytest

from rngassay import api
from rngassay.intake import budget as intake_budget, memory as intake_memory
from rngassay.battery.battery import stopped_report
from rngassay.battery.plan import make_plan
from rngassay.errors import InputError
from rngassay.intake import sources
from rngassay.intake.formats import parse_format
from rngassay.intake.sources import CommandSource, StdinSource
from rngassay.intake.stream import Stream
from rngassay.report.junit import render_junit

GEN = textwrap.dedent(
    """
    import numpy as np
    calls = 0
    def raises(seed=None):
        bg = np.random.PCG64(1)
        def draw(n):
            global calls
            calls += 1
            if calls > 2:  # the third segment of four (checks share segments, one draw each)
                raise RuntimeError("hardware fault")
            return bg.random_raw(-(-n // 8)).astype("<u8").tobytes()
        return draw
    def exits(seed=None):
        def draw(n):
            raise SystemExit(0)
        return draw
    def genexit(seed=None):
        def draw(n):
            raise GeneratorExit()
        return draw
    """
)


def _one_line(r) -> str:
    lines = [l for l in r.err.splitlines() if l.strip()]
    assert len(lines) == 1 and "Traceback" not in r.err, r.err
    return lines[0]


@pytest.fixture
def gen_py(tmp_path):
    p = tmp_path / "g.py"
    p.write_text(GEN)
    return p


def test_draw_raising_on_the_third_call_leaves_an_incomplete_report(run_cli, gen_py, tmp_path):
    j, x = tmp_path / "r.json", tmp_path / "r.xml"
    r = run_cli("test", "--python", f"{gen_py}:raises", "--budget", "4MiB", "--workers", "1", "-q",
                "--json", j, "--junit", x)
    assert r.code == 2
    line = _one_line(r)
    assert "RuntimeError: hardware fault" in line and "marked incomplete" in line
    d = json.loads(j.read_text())
    assert d["incomplete"] is True and d["checks"]
    note = [n for n in d["notes"] if n.startswith("incomplete run:")][0]
    m = re.search(r"completed (\d+) of (\d+) replicates", note)
    assert m and 0 < int(m.group(1)) < int(m.group(2))
    assert int(m.group(1)) == sum(c["replicates"] for c in d["checks"])
    suite = ET.parse(x).getroot()
    assert int(suite.get("errors")) >= 1  # an incomplete run is never green in CI


@pytest.mark.parametrize("spec, word", [("exits", "SystemExit"), ("genexit", "GeneratorExit")])
def test_draw_exiting_is_exit_2_with_one_line(run_cli, gen_py, tmp_path, spec, word):
    j = tmp_path / "e.json"
    r = run_cli("test", "--python", f"{gen_py}:{spec}", "--budget", "1MiB", "--workers", "1", "-q", "--json", j)
    assert r.code == 2
    line = _one_line(r)
    assert word in line and "no check finished" in line
    assert not j.exists()  # nothing finished: no report claims anything


def _dying_command(nbytes: int, status: int, seed: int = 5) -> str:
    return (f"{sys.executable} -c \"import sys, numpy; sys.stdout.buffer.write(numpy.random.default_rng({seed})"
            f".bytes({nbytes})); sys.stdout.flush(); sys.exit({status})\"")


def test_dying_command_report_counts_and_hashes_every_byte(run_cli, tmp_path):
    # a command that exits 3 after 4 MiB of an 8 MiB plan (2 MiB per check and replicate): exit 2, a
    # report marked incomplete whose byte count and SHA-256 cover all the bytes the command wrote (the
    # last, partial read included)
    j = tmp_path / "c.json"
    n = 4 << 20
    r = run_cli("test", "--command", _dying_command(n, 3), "--budget", "8MiB", "--workers", "1", "-q", "--json", j)
    assert r.code == 2
    line = _one_line(r)
    assert f"status 3 after {n} bytes" in line
    d = json.loads(j.read_text())
    assert d["incomplete"] is True and d["verdict"] in ("pass", "notable", "fail")
    want = np.random.default_rng(5).bytes(n)
    assert d["source"]["bytes_read"] == n
    assert d["source"]["sha256"] == hashlib.sha256(want).hexdigest()


def test_stream_hashes_the_partial_read_of_a_dying_command():
    n = 300_000
    s = Stream(CommandSource(_dying_command(n, 4, seed=9)), "u1")
    with pytest.raises(InputError, match=f"after {n} bytes"):
        s.read_values(1 << 20)  # one read, cut short by the command's death
    assert s.bytes_read == n
    assert s.info().sha256 == hashlib.sha256(np.random.default_rng(9).bytes(n)).hexdigest()
    s.close()


def test_command_that_closes_stdout_and_keeps_running_is_ended(monkeypatch):
    monkeypatch.setattr(sources, "COMMAND_EXIT_TIMEOUT_S", 0.5)
    cmd = f"{sys.executable} -c \"import os, sys, time; sys.stdout.buffer.write(b'x' * 1000); sys.stdout.flush(); os.close(1); time.sleep(60)\""
    src = CommandSource(cmd)
    t = time.monotonic()
    with pytest.raises(InputError, match="closed its standard output after 1000 bytes"):
        Stream(src, "u1").read_values(5000)
    assert time.monotonic() - t < 15
    assert src._p.poll() is not None  # the command was ended


def test_nothing_finished_is_no_verdict_never_pass():
    f = parse_format("u1")
    plan = make_plan(f, 1 << 20)
    s = Stream(StdinSource(io.BytesIO(b"")), f)
    rep = stopped_report(s, plan, "interrupted by SIGINT while reading the source")
    assert rep.verdict == "no verdict" and rep.incomplete and rep.exit_code() == 2
    assert "completed 0 of" in rep.incomplete_reason()
    assert "no verdict" in api.render_text(rep)
    root = ET.fromstring(render_junit(rep))
    assert root.get("tests") != "0" and int(root.get("errors")) == 1
    assert root.find(".//testcase/error") is not None


def test_pipe_with_a_budget_is_read_in_segments_and_matches_the_file(monkeypatch, tmp_path):
    # with the read-ahead limit lowered below the budget, a pipe is planned for its budget and never
    # read into memory whole; its report equals the file's for the same bytes
    data = np.random.default_rng(11).bytes(1 << 20)
    p = tmp_path / "d.bin"
    p.write_bytes(data)
    monkeypatch.setattr(intake_memory, "BUFFER_LIMIT", 64 << 10)

    def boom(*a, **k):
        raise AssertionError("piped input read whole")

    from_file = api.assay(str(p), budget="1MiB", workers=1)
    monkeypatch.setattr(intake_budget, "buffered", boom)
    from_pipe = api.assay(StdinSource(io.BufferedReader(io.BytesIO(data))),
                          budget="1MiB", workers=1)
    assert from_pipe.source["sha256"] == from_file.source["sha256"]
    assert from_pipe.source["bytes_read"] == from_file.source["bytes_read"]
    assert [(c.id, c.p_value) for c in from_pipe.checks] == [(c.id, c.p_value) for c in from_file.checks]


def test_short_pipe_with_a_budget_is_exit_2_with_a_partial_report(monkeypatch, run_cli, tmp_path):
    monkeypatch.setattr(intake_memory, "BUFFER_LIMIT", 64 << 10)
    j = tmp_path / "s.json"
    r = run_cli("test", "-", "--budget", "1MiB", "--workers", "1", "-q", "--json", j,
                stdin=np.random.default_rng(12).bytes(700_000))
    assert r.code == 2
    line = _one_line(r)
    assert "stream is shorter than the plan needs" in line
    if j.exists():  # segments that finished are reported, marked incomplete
        assert json.loads(j.read_text())["incomplete"] is True


def test_ending_a_command_ends_what_it_started(tmp_path):
    # a --command run through a shell that leaves a background child behind: when the run is done with the
    # source, the whole process group is ended (wave 2b: no grandchildren left running)
    import os
    import time

    from rngassay import api

    marker = "61.4321"  # an unusual sleep length to find the grandchild by
    cmd = f"sh -c 'sleep {marker} & exec head -c 1048576 /dev/urandom; wait'"
    api.assay(command=cmd, shell=True, budget="64KiB", checks=["byte frequency"])
    time.sleep(0.3)
    left = []
    for d in os.listdir("/proc"):  # the processes whose command line holds the marker (Linux)
        try:
            with open(f"/proc/{d}/cmdline", "rb") as f:
                if f"sleep\0{marker}".encode() in f.read():
                    left.append(d)
        except (OSError, ValueError):
            continue
    assert left == []


def test_a_file_that_shrinks_mid_run_is_named_as_such(tmp_path, monkeypatch):
    # a file larger than the read-ahead limit is read segment by segment; rewritten (truncated) after it was
    # opened, the error says the file shrank -- not that the budget was too large
    import rngassay.api as api_mod
    from rngassay.errors import InputError

    path = tmp_path / "big.bin"
    size = intake_memory.BUFFER_LIMIT + (8 << 20)
    with open(path, "wb") as f:
        f.truncate(size)  # sparse zeros: only the byte count matters here
    real = api_mod.make_plan

    def plan_then_shrink(*a, **k):
        plan = real(*a, **k)
        os.truncate(path, size // 2)
        return plan

    monkeypatch.setattr(api_mod, "make_plan", plan_then_shrink)
    with pytest.raises(InputError, match="shrank while it was read"):
        api_mod.assay(str(path), checks=["byte frequency"], budget=size)
