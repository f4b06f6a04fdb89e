"""Power table: for each flawed reference generator, the smallest budget at which the battery fails it.

    python benchmarks/power.py > benchmarks/power.md

Budgets 1, 2, 4, ... 64 MiB (the total read, shared by the checks, as for every source);
seed 1 for every generator, 2 workers. For each flawed generator: the first budget whose run verdict is
`fail`, the wall seconds of that run, and the checks that failed it (Holm-adjusted p < alpha). For each
sound generator (and os.urandom, which cannot be seeded): the verdict at 8 MiB. Prints Markdown.
"""

from __future__ import annotations

import argparse
import os
import sys
import time

from rngassay import api
from rngassay.generators import GENERATORS

BUDGETS_MIB = (1, 2, 4, 8, 16, 32, 64)


def first_failure(name: str, workers: int, max_mib: int) -> tuple[int | None, float, list[str]]:
    for mib in BUDGETS_MIB:
        if mib > max_mib:
            break
        t = time.perf_counter()
        rep = api.assay(gen=name, seed=1, budget=f"{mib}MiB", workers=workers)
        sec = time.perf_counter() - t
        print(f"  {name} at {mib} MiB: {rep.verdict} ({sec:.1f} s)", file=sys.stderr)
        if rep.verdict == "fail":
            caught = sorted((c.p_value, c.id) for c in rep.checks if c.grade == "fail")
            return mib, sec, [cid for _, cid in caught]
    return None, 0.0, []


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--max", type=int, default=64, help="largest budget tried, MiB")
    ap.add_argument("--sound-budget", default="8MiB")
    ap.add_argument("names", nargs="*")
    a = ap.parse_args()
    names = a.names or list(GENERATORS)
    print("| flawed generator | smallest failing budget | seconds | checks that failed it (most significant first) |")
    print("|---|---|---|---|")
    for name in names:
        if GENERATORS[name].quality != "flawed":
            continue
        mib, sec, caught = first_failure(name, a.workers, a.max)
        if mib is None:
            print(f"| {name} | not caught up to {a.max} MiB | – | – |")
            continue
        shown = ", ".join(f"`{c}`" for c in caught[:4]) + (f" and {len(caught) - 4} more" if len(caught) > 4 else "")
        print(f"| {name} | {mib} MiB | {sec:.1f} | {shown} |")
    print()
    print(f"| sound source | verdict at {a.sound_budget} | smallest p | seconds |")
    print("|---|---|---|---|")
    sound = [n for n in names if GENERATORS[n].quality == "sound"] + ["os.urandom"]
    for name in sound:
        t = time.perf_counter()
        if name == "os.urandom":
            rep = api.assay(os.urandom, budget=a.sound_budget, workers=a.workers)
        else:
            rep = api.assay(gen=name, seed=1, budget=a.sound_budget, workers=a.workers)
        sec = time.perf_counter() - t
        pmin = min(c.p_value for c in rep.checks)
        print(f"| {name} | {rep.verdict} | {pmin:.2g} | {sec:.1f} |")


if __name__ == "__main__":
    main()
