"""Growth to a decision (--grow-to): stages, alpha spending, the smallest failing size, the family-wise error."""

from __future__ import annotations

import json
import math
import textwrap

import pytest
from scipy import stats

from rngassay import api
from rngassay.battery.growth import MAX_STAGES, spent, stage_alphas, stage_sizes
from rngassay.errors import InputError

KiB, MiB = 1 << 10, 1 << 20

BIASED = textwrap.dedent("""
    import numpy as np
    def make(seed=None):
        rng = np.random.default_rng(seed)
        def draw(n):  # bits that are 1 with probability 0.5 + 1e-3 (a slight bias: found only with enough data)
            return np.packbits(rng.random(8 * n) < 0.501).tobytes()
        return draw
""")


def test_spending_function_and_stage_levels():
    # Lan and DeMets (1983), Pocock type: A(t) = alpha ln(1 + (e - 1) t); A(0) = 0 and A(1) = alpha (exact formula)
    assert spent(0.0, 0.001) == 0.0 and spent(1.0, 0.001) == pytest.approx(0.001, rel=1e-15)
    sizes = stage_sizes(MiB, 8 * MiB)
    assert sizes == [MiB, 2 * MiB, 4 * MiB, 8 * MiB]
    a = stage_alphas(sizes, 0.001)
    assert math.fsum(a) == pytest.approx(0.001, rel=1e-12)  # the levels spend exactly alpha in all
    t = [1 / 15, 3 / 15, 7 / 15, 1.0]  # information fractions of 1, 2, 4, 8 MiB
    expect = [0.001 * math.log1p((math.e - 1) * x) for x in t]
    assert a == pytest.approx([expect[0]] + [expect[i] - expect[i - 1] for i in range(1, 4)], rel=1e-12)
    assert all(x > 0 for x in a) and a == sorted(a)  # doubling stages get growing levels


def test_bad_growth_limits_are_one_clear_error():
    with pytest.raises(InputError, match="less than twice the budget"):
        stage_sizes(MiB, MiB + 1)
    with pytest.raises(InputError, match=f"at most {MAX_STAGES} stages"):
        stage_sizes(64 * KiB, 1 << 40)


def test_growth_stops_at_the_first_failing_stage_and_names_the_size(tmp_path):
    g = tmp_path / "biased.py"
    g.write_text(BIASED)
    rep = api.assay(python=f"{g}:make", seed=7, budget="64KiB", grow_to="16MiB", checks=["monobit"], workers=1)
    gr = rep.growth
    assert rep.verdict == "fail" and gr["stages"][-1]["failed"] == ["monobit frequency"]
    k = len(gr["stages"])
    assert 2 <= k < len(gr["planned_sizes"])  # not at the first stage; and growth stopped there
    assert all(s["verdict"] == "pass" for s in gr["stages"][:-1])
    size = gr["planned_sizes"][k - 1]
    assert gr["first_failed"] == {"monobit frequency": size}
    c = rep.checks[0]
    assert len(c.rounds) == k and c.bytes == sum(gr["planned_sizes"][:k])  # each stage is a round of the check
    assert rep.source["bytes_read"] == sum(gr["planned_sizes"][:k]) == rep.budget_bytes  # fresh data per stage
    assert any(n.startswith(f"monobit frequency: first failed at") for n in rep.notes)
    assert json.loads(rep.to_json())["growth"]["first_failed"] == {"monobit frequency": size}
    from rngassay.report.html import render_html
    from rngassay.report.terminal import render

    page = render_html(rep)
    assert "<h2>Growth to a decision</h2>" in page and f"stage {k}: " in page and "Lan and DeMets" in page
    assert f"growth       stopped at stage {k}" in render(rep)


