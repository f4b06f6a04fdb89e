"""`rngassay watch` end to end: resume without double counting, truncation and rotation refused, changed odds
refused, --skip-bad counted, --once exit codes, JSON alarm lines, bad input as one line with exit 2, follow mode.

Runs against the statistics core when it is present (rngassay.watch.monitor), else against the test double in
watch_fake_monitor.py; the properties tested here are the command side's, and hold for either."""

import json
import os
import pathlib
import signal
import subprocess
import sys
import time

import numpy as np
import pytest

import watch_fake_monitor

from rngassay import api
from rngassay.watch import run as watch_run

HERE = pathlib.Path(__file__).parent
ODDS = "outcome,probability\nlose,0.7\nsmall,0.25\ntop,0.05\n"


@pytest.fixture(autouse=True)
def monitor(monkeypatch):
    monkeypatch.setattr(watch_run, "_monitor_module", lambda: watch_fake_monitor)
    return watch_fake_monitor


@pytest.fixture
def game(tmp_path):
    odds = tmp_path / "odds.csv"
    odds.write_text(ODDS)
    return tmp_path, odds


def _log(n, seed=1, top_rate=0.05, start=0):
    rng = np.random.Generator(np.random.PCG64(seed))
    p = np.array([0.7, 0.25 - (top_rate - 0.05), top_rate])
    tiers = rng.choice(["lose", "small", "top"], size=n, p=p)
    return "".join(f"{start + i},{t},1.00\n" for i, t in enumerate(tiers))


def test_sound_log_once_exit_0_and_state(game, run_cli):
    d, odds = game
    log = d / "g.csv"
    log.write_text("seq,outcome,stake\n" + _log(500))
    r = run_cli("watch", log, "--odds", odds, "--once", "--stake-column", "stake")
    assert r.code == 0 and r.out == "" and "500 outcomes" in r.err, r.err
    assert (d / "g.csv.watch.sqlite").exists()


def test_fault_alarms_as_json_lines_and_exit_1(game, run_cli):
    d, odds = game
    log = d / "g.csv"
    log.write_text("seq,outcome,stake\n" + _log(400, top_rate=0.3))
    r = run_cli("watch", log, "--odds", odds, "--once", "--time-column", "seq")
    assert r.code == 1
    lines = [json.loads(x) for x in r.out.splitlines()]
    assert lines and all({"index", "time", "statistic", "value", "threshold"} <= set(a) for a in lines)
    a = lines[0]
    assert a["time"] == str(a["index"]) and a["line"] == a["index"] + 2  # the header is line 1
    assert "not proof" in r.err
    again = run_cli("watch", log, "--odds", odds, "--once", "--time-column", "seq")  # nothing new: the alarm is still on record
    assert again.code == 1 and again.out == "" and "0 alarms this run, 1 on record" in again.err


def test_resume_in_pieces_equals_one_run(game, run_cli):
    """Append the log in pieces (cut mid-line too) with a run after each; the final state equals one run's."""
    d, odds = game
    text = ("outcome,stake\n" + "".join(line.split(",", 1)[1] for line in _log(3000, seed=7, top_rate=0.07).splitlines(True)))
    whole = d / "whole.csv"
    whole.write_text(text)
    assert run_cli("watch", whole, "--odds", odds, "--once", "--stake-column", "stake").code in (0, 1)
    piece = d / "piece.csv"
    piece.write_text("")
    data, cuts = text.encode(), [0, 5, 40, 1001, 7777, 7778, 15000, len(text)]
    for a, b in zip(cuts, cuts[1:]):
        with open(piece, "ab") as f:
            f.write(data[a:b])
        assert run_cli("watch", piece, "--odds", odds, "--once", "--stake-column", "stake").code in (0, 1)
    import sqlite3

    def snap(p):
        db = sqlite3.connect(f"{p}.watch.sqlite")
        return (db.execute("SELECT offset, line, outcomes FROM position").fetchone(),
                db.execute("SELECT state FROM monitor").fetchone(),
                db.execute("SELECT idx, statistic, value FROM alarms").fetchall())

    assert snap(whole) == snap(piece)
    assert snap(whole)[0] == (len(data), 3001, 3000)


def test_truncated_and_rotated_logs_refused_then_start_over(game, run_cli):
    d, odds = game
    log = d / "g.csv"
    log.write_text("seq,outcome,stake\n" + _log(300))
    assert run_cli("watch", log, "--odds", odds, "--once").code == 0
    log.write_text("seq,outcome,stake\n" + _log(100))  # truncated in place (same inode)
    r = run_cli("watch", log, "--odds", odds, "--once")
    assert r.code == 2 and "truncated" in r.err and "--start-over" in r.err and len(r.err.splitlines()) == 1
    os.replace(log, d / "g.csv.1")
    log.write_text("seq,outcome,stake\n" + _log(400))  # rotated: a new file under the old name
    r = run_cli("watch", log, "--odds", odds, "--once")
    assert r.code == 2 and "rotated" in r.err and "Traceback" not in r.err
    r = run_cli("watch", log, "--odds", odds, "--once", "--start-over")
    assert r.code == 0 and "400 outcomes" in r.err and "moved to" in r.err
    assert len(list(d.glob("g.csv.watch.sqlite.*.old"))) == 1  # the old state is kept


