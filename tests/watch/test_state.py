"""The watch state in SQLite: settings bound at creation, a chunk committed whole or not at all, start-over."""

import os

import pytest

from rngassay.errors import InputError
from rngassay.watch.state import WatchState, set_aside

SETTINGS = {"odds_sha256": "abc", "alpha": 0.001, "columns": {"outcome": "outcome"}, "format": "csv"}


def _commit(s, offset, alarms=(), skipped=()):
    s.commit(offset=offset, line=offset // 2, outcomes=offset // 2, identity={"dev": 1}, header=["outcome"],
             monitor={"n": offset}, alarms=list(alarms), skipped=list(skipped))


def test_commit_and_reopen(tmp_path):
    p = str(tmp_path / "s.sqlite")
    s = WatchState(p)
    s.bind(SETTINGS)
    _commit(s, 10, alarms=[{"index": 3, "statistic": "x", "value": 2.0, "threshold": 1.0}], skipped=[(4, "bad")])
    s.close()
    s = WatchState(p)
    s.bind(SETTINGS)
    assert s.position()["offset"] == 10 and s.position()["header"] == ["outcome"]
    assert s.monitor_state() == {"n": 10} and [a["index"] for a in s.alarms()] == [3] and s.skipped() == [(4, "bad")]


def test_failed_chunk_leaves_the_previous_one(tmp_path):
    """An error in the middle of a commit (here an alarm without a statistic) rolls the whole chunk back."""
    s = WatchState(str(tmp_path / "s.sqlite"))
    s.bind(SETTINGS)
    _commit(s, 10)
    with pytest.raises(Exception):
        _commit(s, 20, alarms=[{"index": 5, "statistic": None}])
    assert s.position()["offset"] == 10 and s.monitor_state() == {"n": 10} and s.alarms() == []


@pytest.mark.parametrize("key,value", [("odds_sha256", "def"), ("alpha", 0.01), ("format", "jsonl")])
def test_resume_with_other_settings_refused(tmp_path, key, value):
    p = str(tmp_path / "s.sqlite")
    s = WatchState(p)
    s.bind(SETTINGS)
    _commit(s, 2)
    s.close()
    with pytest.raises(InputError) as e:
        WatchState(p).bind({**SETTINGS, key: value})
    assert "--start-over" in e.value.hint and e.value.where == p


def test_set_aside_keeps_the_old_state(tmp_path):
    p = str(tmp_path / "s.sqlite")
    s = WatchState(p)
    s.bind(SETTINGS)
    _commit(s, 2)
    s.close()
    moved = set_aside(p)
    assert not os.path.exists(p) and WatchState(moved).position()["offset"] == 2
    assert set_aside(p) is None


def test_not_a_database(tmp_path):
    p = tmp_path / "s.sqlite"
    p.write_bytes(b"this is not sqlite" * 100)
    with pytest.raises(InputError) as e:
        WatchState(str(p))
    assert e.value.where == str(p)
