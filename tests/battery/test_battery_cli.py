"""`rngassay test`, `diff` and `demo` from the command line: reports, exit codes, bad input."""

import json
import xml.etree.ElementTree as ET

import numpy as np
import pytest


@pytest.fixture(scope="module")
def sound_file(tmp_path_factory):
    p = tmp_path_factory.mktemp("d") / "sound.bin"
    p.write_bytes(np.random.Generator(np.random.PCG64(99)).bytes(2 << 20))
    return p


@pytest.fixture(scope="module")
def flawed_file(tmp_path_factory):
    p = tmp_path_factory.mktemp("d") / "flawed.bin"
    b = np.frombuffer(np.random.Generator(np.random.PCG64(98)).bytes(2 << 20), np.uint8) & 0xFE
    p.write_bytes(b.astype(np.uint8).tobytes())
    return p


# slow: the whole default battery twice on 2 MiB (~30 s); the fast run keeps `demo` (reports written, a fail)
# and the one-check runs of `test` and `diff` below
@pytest.mark.slow
def test_reports_written_and_exit_codes(run_cli, tmp_path, sound_file, flawed_file):
    j, h, x = tmp_path / "r.json", tmp_path / "r.html", tmp_path / "r.xml"
    r = run_cli("test", sound_file, "--workers", "1", "--json", j, "--html", h, "--junit", x, "-q")
    assert r.code == 0, r.err
    d = json.loads(j.read_text())
    assert d["verdict"] in ("pass", "notable") and d["source"]["bytes_read"] == 2 << 20
    assert h.read_text().lstrip().lower().startswith("<!doctype html")
    suite = ET.parse(x).getroot()
    assert len(suite.findall(".//testcase")) == len(d["checks"])
    bad = tmp_path / "bad.json"
    r = run_cli("test", flawed_file, "--workers", "1", "--json", bad, "-q")
    assert r.code == 1
    assert "fail" in r.out
    # diff: the flawed run is worse than the sound one, not the other way round
    assert run_cli("diff", j, bad).code == 1
    assert run_cli("diff", bad, j).code == 0


def test_plan_only_prints_the_plan_and_runs_no_check(run_cli, sound_file):
    r = run_cli("test", sound_file, "--plan-only")
    assert r.code == 0 and "plan:" in r.out and "replicates" in r.out
    assert "verdict" not in r.out and "sha-256" not in r.out  # no check ran, no report


def test_report_into_missing_folder_is_refused_before_work(run_cli, tmp_path, sound_file):
    r = run_cli("test", sound_file, "--json", tmp_path / "nope" / "r.json")
    assert r.code == 2 and "folder does not exist" in r.err and len(r.err.strip().splitlines()) == 1


@pytest.mark.parametrize("content", [b"not json at all", b'{"schema": "something-else/1", "checks": []}', b"\xff\xfe"])
def test_diff_rejects_bad_json(run_cli, tmp_path, content, sound_file):
    good = tmp_path / "good.json"
    assert run_cli("test", sound_file, "--workers", "1", "--checks", "byte frequency", "--json", good, "-q").code == 0
    bad = tmp_path / "bad.json"
    bad.write_bytes(content)
    r = run_cli("diff", good, bad)
    assert r.code == 2 and "bad.json" in r.err and len(r.err.strip().splitlines()) == 1
    r = run_cli("diff", good, tmp_path / "missing.json")
    assert r.code == 2 and len(r.err.strip().splitlines()) == 1


def test_bad_alpha_and_workers(run_cli, sound_file):
    for args in (["--alpha", "0"], ["--alpha", "1.5"], ["--workers", "0"]):
        r = run_cli("test", sound_file, *args)
        assert r.code == 2 and len(r.err.strip().splitlines()) == 1


def test_demo_writes_reports(run_cli, tmp_path):
    r = run_cli("demo", "--budget", "512KiB", "--out", tmp_path / "rep", "--workers", "1", "-q")
    assert r.code == 0, r.err
    names = sorted(p.name for p in (tmp_path / "rep").iterdir())
    assert names == sorted(f"demo-{s}.{e}" for s in ("supplier", "homegrown") for e in ("json", "html", "xml"))
    home = json.loads((tmp_path / "rep" / "demo-homegrown.json").read_text())
    assert home["verdict"] == "fail"  # lcg32's low bits are caught (p < 1e-10 at this size)
    before = {p.name: p.read_bytes() for p in (tmp_path / "rep").iterdir()}
    again = run_cli("demo", "--budget", "512KiB", "--out", tmp_path / "rep", "--workers", "1", "-q")
    assert again.code == 2 and "--replace" in again.err and len(again.err.strip().splitlines()) == 1
    assert {p.name: p.read_bytes() for p in (tmp_path / "rep").iterdir()} == before  # nothing written over


