"""`rngassay watch` end to end with the statistics core itself (no test double): a sound log raises nothing, a
demonstration mode paying the top prize on consecutive outcomes is flagged within 3 outcomes, a log read in pieces
over several runs ends in exactly the state of one run, and the chart is written."""

import json

import numpy as np

import game  # the invented 'Lantern Lights' game of these tests (tests/watch/game.py)


def _write(path, tiers, start=0, mode="w"):
    with open(path, mode) as f:
        if mode == "w":
            f.write("seq,outcome,stake,payout\n")
        for i, k in enumerate(tiers.tolist()):
            f.write(f"{start + i},{game.TIERS[k]},1.00,{game.PRIZES[k]:.2f}\n")


def _args(log, odds, *more):
    return ("watch", log, "--odds", odds, "--once", "--stake-column", "stake", "--payout-column", "payout",
            "--time-column", "seq", *more)


def test_sound_log_no_alarm_then_a_repeated_top_prize_within_three_outcomes(tmp_path, run_cli):
    odds = tmp_path / "odds.csv"
    odds.write_text(game.CSV)
    log = tmp_path / "plays.csv"
    sound = game.draw(np.random.Generator(np.random.PCG64(21)), 20_000)
    _write(log, sound)
    r = run_cli(*_args(log, odds))
    assert r.code == 0 and r.out == "", (r.out, r.err)
    assert "20000 outcomes" in r.err
    # a demonstration mode left wired to the live game: the grand prize (1 in 10^6) on every outcome
    _write(log, np.zeros(3, dtype=np.int64), start=20_000, mode="a")
    r = run_cli(*_args(log, odds))
    assert r.code == 1
    alarms = [json.loads(line) for line in r.out.splitlines()]
    assert alarms and all(a["alarm"] is True for a in alarms)
    first = min(a["index"] for a in alarms if a["tier"] == "grand")
    assert 20_000 <= first <= 20_002  # flagged within 3 outcomes of the fault
    assert all({"index", "time", "statistic", "value", "threshold", "tier", "message"} <= set(a) for a in alarms)
    assert "reason to investigate" in r.err


def test_pieces_over_several_runs_equal_one_run(tmp_path, run_cli):
    from rngassay.watch.state import WatchState

    odds = tmp_path / "odds.csv"
    odds.write_text(game.CSV)
    rng = np.random.Generator(np.random.PCG64(5))
    drift = game.PROBS.copy()
    drift[4] *= 1.6  # the 1-in-100 tier drifts up (the extra probability taken from "lose")
    drift[-1] -= game.PROBS[4] * 0.6
    tiers = np.concatenate([game.draw(rng, 30_000), game.draw(rng, 60_000, drift)])
    one, pieces = tmp_path / "one.csv", tmp_path / "pieces.csv"
    _write(one, tiers)
    r1 = run_cli(*_args(one, odds))
    cuts = [0, 7_000, 41_234, 41_235, 90_000]
    for a, b in zip(cuts, cuts[1:]):
        _write(pieces, tiers[a:b], start=a, mode="w" if a == 0 else "a")
        r = run_cli(*_args(pieces, odds))
        assert r.code in (0, 1), r.err
    assert r1.code == r.code == 1  # the drift is found (and the same way in both)
    s1, s2 = WatchState(f"{one}.watch.sqlite"), WatchState(f"{pieces}.watch.sqlite")
    try:
        assert s1.monitor_state() == s2.monitor_state()
        strip = lambda alarms: [{k: v for k, v in a.items() if k != "raised"} for a in alarms]  # (wall clock)
        assert strip(s1.alarms()) == strip(s2.alarms()) and s1.alarms()
    finally:
        s1.close()
        s2.close()


def test_chart_written_and_never_over_an_input(tmp_path, run_cli):
    odds = tmp_path / "odds.csv"
    odds.write_text(game.CSV)
    log = tmp_path / "plays.csv"
    _write(log, game.draw(np.random.Generator(np.random.PCG64(8)), 5_000))
    html, png = tmp_path / "w.html", tmp_path / "w.png"
    r = run_cli(*_args(log, odds, "--html", html, "--png", png))
    assert r.code == 0 and png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    page = html.read_text()
    assert "data:image/png;base64," in page and "reason to investigate" in page and "accredited" in page
    before = log.read_bytes()
    r = run_cli(*_args(log, odds, "--html", log))
    assert r.code == 2 and len(r.err.strip().splitlines()) == 1 and log.read_bytes() == before
