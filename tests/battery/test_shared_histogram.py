"""The runner computes byte frequency, monobit and poker (m = 4, 8) from one shared byte histogram per view and
segment; the results must be exactly those of the checks' function forms (which their own tests hold against
outside sources)."""

from __future__ import annotations

import numpy as np
import pytest

from rngassay.battery.plan import make_plan
from rngassay.battery.run import ViewCache, call_check
from rngassay.checks.catalog import load_all
from rngassay.intake.formats import parse_format

SHARED = ("byte frequency", "monobit frequency", "poker bit symbols")


@pytest.mark.parametrize("fmt_name, seed", [("u1", 1), ("<u4", 2), (">u8", 3)])
def test_shared_histogram_results_equal_the_function_forms(fmt_name, seed):
    fmt = parse_format(fmt_name)
    plan = make_plan(fmt, 4 << 20, shared=True)
    raw = np.random.default_rng(seed).integers(0, 256, 1 << 20, dtype=np.uint8)
    vals = raw.view(fmt.dtype) if fmt.itemsize > 1 else raw
    cache = ViewCache(vals, fmt)
    reg = load_all()
    seen = 0
    for pc in plan.checks:
        if pc.key not in SHARED:
            continue
        got = call_check(pc, cache, reg[pc.key])[0]
        data = cache.get("bytes")[: pc.values] if pc.view == "bytes" else cache.get("bits")[0][: -(-pc.values // 8)]
        ref = reg[pc.key].func(data, **pc.params)
        assert (got.statistic, got.p_value, got.p_left, got.details) == (ref.statistic, ref.p_value, ref.p_left,
                                                                        ref.details), pc.id
        seen += 1
    assert seen == 4
    assert {k for k, spec in reg.items() if spec.from_byte_counts is not None} == set(SHARED)
    hists = [k for k in cache._cache if k[0] == "byte counts"]
    assert len(hists) == 2  # one histogram for the bytes view, one for the bits view: four checks, two passes
