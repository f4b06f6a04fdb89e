"""`rngassay fit --odds` finds a 20 % drift of a 1-in-100 outcome in 100,000 draws (wave 2a item 1).

Fixed seeds (numpy default_rng), so the outcome is deterministic. The size of the effect is checked against
scipy.stats.binomtest on the whole log (outside reference): the drifted tier's count is ~6 standard
deviations high, so the run must fail; the undrifted log must pass.
"""

import numpy as np
import pytest
from click.testing import CliRunner
from scipy import stats

from rngassay.cli import cli
from rngassay.cli.fit import register_cli

if "fit" not in cli.commands:
    register_cli(cli)

P = np.array([0.01, 0.09, 0.2, 0.3, 0.4])


@pytest.fixture(scope="module")
def logs(tmp_path_factory):
    d = tmp_path_factory.mktemp("odds")
    (d / "odds.csv").write_text("outcome,probability\n" + "".join(f"tier{i},{q}\n" for i, q in enumerate(P)))
    q = P.copy()
    q[0] *= 1.2  # the 1-in-100 tier drifts by 20 %
    q[4] -= P[0] * 0.2
    r = np.random.default_rng(5)
    drift = r.choice(5, size=100_000, p=q)
    sound = r.choice(5, size=100_000, p=P)
    for name, x in (("drift.txt", drift), ("sound.txt", sound)):
        (d / name).write_text("\n".join(f"tier{i}" for i in x) + "\n")
    return d, drift


def test_drifted_odds_fail_and_sound_odds_pass(logs):
    d, drift = logs
    ref = stats.binomtest(int(np.sum(drift == 0)), drift.size, P[0])
    assert ref.pvalue < 1e-6  # the effect is there in the whole log
    runner = CliRunner()
    bad = runner.invoke(cli, ["fit", str(d / "drift.txt"), "--odds", str(d / "odds.csv")])
    assert bad.exit_code == 1, bad.output
    assert "fail" in bad.output.splitlines()[1]
    good = runner.invoke(cli, ["fit", str(d / "sound.txt"), "--odds", str(d / "odds.csv")])
    assert good.exit_code == 0, good.output
