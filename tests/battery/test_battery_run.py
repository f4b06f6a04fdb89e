"""The battery end to end: plan scaling and selection, identical results for any worker count, JSON contract."""

import json

import pytest

from rngassay import api
from rngassay.errors import InputError


def _strip(d):
    d = dict(d)
    d.pop("elapsed_s")
    d["settings"] = {k: v for k, v in d["settings"].items() if k != "workers_used"}
    d["checks"] = [{k: v for k, v in c.items() if k != "seconds"} for c in d["checks"]]
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


def test_workers_do_not_change_results():
    kw = dict(gen="sfc64", seed=11, budget="2MiB", checks=["classic"])
    one = api.assay(workers=1, **kw).to_dict()
    two = api.assay(workers=2, **kw).to_dict()
    assert _strip(one) == _strip(two)


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
    assert good.verdict in ("pass", "borderline")
