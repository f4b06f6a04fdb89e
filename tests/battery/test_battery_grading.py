"""Grading rules: second level, pooling, Holm, the middle grade, incomplete runs."""

import json
import math

import numpy as np
import pytest
from scipy import stats as sps

from rngassay import api
from rngassay.intake import memory as intake_memory
from rngassay import stats as ra_stats
from rngassay.battery import grade as G
from rngassay.battery.plan import PlannedCheck
from rngassay.battery.run import Outcome
from rngassay.checks import registry as reg
from rngassay.checks.registry import CheckSpec
from rngassay.checks.result import CheckResult
from rngassay.intake.sources import RawSource


def test_sidak_min_exact_formula():
    # P(min of R iid U(0,1) <= x) = 1 - (1 - x)^R (exact formula)
    for x, R in [(0.01, 8), (1e-12, 32), (0.5, 4)]:
        assert ra_stats.sidak_min([x] + [0.9] * (R - 1)) == pytest.approx(1 - (1 - x) ** R, rel=1e-12)


def test_holm_grades_against_hand_computation():
    # Holm (1979): adjusted p_(i) = max_{j<=i} (m - j + 1) p_(j)
    ps = [0.0001, 0.004, 0.03, 0.5]
    grades, adj = G.holm_grades(ps, alpha=0.001)
    assert adj == pytest.approx([0.0004, 0.012, 0.06, 0.5])
    assert grades == ["fail", "pass", "pass", "pass"]
    grades, adj = G.holm_grades([0.0009, 0.5], alpha=0.001)
    assert grades == ["notable", "pass"]  # 2 * 0.0009 = 0.0018 in [alpha, 10 alpha)


def _outcome(key, results):
    pc = PlannedCheck(key, key, "classic", "bytes", {}, 1, 1, len(results))
    return Outcome(pc, [[r] for r in results])


@pytest.fixture
def fake_registry(monkeypatch):
    saved = dict(reg.REGISTRY)
    added = {}

    def add(key, func, kind="continuous", both=False, need=8, view="bytes"):
        spec = CheckSpec(key=key, family="classic", title=key, view=view, kind=kind, func=func,
                         values_needed=lambda p: need, default_params=lambda n: [{}] if n >= need else [],
                         both_tails=both)
        reg.REGISTRY[key] = spec
        added[key] = spec
        return spec

    import rngassay.checks.catalog as cat

    monkeypatch.setattr(cat, "load_all", lambda: reg.REGISTRY)
    import rngassay.battery.plan as plan_mod
    import rngassay.battery.run as run_mod
    import rngassay.battery.grade as grade_mod
    import rngassay.battery.battery as bat_mod

    for m in (plan_mod, run_mod, grade_mod, bat_mod):
        monkeypatch.setattr(m, "load_all", lambda: {k: v for k, v in reg.REGISTRY.items() if k in added})
    yield add
    reg.REGISTRY.clear()
    reg.REGISTRY.update(saved)


def test_poisson_pooling_sums_counts(fake_registry):
    fake_registry("pois", None, kind="discrete", both=True)
    obs, mus = [3, 0, 5, 2], [2.0, 2.0, 2.0, 2.0]
    results = [CheckResult("pois", o, sps.poisson.sf(o - 1, m), "poisson", "discrete", sps.poisson.cdf(o, m),
                           pooled={"observed": o, "mu": m}) for o, m in zip(obs, mus)]
    r = G.second_level(_outcome("pois", results))
    pooled = r.second_level["pooled"]
    # sum of independent Poissons is Poisson(sum of means) (exact; scipy.stats as reference)
    assert pooled["statistic"] == 10
    assert pooled["p_right"] == pytest.approx(sps.poisson.sf(9, 8.0), rel=1e-10)
    assert pooled["p_left"] == pytest.approx(sps.poisson.cdf(10, 8.0), rel=1e-10)
    assert "uniformity" not in r.second_level  # never a uniformity test on discrete p-values


def test_an_atom_at_one_does_not_fail_a_check(fake_registry):
    # lattice statistics give p = 1 exactly with real probability (e.g. monobit with S_n = 0); one such
    # replicate among ordinary ones must not look like evidence (it did under Anderson-Darling)
    fake_registry("cont", None)
    ps = [1.0, 0.3, 0.5, 0.7]
    r = G.second_level(_outcome("cont", [CheckResult("cont", 0.0, p, "u") for p in ps]))
    assert r.p_value > 0.1