def test_demo_default_folder_is_new_each_time(tmp_path, monkeypatch):
    from rngassay.cli.demo import _demo_folder

    monkeypatch.chdir(tmp_path)
    (tmp_path / "rngassay-demo").mkdir()  # an earlier demo's folder (or anything of that name) stays as it is
    (tmp_path / "rngassay-demo-2").write_text("not a folder")
    assert _demo_folder(None, False) == "rngassay-demo-3" and (tmp_path / "rngassay-demo-3").is_dir()
    assert _demo_folder(None, False) == "rngassay-demo-4"
    (tmp_path / "mine").mkdir()
    (tmp_path / "mine" / "demo-supplier.html").write_text("kept")
    assert _demo_folder("mine", True) == "mine"  # --replace: the user asked for it


@pytest.mark.parametrize("args", [["--checks", "monobit frequency,nosuch"], ["--skip", "nosuch"], ["--checks", ","]])
def test_unknown_selectors_are_refused(run_cli, sound_file, args):
    r = run_cli("test", sound_file, "--plan-only", *args)
    assert r.code == 2 and len(r.err.strip().splitlines()) == 1


def test_progress_only_on_a_terminal_and_after_a_delay(capsys, monkeypatch):
    import sys

    from rngassay.battery.run import Stage
    from rngassay.cli import Progress

    p = Progress(quiet=False)
    assert not p.on  # pytest's stderr is not a terminal: nothing is ever drawn
    p(Stage("checks: segment 1/4 read", 1 << 20, 4 << 20))
    assert capsys.readouterr().err == ""
    monkeypatch.setattr(sys.stderr, "isatty", lambda: True, raising=False)
    assert not Progress(quiet=True).on
    slow = Progress(quiet=False, delay=3600)
    slow(Stage("checks: segment 1/4 read", 1 << 20, 4 << 20))  # within the delay: silent
    slow.done()
    assert capsys.readouterr().err == ""
    fast = Progress(quiet=False, delay=0)
    fast(Stage("checks: segment 2/4 read, 70 checks", 2 << 20, 4 << 20, "bytes", "checks"))
    err = capsys.readouterr().err
    # the stage, bytes read of planned, elapsed, rate and time left
    assert "checks: segment 2/4 read" in err and "2.10MB/4.19MB read" in err and "elapsed" in err and "left" in err
    assert "B/s" in err
    fast("seeds 64/1000 (block 2/32)")  # a plain message with a count: the bar counts seeds
    fast.done()
    assert "64/1000" in capsys.readouterr().err


def test_progress_reports_bytes_read_of_planned():
    from rngassay import api

    seen = []
    api.assay(gen="pcg64", seed=3, budget="512KiB", workers=1, checks=["byte frequency"], progress=seen.append)
    stages = [s for s in seen if hasattr(s, "done")]
    assert [s.done for s in stages] == [k * (128 << 10) for k in range(1, 5)]
    assert {s.total for s in stages} == {512 << 10} and {s.unit for s in stages} == {"bytes"}
    assert stages[0].startswith("checks: segment 1/4 read")


def test_terminal_report_carries_the_cautions(run_cli, sound_file):
    r = run_cli("test", sound_file, "--workers", "1", "--checks", "byte frequency", "-q")
    assert "cannot prove unpredictability" in r.out
    assert "accredited test laboratories" in r.out


def test_reader_closing_the_pipe_early_is_quiet():
    # `rngassay catalog | head -1`: the reader leaves early; no traceback, and the command's own exit code
    import subprocess
    import sys

    p = subprocess.Popen([sys.executable, "-m", "rngassay", "catalog"], stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    p.stdout.readline()
    p.stdout.close()
    err = p.stderr.read().decode()
    assert p.wait(timeout=60) == 0
    assert "Traceback" not in err and "Exception ignored" not in err