def test_changed_odds_or_alpha_refused(game, run_cli):
    d, odds = game
    log = d / "g.csv"
    log.write_text("outcome\nlose\n")
    assert run_cli("watch", log, "--odds", odds, "--once").code == 0
    r = run_cli("watch", log, "--odds", odds, "--once", "--alpha", "0.01")
    assert r.code == 2 and "--alpha differs" in r.err
    odds.write_text(ODDS.replace("0.7", "0.69").replace("0.25", "0.26"))
    r = run_cli("watch", log, "--odds", odds, "--once")
    assert r.code == 2 and "odds file differs" in r.err and len(r.err.splitlines()) == 1


@pytest.mark.parametrize("body,what", [
    ("outcome\nlose\njackpot\n", "g.csv line 3: undeclared outcome 'jackpot'"),
    ("outcome,stake\nlose,1\nlose,ten\n", "g.csv line 3: stake 'ten'"),
    ("outcome,stake\nlose,1,2\n", "g.csv line 2: expected 2 fields"),
])
def test_bad_input_one_line_exit_2_nothing_committed_past_it(game, run_cli, body, what):
    d, odds = game
    log = d / "g.csv"
    log.write_text(body)
    r = run_cli("watch", log, "--odds", odds, "--once", *(["--stake-column", "stake"] if "stake" in body else []))
    assert r.code == 2 and what in r.err and len(r.err.splitlines()) == 1 and "Traceback" not in r.err, r.err


def test_bad_odds_one_line_exit_2(game, run_cli):
    d, odds = game
    odds.write_text("outcome,probability\nlose,0.7\nwin,0.2\n")
    (d / "g.csv").write_text("outcome\nlose\n")
    r = run_cli("watch", d / "g.csv", "--odds", odds, "--once")
    assert r.code == 2 and "sum to" in r.err and len(r.err.splitlines()) == 1


def test_skip_bad_counts_and_records(game, run_cli):
    d, odds = game
    log = d / "g.csv"
    log.write_text("outcome,stake\nlose,1\njackpot,1\nlose,x\nsmall,2\n")
    r = run_cli("watch", log, "--odds", odds, "--once", "--stake-column", "stake", "--skip-bad")
    assert r.code == 0 and "2 outcomes" in r.err and "2 lines skipped (2 this run)" in r.err
    import sqlite3

    rows = sqlite3.connect(f"{log}.watch.sqlite").execute("SELECT line FROM skipped ORDER BY line").fetchall()
    assert rows == [(3,), (4,)]


def test_jsonl_from_stdin_state_only_if_given(game, run_cli):
    d, odds = game
    lines = "".join(json.dumps({"outcome": t}) + "\n" for t in ["lose", "top", "small"] * 3)
    r = run_cli("watch", "-", "--odds", odds, "--once", stdin=lines.encode())
    assert r.code == 0 and "9 outcomes" in r.err and "not kept" in r.err
    st = d / "in.sqlite"
    r = run_cli("watch", "-", "--odds", odds, "--state", st, stdin=lines.encode())
    r = run_cli("watch", "-", "--odds", odds, "--state", st, stdin=(lines + '{"outcome": "lose"}').encode())
    assert r.code == 0 and "19 outcomes (10 this run)" in r.err  # stdin continues the recorded stream


def test_api_watch_returns_alarms(game):
    d, odds = game
    log = d / "g.csv"
    log.write_text("seq,outcome,stake\n" + _log(400, top_rate=0.3))
    seen = []
    res = api.watch(log, odds, once=True, on_alarm=seen.append)
    assert res.alarms_this_run == seen and len(seen) >= 1 and res.outcomes_total == 400


def test_follow_picks_up_appended_lines_and_stops_on_sigint(game):
    d, odds = game
    log = d / "g.csv"
    log.write_text("outcome\n" + "lose\n" * 10)
    code = (f"import sys; sys.path.insert(0, {str(HERE)!r}); import watch_fake_monitor as f; "
            "from rngassay.watch import run as r; r._monitor_module = lambda: f; "
            "from rngassay.cli import main; sys.exit(main(sys.argv[1:]))")
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(HERE.parents[1] / "src"), os.environ.get("PYTHONPATH", "")])}
    p = subprocess.Popen([sys.executable, "-c", code, "watch", str(log), "--odds", str(odds), "--poll", "0.05"],
                         stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env, start_new_session=True)
    try:
        state = pathlib.Path(f"{log}.watch.sqlite")
        import sqlite3

        def outcomes():
            try:
                return sqlite3.connect(state).execute("SELECT outcomes FROM position").fetchone()[0]
            except (sqlite3.Error, TypeError):
                return -1

        deadline = time.monotonic() + 30
        while outcomes() != 10 and time.monotonic() < deadline:
            time.sleep(0.05)
        with open(log, "a") as f:
            f.write("small\n" * 5 + "top")  # the last line is not complete yet: it waits
        while outcomes() != 15 and time.monotonic() < deadline:
            time.sleep(0.05)
        with open(log, "a") as f:
            f.write("\n")
        while outcomes() != 16 and time.monotonic() < deadline:
            time.sleep(0.05)
        assert outcomes() == 16
    finally:
        p.send_signal(signal.SIGINT)
        out, err = p.communicate(timeout=30)
    assert p.returncode == 128 + signal.SIGINT and b"stopped by SIGINT; state saved" in err, err