def test_continuous_second_level_parts(fake_registry):
    fake_registry("cont", None)
    ps = [0.2, 0.4, 0.6, 0.8, 0.005, 0.3, 0.7, 0.9]
    results = [CheckResult("cont", 0.0, p, "u") for p in ps]
    r = G.second_level(_outcome("cont", results))
    sl = r.second_level
    assert sl["proportion_below"]["count"] == 1
    assert sl["proportion_below"]["p_value"] == pytest.approx(sps.binom.sf(0, 8, 0.01), rel=1e-10)
    # Kolmogorov-Smirnov of the replicate p-values against U(0, 1) (scipy.stats as the reference)
    ref = sps.kstest(ps, "uniform")
    assert sl["uniformity"]["method"] == "kolmogorov-smirnov"
    assert sl["uniformity"]["statistic"] == pytest.approx(ref.statistic, rel=1e-12)
    assert sl["uniformity"]["p_value"] == pytest.approx(ref.pvalue, rel=1e-6)
    assert r.p_value == pytest.approx(min(1.0, 3 * min(sl["uniformity"]["p_value"], sl["proportion_below"]["p_value"],
                                                       sl["min_replicate"]["p_value"])))


class ByteSource(RawSource):
    kind = "file"

    def __init__(self, data: bytes, interrupt_after: int | None = None):
        super().__init__("memory")
        self.data, self.pos, self.interrupt_after = data, 0, interrupt_after

    def size_hint(self):
        return len(self.data)

    def read(self, n):
        if self.interrupt_after is not None and self.pos >= self.interrupt_after:
            raise KeyboardInterrupt
        out = self.data[self.pos : self.pos + n]
        self.pos += len(out)
        return out


def _first_byte_check(data, **params):
    # p = 0.001 when the segment starts with 0x00 (round one below), 0.5 otherwise
    p = 0.001 if data[0] == 0 else 0.5
    return CheckResult("firstbyte", float(data[0]), p, "test", "discrete")


def test_notable_is_a_calibrated_middle_grade_with_no_retest(fake_registry):
    fake_registry("firstbyte", _first_byte_check, kind="discrete", need=8)
    seg = 1 << 20
    data = bytes(seg * 4) + b"\xff" * (seg * 4)  # the budget: zeros; more data after it
    rep = api.assay(ByteSource(data), budget=4 * seg, workers=1)
    c = rep.checks[0]
    # Sidak over 4 replicates of p=0.001 gives 0.004: below 10 alpha, not below alpha at alpha=0.001
    assert c.p_value == pytest.approx(1 - 0.999**4) and c.grade == "notable" and rep.verdict == "notable"
    assert len(c.rounds) == 1  # no retest on the data after the budget ...
    assert rep.source["bytes_read"] == 4 * seg  # ... and nothing read beyond the budget
    assert rep.exit_code() == 0 and rep.exit_code(strict=True) == 1


def test_interrupted_run_is_marked_incomplete(fake_registry):
    calls = []

    def check(data, **params):
        calls.append(1)
        if len(calls) == 3:
            raise KeyboardInterrupt  # Ctrl-C while the third replicate runs
        return CheckResult("firstbyte", 0.0, 0.5, "test", "discrete")

    fake_registry("firstbyte", check, kind="discrete", need=8)
    seg = 1 << 20
    rep = api.assay(ByteSource(b"\xff" * (seg * 8)), budget=8 * seg, workers=1)
    assert rep.incomplete
    assert rep.checks[0].replicates == 2  # what finished is kept
    d = json.loads(rep.to_json())
    assert d["incomplete"] is True and d["checks"][0]["replicates"] == 2
    assert any("interrupted" in n for n in d["notes"])


def test_bad_value_mid_run_reports_partial_then_error(fake_registry, monkeypatch):
    import rngassay.api as api_mod
    from rngassay.errors import InputError

    fake_registry("firstbyte", lambda d, **p: CheckResult("firstbyte", 0.0, 0.5, "t", "discrete"), kind="discrete", need=8,
                  view="uniforms")
    monkeypatch.setattr(intake_memory, "BUFFER_LIMIT", 0)  # stream the file, as for a large one
    seg = 1 << 20
    good = np.full(seg * 2 // 8, 0.5)
    bad = np.full(seg * 2 // 8, 0.5)
    bad[5] = np.nan
    data = np.concatenate([good, bad]).astype("<f8").tobytes()
    with pytest.raises(InputError) as ei:
        api.assay(ByteSource(data), fmt="<f8", workers=1)
    assert f"byte offset {seg * 2 + 40}" in ei.value.line()
    # asked for, the report of what finished comes back as a result (marked incomplete, with the error)
    part = api.assay(ByteSource(data), fmt="<f8", workers=1, partial=True)
    assert part.incomplete and part.checks[0].replicates == 2
    assert f"byte offset {seg * 2 + 40}" in part.input_error.line()


@pytest.mark.parametrize("alpha", [0.0, -0.1, 0.1, 0.5, 1.0])
def test_alpha_outside_the_graded_range_is_one_clear_error(run_cli, alpha):
    # at alpha >= 0.1 the notable band (10 alpha) would cover every p-value below 1
    r = run_cli("test", "--gen", "pcg64", "--budget", "64KiB", "--alpha", str(alpha))
    assert r.code == 2 and len(r.err.strip().splitlines()) == 1 and "between 0 and 0.1" in r.err
