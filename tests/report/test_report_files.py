"""Atomic report writing and reading JSON reports back."""

from __future__ import annotations

import json
import os

import pytest

from rngassay.errors import InputError
from rngassay.report import files
from rngassay.report.files import read_report_json, write_atomic
from rngassay.model import SCHEMA, CheckReport, Report, Round


def _report() -> Report:
    c = CheckReport(
        id="gap [0, 0.5) t=16", key="gap", family="gap", params={"lo": 0.0, "hi": 0.5, "t": 16}, view="uniforms",
        kind="continuous", statistic=12.5, p_value=0.42, grade="pass", bytes=4096, replicates=4, adjusted_p=0.84,
        rounds=[Round(replicates=4, bytes=4096, p_value=0.42, replicate_p=[0.1, 0.5, 0.7, 0.9])],
    )
    return Report(command="test", source={"kind": "file", "name": "x.bin", "format": "u1", "bytes_read": 4096,
                                          "sha256": "0" * 64},
                  budget_bytes=4096, alpha=0.01, verdict="pass", combined_p=0.42, checks=[c])


def _leftovers(d) -> list[str]:
    return [p.name for p in d.iterdir() if p.name.endswith(".tmp")]


def test_write_text_and_bytes_and_overwrite(tmp_path):
    p = tmp_path / "r.html"
    write_atomic(p, "héllo\n")
    assert p.read_bytes() == "héllo\n".encode("utf-8")
    write_atomic(p, b"\x00\x01second")
    assert p.read_bytes() == b"\x00\x01second"
    assert _leftovers(tmp_path) == []
    assert sorted(x.name for x in tmp_path.iterdir()) == ["r.html"]


def test_written_file_gets_umask_permissions_not_0600(tmp_path):
    old = os.umask(0o022)
    try:
        p = tmp_path / "r.json"
        write_atomic(p, "{}")
        assert (p.stat().st_mode & 0o777) == 0o644  # what open(..., "w") would give under umask 022
    finally:
        os.umask(old)


def test_missing_parent_is_input_error(tmp_path):
    p = tmp_path / "no" / "such" / "dir" / "r.html"
    with pytest.raises(InputError) as ei:
        write_atomic(p, "x")
    assert "cannot write report" in ei.value.what
    assert str(p) in ei.value.line()
    assert ei.value.hint
    assert not (tmp_path / "no").exists()


def test_directory_target_is_input_error(tmp_path):
    with pytest.raises(InputError) as ei:
        write_atomic(tmp_path, "x")
    assert "directory" in ei.value.what
    assert _leftovers(tmp_path) == []


def test_failure_mid_write_keeps_old_file_and_leaves_no_temp(tmp_path, monkeypatch):
    p = tmp_path / "r.json"
    p.write_text("old complete report")

    def boom(fd):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(files.os, "fsync", boom)
    with pytest.raises(InputError) as ei:
        write_atomic(p, "new report that never lands")
    assert "No space left" in ei.value.what
    assert p.read_text() == "old complete report"
    assert _leftovers(tmp_path) == []


def test_read_round_trip(tmp_path):
    r = _report()
    p = tmp_path / "r.json"
    write_atomic(p, r.to_json())
    d = read_report_json(p)
    assert d["schema"] == SCHEMA
    assert d["checks"][0]["id"] == "gap [0, 0.5) t=16"
    assert Report.from_dict(d).checks[0].rounds[0].replicate_p == [0.1, 0.5, 0.7, 0.9]


@pytest.mark.parametrize(
    "content, fragment",
    [
        ("this is not json", "not a JSON report"),
        ("[1, 2, 3]", "top level is not an object"),
        (json.dumps({"checks": []}), "no 'schema'"),
        (json.dumps({"schema": "other-tool/1", "checks": []}), "schema 'other-tool/1'"),
        (json.dumps({"schema": 3, "checks": []}), "not an rngassay report"),
        (json.dumps({"schema": SCHEMA}), "'checks' is missing"),
    ],
)
def test_read_rejects_bad_files(tmp_path, content, fragment):
    p = tmp_path / "bad.json"
    p.write_text(content)
    with pytest.raises(InputError) as ei:
        read_report_json(p)
    assert fragment in ei.value.what
    assert ei.value.where == str(p)
    assert ei.value.hint


def test_read_missing_file_directory_and_binary(tmp_path):
    with pytest.raises(InputError, match="no such file"):
        read_report_json(tmp_path / "absent.json")
    with pytest.raises(InputError, match="directory"):
        read_report_json(tmp_path)
    b = tmp_path / "b.json"
    b.write_bytes(b"\xff\xfe\x00garbage")
    with pytest.raises(InputError, match="not UTF-8"):
        read_report_json(b)


def test_read_refuses_unknown_schema_version(tmp_path):
    # issue 11 item 8: a schema version this rngassay does not know is refused, not trusted
    p = tmp_path / "r.json"
    p.write_text(json.dumps({"schema": "rngassay-report/2", "checks": []}))
    with pytest.raises(InputError, match="unknown report schema version"):
        read_report_json(p)
    p.write_text(json.dumps({"schema": "rngassay-report/1", "checks": []}))
    assert read_report_json(p)["schema"] == "rngassay-report/1"
