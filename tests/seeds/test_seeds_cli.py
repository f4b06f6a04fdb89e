"""`rngassay seeds` at the command line, and local execution: reports, exit codes, bad input, determinism."""

import json
import textwrap
import xml.etree.ElementTree as ET

import numpy as np
import pytest

from rngassay.cli import cli
from rngassay.seeds import SeedFactory, SweepOptions, run_sweep
from rngassay.cli.seeds import register_cli

register_cli(cli)  # the lead wires this into rngassay.cli; registering twice is a no-op

SMALL = ["--bytes-per-seed", "4KiB", "--merge-budget", "64KiB", "--avalanche-seeds", "8", "-q"]


def sound(seed):
    return np.random.default_rng(int(seed))


def _comparable(report):
    d = json.loads(report.to_json())
    d.pop("elapsed_s")
    for c in d["checks"]:
        c.pop("seconds", None)  # timing only
    for k in ("executor", "workers_used", "block_seeds"):
        d["settings"].pop(k)
    return d


def test_reports_exit_codes_and_diff(run_cli, tmp_path):
    j, h, x = tmp_path / "s.json", tmp_path / "s.html", tmp_path / "s.xml"
    r = run_cli("seeds", "--gen", "pcg64", "--seeds", "0..47", *SMALL, "--workers", "1",
                "--json", j, "--html", h, "--junit", x)
    assert r.code == 0, r.err + r.out
    d = json.loads(j.read_text())
    assert d["schema"] == "rngassay-report/1" and d["command"] == "seeds" and d["verdict"] in ("pass", "notable")
    assert d["source"]["kind"] == "seeds" and d["source"]["seeds"] == 48 and d["budget_bytes"] == 48 * 4096
    ids = [c["id"] for c in d["checks"]]
    for want in ("interleave k=2", "interleave k=4", "xor pairs", "cross-correlation lags=8",
                 "duplicates and overlaps", "early bytes positions=32"):
        assert want in ids
    assert any(i.startswith("per-seed ") for i in ids) and any(i.startswith("avalanche") for i in ids)
    assert all(c["family"] == "seeds" and c["adjusted_p"] is not None for c in d["checks"])
    assert h.read_text().lstrip().lower().startswith("<!doctype html")
    assert len(ET.parse(x).getroot().findall(".//testcase")) == len(d["checks"])
    # randu: a flawed generator (and flawed seeding): exit 1, and `diff` sees NEW worse
    bad = tmp_path / "bad.json"
    r = run_cli("seeds", "--gen", "randu", "--seeds", "0..47", *SMALL, "--workers", "1", "--json", bad)
    assert r.code == 1 and "fail" in r.out
    assert run_cli("diff", j, bad).code == 1 and run_cli("diff", bad, j).code == 0


def test_command_factory_with_seed_placeholder(run_cli):
    # a text "generator" (the seed's digits, repeated): every seed check that looks at bytes fails
    r = run_cli("seeds", "--command", "yes {seed} | head -c 4096", "--shell", "--seeds", "0..15",
                "--bytes-per-seed", "4KiB", "--avalanche-seeds", "1", "--checks", "avalanche,overlaps,early-bytes",
                "-q", "--workers", "1")
    assert r.code == 1, r.err
    assert "avalanche" in r.out and "fail" in r.out


def test_python_file_factory_passes_and_factory_errors_name_the_seed(run_cli, tmp_path):
    f = tmp_path / "gen.py"
    f.write_text(textwrap.dedent("""
        import numpy as np

        def make(seed):
            return np.random.default_rng(seed)

        def broken(seed):
            if seed == 7:
                raise ValueError("seed 7 is not supported")
            return np.random.default_rng(seed)
    """))
    r = run_cli("seeds", "--python", f"{f}:make", "--seeds", "0..63", "--checks", "overlaps,early-bytes,avalanche",
                *SMALL, "--workers", "1")
    assert r.code == 0, r.err + r.out
    r = run_cli("seeds", "--python", f"{f}:broken", "--seeds", "0..63", "--checks", "early-bytes", *SMALL,
                "--workers", "1")
    assert r.code == 2 and "seed 7" in r.err and "ValueError" in r.err and len(r.err.strip().splitlines()) == 1
    r = run_cli("seeds", "--python", f"{f}:nothing", "--seeds", "0..3", "-q")
    assert r.code == 2 and "nothing" in r.err and len(r.err.strip().splitlines()) == 1


