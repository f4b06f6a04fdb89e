"""Comparing two reports check by check."""

from __future__ import annotations

import json

import pytest

from rngassay.report.diff import diff_reports, render_diff_text
from rngassay.model import CheckReport, Report, Round


def _check(cid, p, grade):
    return CheckReport(id=cid, key=cid, family="x", params={}, view="bits", kind="continuous", statistic=1.0,
                       p_value=p, grade=grade, bytes=1024, replicates=2,
                       rounds=[Round(replicates=2, bytes=1024, p_value=p, replicate_p=[0.3, 0.6])])


def _report(checks, sha="aa" * 32, verdict=None):
    if verdict is None:
        grades = {c.grade for c in checks}
        verdict = "fail" if "fail" in grades else "notable" if "notable" in grades else "pass"
    return Report(command="test", source={"kind": "file", "name": "s.bin", "format": "u1", "bytes_read": 1024,
                                          "sha256": sha},
                  budget_bytes=1024, alpha=0.01, verdict=verdict, combined_p=0.5, checks=checks)


@pytest.fixture
def pair():
    base = _report([
        _check("a newly failing", 0.30, "pass"),
        _check("b fixed", 1e-9, "fail"),
        _check("c much smaller p", 0.20, "pass"),
        _check("d pass to notable", 0.02, "pass"),
        _check("e notable to pass", 0.004, "notable"),
        _check("f much larger p", 1e-5, "pass"),
        _check("g small wiggle", 0.50, "pass"),
        _check("h removed", 0.50, "pass"),
    ])
    new = _report([
        _check("a newly failing", 1e-12, "fail"),
        _check("b fixed", 0.40, "pass"),
        _check("c much smaller p", 1e-4, "pass"),  # -log10 p: 0.70 -> 4.0, rise 3.3, new p < 1e-3
        _check("d pass to notable", 0.003, "notable"),
        _check("e notable to pass", 0.30, "pass"),
        _check("f much larger p", 0.5, "pass"),
        _check("g small wiggle", 0.05, "pass"),  # rise of 1 only
        _check("i added", 0.70, "pass"),
    ], sha="bb" * 32)
    return base, new


def _by_id(result):
    return {r.id: r for r in result.rows}


def test_change_labels(pair):
    rows = _by_id(diff_reports(*pair))
    expected = {
        "a newly failing": ("new fail", True),
        "b fixed": ("fixed", False),
        "c much smaller p": ("stronger evidence", True),
        "d pass to notable": ("stronger evidence", True),
        "e notable to pass": ("weaker evidence", False),
        "f much larger p": ("weaker evidence", False),
        "g small wiggle": ("same", False),
        "h removed": ("removed", True),  # a removed check counts as worse (module docstring)
        "i added": ("added", False),
    }
    assert {k: (r.change, r.worse) for k, r in rows.items()} == expected
    assert rows["c much smaller p"].delta == pytest.approx(4 - 0.69897, abs=1e-4)  # log10(0.2) = -0.69897


def test_worse_only_when_a_rule_fires(pair):
    base, new = pair
    assert diff_reports(base, new).worse
    assert not diff_reports(base, base).worse
    # reversed: b newly fails and f's p drops from 0.5 to 1e-5; a is fixed
    rev = _by_id(diff_reports(new, base))
    assert rev["a newly failing"].change == "fixed"
    assert rev["b fixed"].change == "new fail" and rev["b fixed"].worse  # p 0.40 -> 1e-9 and graded fail
    assert rev["f much larger p"].change == "stronger evidence" and rev["f much larger p"].worse


def test_marked_rule_boundaries():
    def one(bp, np_, bg="pass", ng="pass"):
        return diff_reports(_report([_check("k", bp, bg)]), _report([_check("k", np_, ng)])).rows[0]

    assert one(0.9, 8e-4).worse  # rise 3.05, new p < 1e-3
    assert not one(0.9, 2e-3).worse  # rise 2.65
    assert one(1e-3, 9e-7).worse  # rise 3.05 among small p-values, same grade
    assert not one(1e-3, 2e-6).worse  # rise 2.70
    assert one(0.0, 0.0).change == "same"  # both underflowed: clipped to 1e-300, no change
    row = one(0.5, 0.0)
    assert row.change == "stronger evidence" and row.delta == pytest.approx(300 - 0.30103, abs=1e-4)
    assert one(0.5, float("nan")).change == "same" and one(0.5, float("nan")).delta is None
    assert one(0.2, 0.3, "pass", "notable").worse  # grade rise alone is enough
    assert not one(0.01, 0.5, "notable", "pass").worse


