"""Text logs are examined whole (wave 2a item 1), and categorical logs are judged on all values at once.

The dice logs are made with numpy's default_rng and fixed seeds, so every outcome here is deterministic.
The reference figures are computed in the test with scipy.stats (chi-square on the whole file), the
outside reference the battery's pooled result must match.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from rngassay import api

N = 300_000


def _write(path, values):
    np.savetxt(path, values, fmt="%d")
    return str(path)


@pytest.fixture(scope="module")
def dice(tmp_path_factory):
    d = tmp_path_factory.mktemp("dice")
    r = np.random.default_rng(11)
    p = np.full(6, 1 / 6)
    p[5] *= 1.03
    p /= p.sum()
    loaded = r.choice(np.arange(1, 7), size=N, p=p)
    fair = r.integers(1, 7, size=N)
    # a die that redraws a repeat of the previous face 5 % of the time
    x = r.integers(1, 7, size=N)
    redraw = r.random(N) < 0.05
    fresh = r.integers(1, 7, size=N)
    for i in range(1, N):  # small, deterministic; builds the dependent sequence
        if x[i] == x[i - 1] and redraw[i]:
            x[i] = fresh[i]
    return {"loaded": (_write(d / "loaded.txt", loaded), loaded), "fair": (_write(d / "fair.txt", fair), fair),
            "sticky": (_write(d / "sticky.txt", x), x)}


def test_plan_covers_every_value_of_a_300000_line_log(dice):
    plan = api.assay(dice["fair"][0], fmt="text", value_range="1:6", plan_only=True)
    assert plan.budget_bytes == N  # for text the budget counts values
    for c in plan.checks:
        assert c.bytes * c.replicates == N, c.id


def test_loaded_die_fails_with_the_whole_file_chi_square(dice):
    path, vals = dice["loaded"]
    rep = api.assay(path, fmt="text", value_range="1:6")
    assert rep.verdict == "fail"
    freq = next(c for c in rep.checks if c.key == "categorical frequency")
    # the pooled table is the whole file's table: same statistic as scipy's chi-square on all 300,000 rolls
    whole = stats.chisquare(np.bincount(vals - 1, minlength=6))
    assert freq.second_level["pooled"]["statistic"] == pytest.approx(whole.statistic, rel=1e-9)
    assert freq.grade == "fail"
    # summing the four replicate chi-squares instead would be weaker (the measurement)
    parts = np.array_split(vals, 4)
    summed = sum(stats.chisquare(np.bincount(q - 1, minlength=6)).statistic for q in parts)
    assert whole.pvalue < stats.chi2.sf(summed, 4 * 5)


def test_sticky_die_fails_on_serial_pairs(dice):
    rep = api.assay(dice["sticky"][0], fmt="text", value_range="1:6")
    assert rep.verdict == "fail"
    assert any(c.key == "categorical serial" and c.grade == "fail" for c in rep.checks)


def test_fair_die_passes(dice):
    rep = api.assay(dice["fair"][0], fmt="text", value_range="1:6")
    assert rep.verdict == "pass"


def test_explicit_text_budget_counts_values(dice, tmp_path):
    plan = api.assay(dice["fair"][0], fmt="text", value_range="1:6", budget=1000, plan_only=True)
    assert plan.budget_bytes == 1000
    from rngassay.errors import InputError

    with pytest.raises(InputError, match="values needed"):
        api.assay(dice["fair"][0], fmt="text", value_range="1:6", budget=N + 1)


@pytest.mark.slow
def test_honest_uniforms_printed_with_six_decimals_pass(tmp_path):
    # 2,000,000 numpy random() values printed with %.6f (a 10^-6 grid): the collision check used to fail them
    # (p ~ 2e-8) by cutting [0, 1) into 2^20 cells that do not divide the grid. Fixed seed (7: one value
    # rounds to "1.000000", which is read as the grid point 0).
    u = np.random.default_rng(7).random(2_000_000)
    path = tmp_path / "u6.txt"
    np.savetxt(path, u, fmt="%.6f")
    assert "1.000000" in path.read_text()
    rep = api.assay(str(path), fmt="text")
    assert rep.source["format"] == "text floats on a 10^-6 grid"
    assert "1 value printed as 1.0" in rep.settings["value grid"]
    assert rep.verdict == "pass", [(c.id, c.p_value) for c in rep.checks if c.grade != "pass"]


@pytest.mark.slow
def test_a_coarse_float_grid_fails_once(tmp_path):
    # float32 values stored as <f8: only the fraction grid check may fail; bit views and resolution-aware
    # checks take the 24 bits the values carry (fixed seed)
    path = tmp_path / "f32.f8"
    np.random.default_rng(3).random(1 << 20, dtype=np.float32).astype("<f8").tofile(path)
    rep = api.assay(str(path), fmt="<f8")
    failed = [c.key for c in rep.checks if c.grade == "fail"]
    assert failed == ["fraction grid"]
    assert any("2^-24 grid" in n for n in rep.notes)
