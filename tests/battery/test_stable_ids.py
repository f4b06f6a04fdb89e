"""Check identifiers do not change with the budget (the design's convention: sample sizes stay out of the id,
so that a ``--checks`` selector in a CI job and a report diff keep working when the budget changes)."""

from __future__ import annotations

import pytest

from rngassay.battery.plan import CHECK_CAP_BYTES, make_plan
from rngassay.checks.catalog import load_all
from rngassay.checks.registry import SIZE_KEYS, stable_params
from rngassay.intake.formats import parse_format

BUDGETS = [64 << 10, 256 << 10, 1 << 20, 4 << 20, 16 << 20, 64 << 20, 256 << 20, 1 << 30, 16 << 30]


def _plans(fmt_name: str):
    fmt = parse_format(fmt_name)
    return [(b, make_plan(fmt, b)) for b in BUDGETS]


@pytest.mark.parametrize("fmt_name", ["u1", "<u4", "<u8", "<f4", "<f8"])
def test_ids_unique_and_kept_as_the_budget_grows(fmt_name):
    registry = load_all()
    prev: set[str] | None = None
    for budget, plan in _plans(fmt_name):
        ids = [c.id for c in plan.checks]
        assert len(ids) == len(set(ids)), (budget, sorted({i for i in ids if ids.count(i) > 1}))
        for c in plan.checks:
            spec = registry[c.key]
            shown, sized = stable_params(spec, c.params)
            assert not set(shown) & set(SIZE_KEYS)
            assert all(f"{k}=" in c.sized for k in sized), (c.id, c.sized)
        now = set(ids)
        if prev is not None:
            gone = prev - now
            # the only way a check seen at a smaller budget is not seen at a larger one: a capped check (not
            # cheap, no fixed sample) gets less data per replicate once the budget is above CHECK_CAP_BYTES, and
            # a variant that needs more is not proposed
            for cid in gone:
                key = next(c.key for c in prev_plan.checks if c.id == cid)
                spec = registry[key]
                assert budget > CHECK_CAP_BYTES and not spec.cheap and not spec.sample, (budget, cid)
        prev, prev_plan = now, plan


def test_sized_parameters_are_listed_in_the_plan():
    plan = make_plan(parse_format("u1"), 16 << 20)
    gap = next(c for c in plan.checks if c.id == "gap a=0 b=0.5")
    assert gap.sized == f"t={gap.params['t']}"
    text = plan.describe()
    line = next(ln for ln in text.splitlines() if ln.strip().startswith("gap a=0 b=0.5 "))
    assert line.rstrip().endswith(f"t={gap.params['t']}")
    eq = {c.id: c for c in plan.checks if c.key == "equidistribution"}
    assert set(eq) == {"equidistribution d=16", "equidistribution d=fine"}
    assert eq["equidistribution d=fine"].sized == f"d={eq['equidistribution d=fine'].params['d']}"
    assert eq["equidistribution d=16"].sized == ""


def test_a_selector_written_at_one_budget_selects_at_another():
    small = make_plan(parse_format("u1"), 1 << 20, checks=["serial d=2"])
    big = make_plan(parse_format("u1"), 64 << 20, checks=["serial d=2"])
    assert [c.id for c in small.checks] == [c.id for c in big.checks] == ["serial d=2", "serial d=2 window=reversed"]
    assert small.checks[0].params["v"] != big.checks[0].params["v"]  # the sized parameter did change
