"""Bit windows and float views in the plan (wave 2a items 2 and 4)."""

from rngassay.battery.plan import make_plan
from rngassay.intake.formats import parse_format


def _ids(fmt, budget=8 << 20, **kw):
    return [c.id for c in make_plan(parse_format(fmt), budget, **kw).checks]


def test_word_checks_also_run_on_reversed_words():
    ids = _ids("<u4")
    for key in ("birthday spacings", "collision", "serial", "gap", "poker"):
        assert any(i.startswith(key + " ") and i.endswith("window=reversed") for i in ids), key
    # the selector of a key selects its windows too, and ids do not change with the budget
    assert [i for i in _ids("<u4", checks=["gap"])] == [i for i in _ids("<u4", 64 << 20, checks=["gap"])]


def test_doubles_get_word_bit_lane_and_window_checks():
    ids = _ids("<f8")
    assert any(i.startswith("binary matrix rank M=256") for i in ids)
    assert any(i.startswith("linear complexity lanes minimum") and "window=fraction-tail" in i for i in ids)
    assert any(i.startswith("fraction grid") for i in ids)


def test_float32_has_no_fraction_tail_and_text_floats_no_windows():
    assert not any("fraction-tail" in i for i in _ids("<f4"))
    assert not any("window=" in i for i in _ids("text", 300_000))
    assert not any(i.startswith("fraction grid") for i in _ids("<u4"))


def test_derived_values_can_leave_windows_out():
    assert not any("window=" in i for i in _ids("<f8", windows=False))
