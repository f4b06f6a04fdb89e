"""JUnit XML output: parses, one testcase per check, failures where grades are fail."""

from __future__ import annotations

import xml.etree.ElementTree as ET

import pytest

from rngassay.report.junit import render_junit
from rngassay.model import CheckReport, Report, Round


def _check(cid, p, grade, adjusted=None, rounds=1, error=None):
    rs = [Round(replicates=4 * (i + 1), bytes=4096, p_value=p * (10 ** (rounds - 1 - i)), replicate_p=[0.2, 0.4])
          for i in range(rounds)]
    return CheckReport(id=cid, key=cid, family="gap", params={"t": 16}, view="uniforms", kind="continuous",
                       statistic=2.0, p_value=p, grade=grade, bytes=4096 * rounds, replicates=rs[-1].replicates,
                       adjusted_p=adjusted, rounds=rs, error=error)


@pytest.fixture
def report() -> Report:
    checks = [
        _check("gap [0, 0.5) t=16", 2.5e-7, "fail", adjusted=1.0e-6, rounds=2),
        _check("runs up", 3.1e-3, "notable", adjusted=1.2e-2, rounds=2),
        _check("serial d=2", 0.44, "pass", adjusted=1.0),
        _check("poker k=5", 0.0, "fail", adjusted=0.0, error="needs 5000 values, got 12"),
    ]
    return Report(command="test", source={"kind": "file", "name": "data.bin", "format": "u1", "bytes_read": 16384,
                                          "sha256": "ab" * 32},
                  budget_bytes=16384, alpha=0.01, verdict="fail", combined_p=1e-6, checks=checks, elapsed_s=1.5)


def test_parses_with_one_testcase_per_check(report):
    root = ET.fromstring(render_junit(report).encode("utf-8"))
    assert root.tag == "testsuites"
    suites = root.findall("testsuite")
    assert len(suites) == 1 and suites[0].get("name") == "rngassay"
    cases = suites[0].findall("testcase")
    assert sorted(c.get("name") for c in cases) == sorted(c.id for c in report.checks)
    assert suites[0].get("tests") == "4" and root.get("tests") == "4"
    assert suites[0].get("failures") == "1" and suites[0].get("errors") == "1"


def test_fail_notable_pass_and_error_mapping(report):
    root = ET.fromstring(render_junit(report))
    cases = {c.get("name"): c for c in root.iter("testcase")}
    fail = cases["gap [0, 0.5) t=16"].find("failure")
    assert fail is not None
    assert "2.50e-07" in fail.get("message") and "1.00e-06" in fail.get("message")
    assert "rounds: 1: p = 2.50e-06 over 4 replicates; 2: p = 2.50e-07 over 8 replicates" in fail.text
    border = cases["runs up"]
    assert border.find("failure") is None and border.find("skipped") is None and border.find("error") is None
    out = border.find("system-out").text
    assert out.startswith("notable:") and "3.10e-03" in out and "1.20e-02" in out
    passing = cases["serial d=2"]
    assert list(passing) == []
    err = cases["poker k=5"].find("error")
    assert err is not None and "needs 5000 values, got 12" in err.get("message")
    assert "< 1e-300" in err.text  # p = 0 is never printed as 0


def test_properties(report):
    root = ET.fromstring(render_junit(report))
    props = {p.get("name"): p.get("value") for p in root.iter("property")}
    assert props["source.sha256"] == "ab" * 32
    assert props["source.bytes_read"] == "16384"
    assert props["verdict"] == "fail"
    assert props["incomplete"] == "false"


def test_hostile_strings_round_trip_escaped(report):
    evil = '<script>alert(1)</script> & "quotes" \x00\x1b end'
    report.checks[0].id = evil
    report.source["name"] = evil
    report.notes = [evil]
    doc = render_junit(report)
    assert "<script>" not in doc
    root = ET.fromstring(doc)  # still well-formed XML despite NUL and ESC
    names = [c.get("name") for c in root.iter("testcase")]
    assert '<script>alert(1)</script> & "quotes" \ufffd\ufffd end' in names
    props = {p.get("name"): p.get("value") for p in root.iter("property")}
    assert props["source.name"].startswith("<script>alert(1)</script>")


def test_no_checks():
    r = Report(command="t", source={}, budget_bytes=1, alpha=0.01, verdict="pass", combined_p=None, checks=[],
               incomplete=True)
    root = ET.fromstring(render_junit(r))
    # an incomplete run with no checks is never green (issue 11): one "run complete" case with an <error>
    cases = root.find("testsuite").findall("testcase")
    assert [c.get("name") for c in cases] == ["run complete"] and cases[0].find("error") is not None
    assert root.get("tests") == "1" and root.get("errors") == "1"
    assert "incomplete" in root.find("testsuite").find("system-out").text
