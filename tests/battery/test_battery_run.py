"""The battery end to end: plan scaling and selection, identical results for any worker count, JSON contract."""

import json

import pytest

from rngassay import api
from rngassay.errors import InputError
from rngassay.model import AUDIT_TIMES


def _strip(d):
    """A report without what may differ between two runs of the same input and options: timings, the audit
    trail's start and end times, and the worker count these tests vary (as used, and as the API call's option)."""
    d = dict(d)
    d.pop("elapsed_s")
    d["settings"] = {k: v for k, v in d["settings"].items() if k != "workers_used"}
    d["checks"] = [{k: v for k, v in c.items() if k != "seconds"} for c in d["checks"]]
    audit = {k: v for k, v in d["audit"].items() if k not in AUDIT_TIMES}
    assert set(d["audit"]) - set(audit) == set(AUDIT_TIMES)  # the times are there, and only they are dropped
    audit["options"] = {k: v for k, v in audit["options"].items() if k != "workers"}
    d["audit"] = audit
    return d


def test_plan_scales_with_budget_and_is_deterministic():
    small = api.assay(gen="pcg64", budget="4MiB", plan_only=True)
    large = api.assay(gen="pcg64", budget="64MiB", plan_only=True)
    assert small.segments == 4 and large.segments == 32  # R = clamp(budget / 2 MiB, 4, 64)
    assert small.to_list() == api.assay(gen="pcg64", budget="4MiB", plan_only=True).to_list()
    assert len(large.checks) >= len(small.checks)


def test_selection_by_family_and_key():
    plan = api.assay(gen="pcg64", budget="8MiB", plan_only=True, checks=["bits"])
    assert plan.checks and all(c.family == "bits" for c in plan.checks)
    plan = api.assay(gen="pcg64", budget="8MiB", plan_only=True, skip=["bits"])
    assert plan.checks and all(c.family != "bits" for c in plan.checks)
    with pytest.raises(InputError):
        api.assay(gen="pcg64", budget="8MiB", plan_only=True, checks=["no-such-check"])


def test_segments_stay_within_64_mib_and_block_checks_keep_their_fixed_sample():
    from rngassay.battery.plan import CHECK_CAP_BYTES, MAX_SEGMENT_BYTES

    for budget, segments in (("4GiB", 64), ("16GiB", 256), ("5000MiB", 79)):
        plan = api.assay(gen="pcg64", budget=budget, plan_only=True)
        assert plan.segments == segments and plan.segment_bytes <= MAX_SEGMENT_BYTES
        for c in plan.checks:
            if c.sample:  # a block check reads the same, whatever the budget
                assert c.bytes * c.replicates <= 8 << 20, c.id
            elif c.bytes * c.replicates > CHECK_CAP_BYTES:  # only the counting checks see whole segments
                assert c.bytes >= plan.segment_bytes - 64 and c.replicates <= plan.segments, c.id
            else:
                assert c.replicates <= 64, c.id
    small = {c.id: (c.bytes, c.replicates) for c in api.assay(gen="pcg64", budget="16MiB", plan_only=True).checks
             if c.sample}
    large = {c.id: (c.bytes, c.replicates) for c in api.assay(gen="pcg64", budget="16GiB", plan_only=True).checks
             if c.sample}
    assert small == large and len(small) == 6


def test_workers_do_not_change_results():
    kw = dict(gen="sfc64", seed=11, budget="2MiB", checks=["classic"])
    one = api.assay(workers=1, **kw).to_dict()
    two = api.assay(workers=2, **kw).to_dict()
    assert _strip(one) == _strip(two)


@pytest.mark.slow  # the whole battery three times on 8 MiB (~1 min)
def test_any_workers_give_the_same_report_on_the_whole_battery(tmp_path):
    """Every family, shared segments of a file: shared tables, Berlekamp-Massey over threads, fixed samples and
    the process pool must not change a single result (8 MiB: the lane linear complexity runs too)."""
    import numpy as np

    p = tmp_path / "s.bin"
    p.write_bytes(np.random.Generator(np.random.PCG64(9)).bytes(8 << 20))
    reps = [api.assay(str(p), workers=w).to_dict() for w in (1, 2, "auto")]
    assert reps[0]["settings"]["workers_used"] == 1 and reps[2]["settings"]["workers_used"] == 1
    assert any(c["id"].startswith("linear complexity lanes M=50000") for c in reps[0]["checks"])
    assert _strip(reps[0]) == _strip(reps[1]) == _strip(reps[2])


def test_shared_file_segments_and_json_contract(tmp_path):
    import numpy as np

    p = tmp_path / "s.bin"
    p.write_bytes(np.random.Generator(np.random.PCG64(5)).bytes(3 << 20))
    rep = api.assay(str(p), workers=1, checks=["classic"])
    d = json.loads(rep.to_json())
    for k in ("schema", "tool_version", "source", "budget_bytes", "verdict", "combined_p", "incomplete",
              "elapsed_s", "checks"):
        assert k in d
    assert d["schema"].startswith("rngassay-report/")
    assert set(d["source"]) >= {"kind", "name", "format", "bytes_read", "sha256"}
    assert d["source"]["bytes_read"] == 3 << 20  # a finite source is read once, shared by all checks
    for c in d["checks"]:
        assert set(c) >= {"id", "family", "params", "statistic", "p_value", "grade", "bytes", "replicates",
                          "second_level"}
        assert 0 < c["p_value"] <= 1


@pytest.mark.slow  # power: the whole battery twice on 4 MiB (~25 s)
def test_flawed_generator_fails_and_sound_passes():
    # fixed seeds; the flawed generator's failure is at p < 1e-10, far from any chance effect
    bad = api.assay(gen="lcg32", seed=1, budget="4MiB", workers=1)
    assert bad.verdict == "fail" and bad.exit_code() == 1
    assert min(c.p_value for c in bad.checks) < 1e-10
    good = api.assay(gen="pcg64", seed=1, budget="4MiB", workers=1)
    assert good.verdict in ("pass", "notable")
