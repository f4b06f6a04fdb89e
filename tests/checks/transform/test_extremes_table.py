"""The tail counts and the exact-endpoint count from the shared table of uniform extremes (one pass) against
their function forms, which their own tests hold against the exact binomial and Poisson laws (scipy.stats)."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from rngassay.checks.transform.tails import (EXTREMES, check_exact_endpoints, check_tail_count,
                                             endpoints_from_table, tail_from_table)


def _same(a, b):
    assert (a.name, a.statistic, a.p_value, a.p_left, a.null, a.n, a.details, a.pooled) == (
        b.name, b.statistic, b.p_value, b.p_left, b.null, b.n, b.details, b.pooled)


@settings(max_examples=60, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), size=st.integers(1, 200_000), grid=st.sampled_from([8, 16, 20, 32, 53]),
       claimed=st.sampled_from([16, 24, 32, 53]), zeros=st.integers(0, 5), ones=st.integers(0, 3),
       near=st.integers(0, 30))
def test_table_forms_equal_function_forms(seed, size, grid, claimed, zeros, ones, near):
    rng = np.random.default_rng(seed)
    u = np.floor(rng.random(size) * 2.0**grid) / 2.0**grid
    # values exactly at and around the thresholds, exact 0s and 1s (PIT values may be closed), in random places
    edge = np.array([1e-5, 2e-5, 1e-7, 1 - 1e-5, 1 - 2e-5, np.nextafter(2e-5, 0), np.nextafter(1 - 2e-5, 1)])
    extra = np.concatenate([np.zeros(zeros), np.ones(ones), rng.choice(edge, near), rng.random(near) * 3e-5])
    u[rng.integers(0, size, extra.size)] = extra if size else extra[:0]
    table = EXTREMES.make(u, u.size, "uniforms")
    assert table is not None
    for q in (1e-5, 1e-7):
        for side in ("lower", "upper"):
            params = {"n": u.size, "target": "normal", "q": q, "side": side, "resolution_bits": claimed}
            _same(tail_from_table(table, params), check_tail_count(u, **params))
    for closed in (False, True):
        params = {"n": u.size, "resolution_bits": claimed, "closed": closed}
        _same(endpoints_from_table(table, params), check_exact_endpoints(u, **params))


def test_inference_and_strange_data_are_left_to_the_function_forms():
    u = np.random.default_rng(1).random(10_000)
    table = EXTREMES.make(u, u.size, "uniforms")
    # no resolution given: the function form infers it from the data
    assert tail_from_table(table, {"n": u.size, "q": 1e-5, "side": "lower", "resolution_bits": None}) is None
    assert endpoints_from_table(table, {"n": u.size, "resolution_bits": None}) is None
    # a tail level beyond the table's: the function form
    assert tail_from_table(table, {"n": u.size, "q": 1e-3, "side": "lower", "resolution_bits": 53}) is None
    # many values near a tail (far from the null), or a NaN: no table, the function forms run
    crowded = u.copy()
    crowded[:5000] = 0.0
    assert EXTREMES.make(crowded, crowded.size, "uniforms") is None
    bad = u.copy()
    bad[7] = np.nan
    assert EXTREMES.make(bad, bad.size, "uniforms") is None
    assert EXTREMES.make(u, u.size, "bits") is None