def test_growth_from_the_command_line(run_cli, tmp_path):
    r = run_cli("test", "--gen", "pcg64", "--budget", "64KiB", "--grow-to", "256KiB", "--plan-only")
    assert r.code == 0 and "growth: 3 stages" in r.out and "Lan and DeMets" in r.out
    j = tmp_path / "g.json"
    r = run_cli("test", "--gen", "pcg64", "--seed", "2", "--budget", "64KiB", "--grow-to", "256KiB",
                "--checks", "byte frequency", "--workers", "1", "--json", j)
    assert r.code == 0 and "growth       stage 3: 256 KiB" in r.out and "all 3 stages passed" in r.out
    assert json.loads(j.read_text())["source"]["bytes_read"] == (64 + 128 + 256) * KiB
    for bad in (["--grow-to", "100KiB"], ["--grow-to", "lots"]):
        r = run_cli("test", "--gen", "pcg64", "--budget", "64KiB", *bad)
        assert r.code == 2 and len(r.err.strip().splitlines()) == 1, r.err
    f = tmp_path / "short.bin"
    f.write_bytes(bytes(200 * KiB))
    r = run_cli("test", f, "--budget", "64KiB", "--grow-to", "256KiB")  # the stages need 448 KiB
    assert r.code == 2 and "shorter" in r.err and len(r.err.strip().splitlines()) == 1


@pytest.mark.slow  # 200 sound runs of three stages each (~2 min)
def test_family_wise_error_over_all_stages_is_alpha():
    # 200 sound sources (pcg64, seeds 1..200) grown from 64 KiB to 256 KiB at alpha = 0.05 on a quick selection of
    # checks; a run fails when any check fails at any stage. The count must be consistent with a rate of at most
    # alpha: exact binomial upper tail (scipy.stats.binom) >= 0.01. Alpha spending is what keeps it there: each
    # stage at the full alpha would fail up to about three times as often.
    alpha, n = 0.05, 200
    sel = ["monobit", "byte frequency", "gap", "serial", "runs up", "poker", "runs of bits", "cumulative sums"]
    fails = unspent = 0
    for seed in range(1, n + 1):
        rep = api.assay(gen="pcg64", seed=seed, budget="64KiB", grow_to="256KiB", checks=sel, alpha=alpha,
                        workers=1)
        k = len(rep.growth["stages"])
        assert not rep.incomplete and k in (1, 2, 3)
        fails += rep.verdict == "fail"
        # the same stages judged without spending (Bonferroni on each stage's smallest p at the full alpha)
        m = len(rep.checks)
        unspent += any(min(c.rounds[j].p_value for c in rep.checks if len(c.rounds) > j) * m <= alpha
                       for j in range(k))
    assert stats.binom.sf(fails - 1, n, alpha) >= 0.01, fails  # measured here: 5 of 200
    assert unspent > 2 * fails, (unspent, fails)  # measured here: 22 of 200 (11 %) without spending


DYING = textwrap.dedent("""
    import numpy as np
    def make(seed=None):
        rng = np.random.default_rng(seed)
        got = [0]
        def draw(n):
            got[0] += n
            if got[0] > 70 * 1024:  # the source dies early in the second stage
                raise OSError("device gone")
            return rng.bytes(n)
        return draw
""")


def test_bad_data_in_a_later_stage_keeps_the_stages_before(tmp_path):
    g = tmp_path / "dying.py"
    g.write_text(DYING)
    rep = api.assay(python=f"{g}:make", seed=1, budget="64KiB", grow_to="256KiB", checks=["byte frequency"],
                    workers=1, partial=True)
    assert rep.incomplete and rep.input_error is not None and "device gone" in rep.input_error.line()
    assert len(rep.growth["stages"]) == 1 and rep.checks and rep.checks[0].bytes == 64 * KiB
    assert any("stage 2 stopped by bad input" in n for n in rep.notes)
    with pytest.raises(InputError, match="device gone"):
        api.assay(python=f"{g}:make", seed=1, budget="64KiB", grow_to="256KiB", checks=["byte frequency"], workers=1)
