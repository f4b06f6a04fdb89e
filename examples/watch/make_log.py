"""Demo log for `rngassay watch`: Gull Rock Gaming's 'Tide Tokens' scratch game (a fictional operator and game).

Writes a CSV outcome log (seq,time,outcome,stake,payout) of N plays drawn at the declared odds of
tide_tokens_odds.csv, except that from play FAULT_AT on a demonstration mode left switched on pays the x100 tier
twice as often as declared (the extra probability taken from no_win): the injected fault the watch should find.

    python examples/watch/make_log.py tide.csv [--plays 200000] [--fault-at 120000] [--seed 11]
    rngassay watch tide.csv --odds examples/watch/tide_tokens_odds.csv --once --time-column time \
        --stake-column stake --payout-column payout

The log is generated, not committed (it is large); the seed makes it the same every time.
"""

import argparse
import csv
import datetime
import pathlib

import numpy as np

HERE = pathlib.Path(__file__).parent


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("out")
    ap.add_argument("--plays", type=int, default=200_000)
    ap.add_argument("--fault-at", type=int, default=120_000)
    ap.add_argument("--seed", type=int, default=11)
    a = ap.parse_args()
    out = pathlib.Path(a.out)
    if out.exists():
        raise SystemExit(f"{out} exists; give a new path (this script never overwrites a log)")
    with open(HERE / "tide_tokens_odds.csv", newline="") as f:
        rows = list(csv.DictReader(f))
    tiers = [r["outcome"] for r in rows]
    p = np.array([float(r["probability"]) for r in rows])
    prize = {r["outcome"]: float(r["prize"]) for r in rows}  # payout per unit stake (declared return rate 81 %)
    faulty = p.copy()
    faulty[tiers.index("x100")] *= 2
    faulty[tiers.index("no_win")] -= p[tiers.index("x100")]
    rng = np.random.Generator(np.random.PCG64(a.seed))
    n_ok = min(a.fault_at, a.plays)
    draws = np.concatenate([rng.choice(len(tiers), size=n_ok, p=p),
                            rng.choice(len(tiers), size=a.plays - n_ok, p=faulty)])
    stakes = rng.choice([1.0, 2.0, 5.0], size=a.plays, p=[0.6, 0.3, 0.1])
    t0 = datetime.datetime(2031, 5, 4, 9, 0, 0)
    with open(out, "x", newline="") as f:
        w = csv.writer(f)
        w.writerow(["seq", "time", "outcome", "stake", "payout"])
        for i, (k, s) in enumerate(zip(draws.tolist(), stakes.tolist())):
            t = (t0 + datetime.timedelta(seconds=3 * i)).isoformat()
            w.writerow([i, t, tiers[k], f"{s:.2f}", f"{s * prize[tiers[k]]:.2f}"])
    print(f"wrote {a.plays} plays to {out}; fault (x100 paid twice as often) from play {a.fault_at}")


if __name__ == "__main__":
    main()