@pytest.mark.parametrize("args, words", [
    (["--gen", "pcg64"], "no seeds given"),
    (["--gen", "pcg64", "--seeds", "9..2"], "end is below the start"),
    (["--gen", "pcg64", "--seeds", "1,2,x"], "item 3"),
    (["--gen", "pcg64", "--seeds", "1,2,1"], "appears twice"),
    (["--gen", "pcg64", "--seeds", "@/no/such/file"], "not found"),
    (["--gen", "pcg64", "--seed-set", "everything"], "unknown seed set"),
    (["--command", "mygen --seed 1", "--seeds", "0..3"], "{seed}"),
    (["--seeds", "0..3"], "no factory"),
    (["--gen", "pcg64", "--python", "x.py:f", "--seeds", "0..3"], "more than one factory"),
    (["--gen", "pcg64", "--seeds", "0..3", "--bytes-per-seed", "100"], "multiple of 8"),
    (["--gen", "pcg64", "--seeds", "0..3", "--checks", "bogus"], "no seed check selected"),
    (["--gen", "pcg64", "--seeds", "0..300", "--seed-bits", "8"], "does not fit in 8 bits"),
    (["--gen", "pcg64", "--seeds", "0..3", "--interleave", "3"], "interleave"),
    (["--gen", "pcg64", "--seeds", "0..3", "--workers", "0"], "--workers"),
])
def test_bad_input_is_one_line_exit_2(run_cli, args, words):
    r = run_cli("seeds", *args, "-q")
    assert r.code == 2, r.out
    assert words in r.err and len(r.err.strip().splitlines()) == 1 and "Traceback" not in r.err


def test_report_into_missing_folder_is_refused_before_work(run_cli, tmp_path):
    r = run_cli("seeds", "--gen", "pcg64", "--seeds", "0..3", "--json", tmp_path / "nope" / "r.json")
    assert r.code == 2 and "folder does not exist" in r.err


def test_same_report_for_any_workers_and_block_size():
    seeds = np.arange(70, dtype=np.uint64)  # not a multiple of the block: a short last block
    f = SeedFactory.from_options(factory=sound)
    base = dict(bytes_per_seed=4096, merge_budget=64 << 10, avalanche_seeds=8)
    a = run_sweep(seeds, f, options=SweepOptions(**base), workers=1)
    b = run_sweep(seeds, f, options=SweepOptions(**base, block=8), workers=2)
    assert b.settings["executor"] == "local processes (2)"
    assert _comparable(a) == _comparable(b)


def test_local_worker_death_is_an_incomplete_run_exit_1(run_cli, tmp_path):
    f = tmp_path / "dies.py"
    f.write_text(textwrap.dedent("""
        import multiprocessing, os
        import numpy as np

        def make(seed):
            if seed == 40 and multiprocessing.parent_process() is not None:
                os._exit(1)  # a worker process dies mid-task
            return np.random.default_rng(seed)
    """))
    j = tmp_path / "r.json"
    r = run_cli("seeds", "--python", f"{f}:make", "--seeds", "0..63", "--checks", "early-bytes,overlaps",
                "--bytes-per-seed", "1KiB", "--workers", "2", "--json", j, "-q")
    assert r.code == 1, r.err + r.out
    d = json.loads(j.read_text())
    assert d["incomplete"] is True and any("incomplete run" in n for n in d["notes"])
    assert "incomplete" in r.out


def test_python_file_factory_travels_to_workers_without_the_file(tmp_path):
    import pickle

    from rngassay.seeds import factory as F

    f = tmp_path / "remote_gen.py"
    f.write_text("import numpy as np\n\ndef make(seed):\n    return np.random.default_rng(seed + 1000)\n")
    made = SeedFactory.from_options(python=f"{f}:make")
    want = made.stream(5, 64)
    moved = pickle.loads(pickle.dumps(made))  # what a cluster worker receives
    f.unlink()  # the worker cannot see the file
    F._LOADED.clear()
    assert np.array_equal(moved.stream(5, 64), want)
    assert np.array_equal(want, np.frombuffer(np.random.default_rng(1005).bit_generator.random_raw(8).tobytes(),
                                              np.uint8))
