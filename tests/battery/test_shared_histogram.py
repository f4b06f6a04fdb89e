"""The runner computes byte frequency, monobit and poker (m = 4, 8) from one shared byte histogram per view and
segment, and the serial test (orders 1, 2) and approximate entropy from one table of cyclic 16-bit patterns; the
results must be exactly those of the checks' function forms (which their own tests hold against outside
sources)."""

from __future__ import annotations

import numpy as np
import pytest

from rngassay.battery.plan import make_plan
from rngassay.battery.run import ViewCache, call_check
from rngassay.checks.catalog import load_all
from rngassay.intake.formats import parse_format

SHARED = {"byte frequency": "byte counts", "monobit frequency": "byte counts", "poker bit symbols": "byte counts",
          "serial psi2": "cyclic 16-bit patterns", "approximate entropy": "cyclic 16-bit patterns",
          "equidistribution": "uniform bins (2^16)", "random excursions": "walk cycles",
          "random excursions variant": "walk cycles", "tail count": "uniform extremes",
          "exact endpoints": "uniform extremes"}


@pytest.mark.parametrize("fmt_name, seed", [("u1", 1), ("<u4", 2), (">u8", 3)])
def test_shared_histogram_results_equal_the_function_forms(fmt_name, seed):
    fmt = parse_format(fmt_name)
    plan = make_plan(fmt, 4 << 20)
    raw = np.random.default_rng(seed).integers(0, 256, 1 << 20, dtype=np.uint8)
    vals = raw.view(fmt.dtype) if fmt.itemsize > 1 else raw
    cache = ViewCache(vals, fmt)
    reg = load_all()
    seen = 0
    for pc in plan.checks:
        if pc.key not in SHARED:
            continue
        gots = call_check(pc, cache, reg[pc.key])
        data = (cache.get("bits")[0][: -(-pc.values // 8)] if pc.view == "bits" else cache.get(pc.view)[: pc.values])
        refs = reg[pc.key].func(data, **pc.params)
        refs = refs if isinstance(refs, list) else [refs]
        assert len(gots) == len(refs) >= 1, pc.id
        for got, ref in zip(gots, refs):
            assert (got.name, got.statistic, got.p_value, got.p_left, got.details) == (
                ref.name, ref.statistic, ref.p_value, ref.p_left, ref.details), pc.id
            for k in ("counts", "n", "m", "order"):  # what the second level pools
                if ref.pooled and k in ref.pooled:
                    assert np.array_equal(got.pooled[k], ref.pooled[k]), (pc.id, k)
        seen += 1
    # byte frequency, monobit, poker m=4 and 8, serial orders 1 and 2, approximate entropy, equidistribution d=16
    # and the fine d, random excursions and its variant, the tail counts at q = 1e-5 (both sides), exact endpoints
    assert seen == 14
    assert {k: spec.table.name for k, spec in reg.items() if spec.table is not None} == SHARED
    tables = sorted(k[1:3] for k in cache._cache if k[0] == "table")
    # one byte histogram, one cyclic table, one table of uniform bins, one of uniform extremes, one walk: fourteen
    # checks, five passes
    # the bits view of whole words holds the bytes view's bytes (reordered within words): one byte histogram
    assert tables == [("byte counts", "bytes"), ("cyclic 16-bit patterns", "bits"),
                      ("uniform bins (2^16)", "uniforms"), ("uniform extremes", "uniforms"), ("walk cycles", "bits")]
