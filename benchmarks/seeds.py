"""Seed-sweep throughput: N seeds x B bytes per seed, numpy default_rng(seed) streams, local workers.

Usage:  python benchmarks/seeds.py [--seeds 10000] [--bytes-per-seed 64KiB] [--workers 1,2]

Prints, per worker count, the wall time of the whole sweep (all checks, the batteries on the merged
streams included), the CPU time it used (this process and its worker processes), seeds per second,
and the ratio to one read pass (the time to only generate the same streams in this process). On a
machine shared with other work the wall time depends on the load; the CPU time much less so.
"""

from __future__ import annotations

import argparse
import os
import resource
import time

import numpy as np

from rngassay.seeds.factory import SeedFactory
from rngassay.seeds.sweep import SweepOptions, run_sweep
from rngassay.sizes import parse_size


def factory(seed: int) -> np.random.Generator:
    return np.random.default_rng(seed)


def _cpu() -> float:
    """CPU seconds of this process and of its finished child processes (the pool's workers)."""
    me = resource.getrusage(resource.RUSAGE_SELF)
    ch = resource.getrusage(resource.RUSAGE_CHILDREN)
    return me.ru_utime + me.ru_stime + ch.ru_utime + ch.ru_stime


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seeds", type=int, default=10_000)
    ap.add_argument("--bytes-per-seed", default="64KiB")
    ap.add_argument("--workers", default="2,1")
    args = ap.parse_args()
    B = parse_size(args.bytes_per_seed)
    seeds = np.arange(args.seeds, dtype=np.uint64)
    f = SeedFactory.from_options(factory=factory)

    t = time.perf_counter()
    f.streams(seeds[: min(2000, args.seeds)], B)
    read_pass = (time.perf_counter() - t) * args.seeds / min(2000, args.seeds)

    # warm the numba caches (first compilations must not count)
    run_sweep(seeds[:64], f, options=SweepOptions(bytes_per_seed=B, merge_budget=1 << 20), workers=1)

    print(f"seed sweep: {args.seeds} seeds x {B} bytes = {args.seeds * B / 2**20:.0f} MiB; "
          f"{os.cpu_count()} cores; one read pass {read_pass:.1f} s")
    print(f"{'workers':>7} {'wall s':>8} {'CPU s':>8} {'seeds/s':>8} {'x read':>7}  verdict")
    rows = []
    for w in (int(x) for x in args.workers.split(",")):
        c = _cpu()
        t = time.perf_counter()
        r = run_sweep(seeds, f, options=SweepOptions(bytes_per_seed=B), workers=w)
        wall = time.perf_counter() - t
        cpu = _cpu() - c
        rows.append((w, wall))
        print(f"{w:>7} {wall:>8.1f} {cpu:>8.1f} {args.seeds / wall:>8.0f} {wall / read_pass:>7.1f}  {r.verdict}",
              flush=True)
    if len(rows) > 1:
        base = dict(rows)
        if 1 in base:
            for w, wall in rows:
                if w != 1:
                    print(f"speed-up with {w} workers: {base[1] / wall:.2f}x")


if __name__ == "__main__":
    main()
