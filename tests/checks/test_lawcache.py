"""Null laws kept on disk between runs (rngassay.checks.lawcache): exact round trips, a new file for changed code,
no error from a damaged file or a folder that cannot be written, and off when asked."""

from __future__ import annotations

import json
import math
from fractions import Fraction

import pytest

from rngassay.checks import lawcache
from rngassay.checks.lawcache import kept

CALLS: list[tuple] = []


@kept
def law(a: int, b: float, name: str):
    CALLS.append((a, b, name))
    return (0.1 + 0.2, 1e-300, math.inf, -0.0, 2**70 + 1, Fraction(-7, 3), [b / 3.0, (a, name)])


@kept
def other_law(a: int, b: float, name: str):  # same name pattern, other source: another file
    return 1.0


@pytest.fixture
def cache(tmp_path, monkeypatch):
    monkeypatch.setenv("RNGASSAY_CACHE_DIR", str(tmp_path / "laws"))
    law.forget()
    other_law.forget()
    CALLS.clear()
    yield tmp_path / "laws"
    law.forget()
    other_law.forget()


def test_values_come_back_exactly_and_are_computed_once(cache):
    first = law(3, 0.7, "x")
    law.forget()  # a new process: the memory is empty, the file is not
    again = law(3, 0.7, "x")
    assert again == first and CALLS == [(3, 0.7, "x")]
    assert math.copysign(1.0, again[3]) == -1.0 and again[4] == 2**70 + 1 and isinstance(again[5], Fraction)
    assert law(4, 0.7, "x") != first and len(CALLS) == 2  # other arguments: computed
    assert law.cache_file() != other_law.cache_file()  # the source is in the name
    other_law(3, 0.7, "x")
    assert len(list(cache.iterdir())) == 2


def test_damaged_file_and_unwritable_folder_only_mean_computing(cache, tmp_path, monkeypatch):
    law(1, 1.0, "y")
    path = law.cache_file()
    with open(path, "w") as f:
        f.write("{not json")
    law.forget()
    assert law(1, 1.0, "y")[0] == 0.1 + 0.2 and len(CALLS) == 2  # recomputed, and the file mended
    assert json.load(open(path))
    blocker = tmp_path / "a-file"
    blocker.write_text("")
    monkeypatch.setenv("RNGASSAY_CACHE_DIR", str(blocker / "laws"))  # a folder that cannot be made
    law.forget()
    assert law(1, 1.0, "y")[1] == 1e-300 and len(CALLS) == 3


def test_empty_setting_turns_the_cache_off(cache, monkeypatch):
    monkeypatch.setenv("RNGASSAY_CACHE_DIR", "")
    law.forget()
    law(2, 2.0, "z")
    law.forget()
    law(2, 2.0, "z")
    assert len(CALLS) == 2 and lawcache.cache_dir() is None and not cache.exists()


def test_a_kept_null_law_equals_a_fresh_computation(cache):
    from rngassay.checks.classic.birthday import birthday_mean

    fresh = birthday_mean.__wrapped__.__wrapped__(512, 2**20)  # below lru_cache and the disk
    birthday_mean.cache_clear()
    assert birthday_mean(512, 2**20) == fresh


@kept
def odd_law(n):
    return {"not": "keepable"} if n == 0 else n * 0.5


def test_numpy_arguments_name_the_same_entry_and_unkeepable_values_are_returned(cache):
    import numpy as np

    assert law(np.int64(3), np.float64(0.7), "x") == law(3, 0.7, "x")
    assert len(CALLS) == 1  # numpy scalars name the same entry as Python numbers
    assert odd_law(0) == {"not": "keepable"} and odd_law(np.int32(4)) == 2.0
    odd_law.forget()
    assert odd_law(4) == 2.0
