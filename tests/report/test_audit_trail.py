"""The audit trail every report carries: the command line or the API call, UTC start and end, versions, seeds,
selection, the checks left out and why, and what completed of what was planned -- in the JSON, the JUnit
properties, the HTML and the terminal."""

from __future__ import annotations

import json
import os
import platform
import re
import shlex
import signal
import xml.etree.ElementTree as ET
from datetime import datetime

import numpy as np
import pytest
import scipy

from rngassay import api
from rngassay.model import Report, left_out_from_notes
from rngassay.report.html import render_html
from rngassay.report.junit import render_junit
from rngassay.report.terminal import render
from rngassay.report.trail import left_out_lines

ISO_UTC = re.compile(r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d(Z|\+00:00)$")


def _utc(text: str) -> datetime:
    assert ISO_UTC.match(text), text
    return datetime.fromisoformat(text.replace("Z", "+00:00"))


def _props(xml_text: str) -> dict[str, str]:
    suite = ET.fromstring(xml_text).find("testsuite")
    return {p.get("name"): p.get("value") for p in suite.find("properties")}


@pytest.fixture(scope="module")
def selected_ids():
    full = api.assay(gen="pcg64", budget="1MiB", plan_only=True)
    chosen = api.assay(gen="pcg64", budget="1MiB", plan_only=True, checks=["monobit"])
    return {c.id for c in full.checks}, {c.id for c in chosen.checks}


def test_every_renderer_shows_the_trail_of_a_command_line_run(run_cli, tmp_path, selected_ids):
    j, h, x = tmp_path / "r.json", tmp_path / "r.html", tmp_path / "r.xml"
    args = ["test", "--gen", "pcg64", "--seed", "3", "--budget", "1MiB", "--checks", "monobit", "--workers", "1",
            "--json", str(j), "--html", str(h), "--junit", str(x)]
    r = run_cli(*args)
    assert r.code == 0, r.err
    a = json.loads(j.read_text())["audit"]
    # JSON: the command line as given, times, versions (checked against the modules themselves), seed, selection
    assert a["invocation"] == "command line" and a["argv"] == ["rngassay", *args]
    assert _utc(a["started_utc"]) <= _utc(a["ended_utc"])
    assert a["versions"]["numpy"] == np.__version__ and a["versions"]["scipy"] == scipy.__version__
    assert a["versions"]["python"] == platform.python_version() and set(a["versions"]) >= {"rngassay", "numba"}
    assert a["seeds"] == [{"source": "--gen pcg64", "seed": 3, "origin": "given"}]
    assert a["selection"] == {"checks": ["monobit"], "skip": None}
    full, chosen = selected_ids
    by_selection = {e["check"] for e in a["left_out"] if e["reason"] == "not selected by --checks monobit"}
    assert by_selection == full - chosen and by_selection  # every check the selection dropped, and no other
    assert a["completed"] == [{"what": "replicates", "done": 4 * len(chosen), "planned": 4 * len(chosen)},
                              {"what": "checks complete", "done": len(chosen), "planned": len(chosen)}]
    # JUnit: <properties> on the test suite
    p = _props(x.read_text())
    assert p["audit.command"] == shlex.join(["rngassay", *args])
    assert p["audit.started_utc"] == a["started_utc"] and p["audit.ended_utc"] == a["ended_utc"]
    assert p["audit.version.numpy"] == np.__version__ and p["audit.seed.1"].startswith("3 for --gen pcg64")
    assert int(p["audit.left_out"]) == len(a["left_out"]) and f"audit.left_out.{len(a['left_out'])}" in p
    # HTML: a section with human labels, not Python literals
    page = h.read_text()
    start = page.index("<h2>Audit trail</h2>")
    section = page[start:page.index("</section>", start)]
    for label in ("Command line", "Started (UTC)", "Ended (UTC)", "Versions", "Seed", "Selection",
                  "Checks left out"):
        assert label in section
    assert "rngassay test --gen pcg64 --seed 3 --budget 1MiB" in section and f"numpy {np.__version__}" in section
    assert "{'" not in section and "['" not in section and "None" not in section
    # terminal: a short footer and the left-out checks, grouped by reason
    out = r.out
    assert "\nrun          rngassay test --gen pcg64 --seed 3 --budget 1MiB --checks monobit" in out
    assert f"\ntime         {a['started_utc']} to {a['ended_utc']} (UTC)" in out
    assert f"numpy {np.__version__}, scipy {scipy.__version__}" in out
    assert "\nseed         3 for --gen pcg64 (given)" in out
    grouped = [ln for ln in out.splitlines() if ln.startswith("left out") and "not selected" in ln]
    assert len(grouped) == 1 and f"{len(by_selection)} checks not selected by --checks monobit" in grouped[0]


FACTORIES = '''
import numpy as np

def make(seed=None):
    return np.random.PCG64(seed)

def fixed():
    return np.random.PCG64(5)

def five(seed=5):
    return np.random.PCG64(seed)
'''


def test_a_drawn_seed_is_printed_recorded_and_repeats_the_run(run_cli, tmp_path):
    f = tmp_path / "fac.py"
    f.write_text(FACTORIES)
    common = ["--budget", "1MiB", "--checks", "monobit,gap", "--workers", "1"]
    a, b, c = (tmp_path / n for n in ("a.json", "b.json", "c.json"))
    r = run_cli("test", "--python", f"{f}:make", *common, "--json", a)
    assert r.code in (0, 1), r.err
    m = re.search(r"seed (\d+) drawn for --python; repeat the run with --seed (\d+)", r.err)
    assert m and m.group(1) == m.group(2), r.err
    seed = int(m.group(1))
    da = json.loads(a.read_text())
    assert da["audit"]["seeds"] == [{"source": f"--python {f}:make", "seed": seed, "origin": "drawn"}]
    assert f"seed         {seed} for --python {f}:make, drawn from OS entropy (repeat with --seed {seed})" in r.out
    r2 = run_cli("test", "--python", f"{f}:make", "--seed", str(seed), *common, "--json", b)
    assert "drawn" not in r2.err
    db = json.loads(b.read_text())
    assert db["audit"]["seeds"][0] == {"source": f"--python {f}:make", "seed": seed, "origin": "given"}
    assert db["source"]["sha256"] == da["source"]["sha256"]
    assert [(x["id"], x["p_value"]) for x in db["checks"]] == [(x["id"], x["p_value"]) for x in da["checks"]]
    # a second drawing gives another stream (two equal 64-bit draws: probability 2**-64)
    run_cli("test", "--python", f"{f}:make", *common, "--json", c)
    assert json.loads(c.read_text())["source"]["sha256"] != da["source"]["sha256"]


def test_a_factory_without_a_seed_is_said_so(run_cli, tmp_path):
    f = tmp_path / "fac.py"
    f.write_text(FACTORIES)
    j = tmp_path / "r.json"
    r = run_cli("test", "--python", f"{f}:fixed", "--budget", "1MiB", "--checks", "monobit", "--workers", "1",
                "--json", j)
    assert r.code == 0 and "drawn" not in r.err
    s = json.loads(j.read_text())["audit"]["seeds"]
    assert s == [{"source": f"--python {f}:fixed", "seed": None,
                  "origin": "none: the factory is called without a seed"}]
    # a factory whose seed defaults to a number keeps it (nothing is drawn), and the trail names it
    r = run_cli("test", "--python", f"{f}:five", "--budget", "1MiB", "--checks", "monobit", "--workers", "1",
                "--json", j)
    assert r.code == 0 and "drawn" not in r.err
    assert json.loads(j.read_text())["audit"]["seeds"][0]["seed"] == 5
    assert "seed         5 for --python" in r.out and "(the factory's default)" in r.out


def test_the_python_api_records_the_call_and_its_options():
    rep = api.assay(gen="sfc64", seed=11, budget="1MiB", checks=["monobit"], workers=1)
    a = rep.audit
    assert a["invocation"] == "Python API" and "argv" not in a and a["call"] == "rngassay.assay"
    assert a["options"]["gen"] == "sfc64" and a["options"]["seed"] == 11 and a["options"]["checks"] == ["monobit"]
    assert "Python API: rngassay.assay(" in render(rep)
    again = Report.from_dict(json.loads(rep.to_json()))  # read back (rngassay diff) with the trail
    assert again.audit == json.loads(rep.to_json())["audit"]


def test_an_interrupted_report_says_what_completed_of_what_was_planned(tmp_path):
    p = tmp_path / "d.bin"
    p.write_bytes(np.random.default_rng(4).bytes(1 << 20))
    plan = api.assay(str(p), plan_only=True, checks=["classic"])

    def progress(text):
        if "segment 3/" in text:  # the runner says "checks: segment 3/4 read, ..."
            os.kill(os.getpid(), signal.SIGINT)

    rep = api.assay(str(p), workers=1, progress=progress, checks=["classic"])
    assert rep.incomplete and rep.checks
    done = sum(c.replicates for c in rep.checks)
    planned = sum(pc.replicates for pc in plan.checks)
    whole = sum(1 for c in rep.checks if c.replicates == next(pc.replicates for pc in plan.checks if pc.id == c.id))
    assert 0 < done < planned
    assert rep.audit["completed"] == [{"what": "replicates", "done": done, "planned": planned},
                                      {"what": "checks complete", "done": whole, "planned": len(plan.checks)}]
    line = f"{done} of {planned} replicates; {whole} of {len(plan.checks)} checks complete"
    assert f"(incomplete run: {line})" in render(rep)
    assert f"completed    {line}" in render(rep)
    assert line in render_html(rep).split("<h2>")[0] + render_html(rep).split("<h2>")[1]  # near the verdict
    props = _props(render_junit(rep))
    assert props["audit.completed"] == line
    case = ET.fromstring(render_junit(rep)).find(".//testcase[@name='run complete']/error")
    assert "replicates" in case.get("message")


def test_many_left_out_checks_are_grouped_by_reason():
    entries = [{"check": f"c{i}", "reason": f"needs {100 * i} bits values per replicate, 50 available"}
               for i in range(1, 8)]
    entries.append({"check": "odd one", "reason": "text floats are rounded"})
    lines = left_out_lines(entries)
    assert lines == ["7 checks needs more data per replicate than the budget gives: c1, c2, c3, c4 and 3 more",
                     "odd one: text floats are rounded"]
    few = left_out_lines(entries[:2])
    assert few == ["c1: needs 100 bits values per replicate, 50 available",
                   "c2: needs 200 bits values per replicate, 50 available"]
    notes = ["left out pit: gap t=3: needs more", "anderson-darling left out: too few values", "other note"]
    assert left_out_from_notes(notes) == [{"check": "pit: gap t=3", "reason": "needs more"},
                                          {"check": "anderson-darling", "reason": "too few values"}]


def test_seed_sweep_and_fit_reports_carry_the_trail(run_cli, tmp_path):
    j = tmp_path / "s.json"
    args = ["seeds", "--gen", "pcg64", "--seeds", "0..47", "--bytes-per-seed", "4KiB", "--merge-budget", "64KiB",
            "--avalanche-seeds", "8", "-q", "--workers", "1", "--json", str(j)]
    r = run_cli(*args)
    assert r.code in (0, 1), r.err
    a = json.loads(j.read_text())["audit"]
    assert a["argv"] == ["rngassay", *args] and _utc(a["started_utc"]) <= _utc(a["ended_utc"])
    assert a["seeds"][0]["spec"] == "--seeds 0..47" and a["seeds"][0]["count"] == 48
    assert a["seeds"][0]["first"] == 0 and a["seeds"][0]["last"] == 47
    assert {"what": "seeds", "done": 48, "planned": 48} in a["completed"]
    assert "seed         seed sweep --seeds 0..47 (48 seeds, 0 to 47)" in r.out
    v = tmp_path / "v.txt"
    np.savetxt(v, np.random.default_rng(3).normal(size=5000))
    j2 = tmp_path / "f.json"
    r = run_cli("fit", v, "--dist", "norm(loc=0, scale=1)", "--no-battery", "--pit-seed", "9", "--json", j2)
    assert r.code in (0, 1), r.err
    a = json.loads(j2.read_text())["audit"]
    assert a["argv"][:2] == ["rngassay", "fit"] and a["versions"]["scipy"] == scipy.__version__
    assert a["seeds"] == [{"source": "--pit-seed, the randomised PIT", "seed": 9, "origin": "given"}]
