"""The budget is the total read, whatever the source: checks share segments for generators, commands and
Python factories as for files."""

from __future__ import annotations

import sys

from rngassay import api
from rngassay.battery.plan import make_plan
from rngassay.intake.formats import parse_format

MiB = 1 << 20


def test_a_generator_run_reads_its_budget_and_no_more():
    rep = api.assay(gen="pcg64", seed=1, budget="1MiB", workers=1)
    assert rep.source["bytes_read"] == MiB
    assert not rep.incomplete and len(rep.checks) > 50


def test_a_finite_command_of_exactly_the_budget_is_enough(tmp_path):
    # before, every check read fresh data and this plan read about 60 times the budget: the command ran dry
    cmd = f"{sys.executable} -c \"import sys, numpy as np; sys.stdout.buffer.write(np.random.default_rng(5).bytes({MiB}))\""
    rep = api.assay(command=cmd, shell=True, budget="1MiB", workers=1)
    assert rep.source["bytes_read"] == MiB and not rep.incomplete


def test_plan_states_the_total_and_each_share():
    plan = make_plan(parse_format("u1"), 4 * MiB)
    assert plan.bytes_total() == 4 * MiB
    text = plan.describe()
    assert f"reads {4 * MiB} bytes in all (4 MiB)" in text
    for c in plan.checks:
        assert 0 < plan.share(c) <= 1
        assert c.bytes <= plan.segment_bytes and c.replicates <= plan.segments
    full = [c for c in plan.checks if c.bytes == plan.segment_bytes and c.replicates == plan.segments]
    assert full and all(plan.share(c) == 1 for c in full)
    row = next(ln for ln in text.splitlines() if ln.strip().startswith("byte frequency "))
    assert " 100% " in row + " "
