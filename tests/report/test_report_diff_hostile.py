"""Issue 11, item 8: `diff` refuses damaged or hostile reports with one line and exit 2, never a traceback,
never "not worse" on a report it cannot trust."""

from __future__ import annotations

import json

import pytest

from rngassay.report.diff import diff_reports
from rngassay.report.files import MAX_REPORT_BYTES, read_report_json


def _check(cid, grade="pass", p=0.5, adj=None):
    c = {"id": cid, "grade": grade, "p_value": p}
    if adj is not None:
        c["adjusted_p"] = adj
    return c


def _report(checks, schema="rngassay-report/1"):
    return {"schema": schema, "verdict": "pass", "source": {"name": "x"}, "incomplete": False, "checks": checks}


@pytest.fixture
def base(tmp_path):
    p = tmp_path / "base.json"
    p.write_text(json.dumps(_report([_check("gap t=6"), _check("serial d=2")])))
    return p


def _refused(r, *words):
    assert r.code == 2, (r.code, r.out, r.err)
    assert r.err.count("\n") == 1 and r.err.startswith("rngassay: error:"), r.err
    for w in words:
        assert w in r.err, r.err


def test_duplicate_id_hiding_a_failure(run_cli, base, tmp_path):
    # a failing check followed by a passing duplicate of the same id read "not worse", exit 0
    new = tmp_path / "new.json"
    new.write_text(json.dumps(_report([_check("gap t=6", "fail", 1e-12), _check("gap t=6"), _check("serial d=2")])))
    _refused(run_cli("diff", base, new), "repeats the id of check 1")
    with pytest.raises(ValueError, match="twice"):
        diff_reports(json.loads(base.read_text()), json.loads(new.read_text()))


def test_unknown_schema_version(run_cli, base, tmp_path):
    new = tmp_path / "new.json"
    new.write_text(json.dumps(_report([_check("gap t=6")], schema="rngassay-report/999")))
    _refused(run_cli("diff", base, new), "unknown report schema version")


@pytest.mark.parametrize("field, value", [("adjusted_p", -5), ("adjusted_p", 1.5), ("p_value", 2.0),
                                          ("p_value", -0.1)])
def test_values_outside_their_ranges(run_cli, base, tmp_path, field, value):
    c = _check("gap t=6")
    c[field] = value
    new = tmp_path / "new.json"
    new.write_text(json.dumps(_report([c])))
    _refused(run_cli("diff", base, new), field)


def test_nested_100000_deep(run_cli, base, tmp_path):
    new = tmp_path / "deep.json"
    new.write_text("[" * 100_000 + "]" * 100_000)
    _refused(run_cli("diff", base, new), "nested too deeply")


def test_5000_digit_number(run_cli, base, tmp_path):
    new = tmp_path / "big.json"
    new.write_text('{"schema": "rngassay-report/1", "x": ' + "9" * 5000 + ', "checks": []}')
    _refused(run_cli("diff", base, new), "digits")


def test_lone_surrogate_in_id(run_cli, base, tmp_path):
    new = tmp_path / "sur.json"
    new.write_text(json.dumps(_report([_check("\ud800")])))  # json.dumps writes the escape \ud800
    _refused(run_cli("diff", base, new), "lone surrogate")


def test_lone_surrogate_elsewhere(run_cli, base, tmp_path):
    d = _report([_check("gap t=6")])
    d["verdict"] = "\udc80"
    new = tmp_path / "sur2.json"
    new.write_text(json.dumps(d))
    _refused(run_cli("diff", base, new), "lone surrogate")


def test_dev_zero_is_bounded(run_cli, base):
    # /dev/zero was read until memory ran out; now at most MAX_REPORT_BYTES + 1 bytes are read
    _refused(run_cli("diff", base, "/dev/zero"), f"larger than {MAX_REPORT_BYTES >> 20} MiB")


def test_sound_reports_still_compare(run_cli, base, tmp_path):
    new = tmp_path / "new.json"
    new.write_text(json.dumps(_report([_check("gap t=6", p=0.4, adj=0.9), _check("serial d=2")])))
    assert read_report_json(new)["checks"][0]["adjusted_p"] == 0.9
    r = run_cli("diff", base, new)
    assert r.code == 0 and "not worse" in r.out