def test_added_failing_check_counts_as_worse():
    base = _report([_check("k", 0.5, "pass")])
    new = _report([_check("k", 0.5, "pass"), _check("z", 1e-8, "fail")])
    res = diff_reports(base, new)
    assert res.worse and _by_id(res)["z"].change == "added"


def test_accepts_json_dicts_and_reports_alike(pair):
    base, new = pair
    from_dicts = diff_reports(json.loads(base.to_json()), json.loads(new.to_json()))
    from_objs = diff_reports(base, new)
    assert [(r.id, r.change, r.worse) for r in from_dicts.rows] == [(r.id, r.change, r.worse) for r in from_objs.rows]
    assert from_dicts.base_verdict == "fail" and from_dicts.new_verdict == "fail"
    assert not from_dicts.same_input


def test_rows_worse_first(pair):
    rows = diff_reports(*pair).rows
    flags = [r.worse for r in rows]
    assert flags == sorted(flags, reverse=True)
    assert rows[0].change == "new fail"


def test_text_rendering(pair):
    text = render_diff_text(diff_reports(*pair))
    assert "new is worse: 4 checks" in text
    assert "! new fail" in text and "a newly failing" in text
    assert "pass 3.00e-01" in text and "fail 1.00e-12" in text
    assert "g small wiggle" not in text and "1 unchanged check not shown" in text
    assert "rule:" in text
    full = render_diff_text(diff_reports(*pair), show_same=True)
    assert "g small wiggle" in full
    same = render_diff_text(diff_reports(pair[0], pair[0]))
    assert "new is not worse" in same and "same input" in same
    assert not any(line != line.rstrip() for line in text.splitlines())


def test_worse_uses_holm_adjusted_p_when_both_reports_have_it():
    # raw p fell by 5 orders of magnitude, but after Holm's adjustment the check is unremarkable:
    # not "worse" (the rule is judged on adjusted p-values, module docstring of report/diff.py)
    from rngassay.report.diff import diff_reports

    def rep(p, adj):
        return {"schema": "rngassay-report/1", "verdict": "pass", "source": {},
                "checks": [{"id": "gap t=8", "grade": "pass", "p_value": p, "adjusted_p": adj}]}

    assert not diff_reports(rep(0.9, 1.0), rep(1e-5, 0.5)).worse
    assert diff_reports(rep(0.9, 1.0), rep(1e-7, 9e-4)).worse  # adjusted 1.0 -> 9e-4: 3 orders, below 0.01


def test_incomplete_new_report_is_worse():
    from rngassay.report.diff import diff_reports

    rep = {"schema": "rngassay-report/1", "verdict": "pass", "source": {},
           "checks": [{"id": "gap t=8", "grade": "pass", "p_value": 0.5, "adjusted_p": 1.0}]}
    assert not diff_reports(rep, rep).worse
    assert diff_reports(rep, dict(rep, incomplete=True)).worse


@pytest.mark.parametrize("bad_check", [
    "not an object", {"grade": "pass", "p_value": 0.5}, {"id": ["x"], "grade": "pass", "p_value": 0.5},
    {"id": "x", "grade": "great", "p_value": 0.5}, {"id": "x", "grade": "pass", "p_value": "abc"},
    {"id": "x", "grade": "pass", "p_value": -0.1},
])
def test_damaged_check_entries_are_refused(tmp_path, bad_check):
    import json

    from rngassay.errors import InputError
    from rngassay.report.files import read_report_json

    p = tmp_path / "r.json"
    p.write_text(json.dumps({"schema": "rngassay-report/1", "checks": [bad_check]}))
    with pytest.raises(InputError, match="damaged report"):
        read_report_json(p)


def test_a_baseline_from_before_the_rename_keeps_its_middle_grade():
    # reports written before wave 2e call the middle grade "borderline": borderline -> fail is a new fail
    from rngassay.report.diff import _compare

    old = {"grade": "borderline", "p_value": 1e-5, "adjusted_p": 0.004}
    new = {"grade": "fail", "p_value": 1e-6, "adjusted_p": 0.0004}
    r = _compare("x", old, new)
    assert r.change == "new fail" and r.worse
