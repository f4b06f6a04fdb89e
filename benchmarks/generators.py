"""Throughput of the reference generators on one core.

Usage: python benchmarks/generators.py [--mib 64] [--chunk-mib 4] [NAME ...]

For each generator: build it with its default seed, warm up (numba compilation or cache load,
first block), then time reading ``--mib`` MiB in chunks of ``--chunk-mib`` MiB. Prints a table of
MB/s (10**6 bytes per second) and MiB/s, and the ratio to a plain read pass (copying the same
number of bytes out of a preallocated buffer in chunks of the same size).
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from rngassay.generators import GENERATORS, make_generator


def _time_read(read, total: int, chunk: int) -> float:
    start = time.perf_counter()
    done = 0
    while done < total:
        n = min(chunk, total - done)
        read(n)
        done += n
    return time.perf_counter() - start


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("names", nargs="*", help="generators to time (default: all)")
    parser.add_argument("--mib", type=int, default=64, help="MiB read per generator (default 64)")
    parser.add_argument("--chunk-mib", type=int, default=4, help="MiB per read call (default 4)")
    args = parser.parse_args(argv)
    names = args.names or list(GENERATORS)
    total, chunk = args.mib * 2**20, args.chunk_mib * 2**20

    source = np.random.default_rng(0).integers(0, 256, size=chunk, dtype=np.uint8)
    _time_read(lambda n: source[:n].copy(), chunk, chunk)
    base = _time_read(lambda n: source[:n].copy(), total, chunk)

    print(f"reading {args.mib} MiB per generator in {args.chunk_mib} MiB chunks, one core")
    print(f"{'generator':<14}{'quality':<8}{'MB/s':>10}{'MiB/s':>10}{'x read pass':>13}")
    for name in names:
        gen = make_generator(name)
        gen.read(chunk)  # warm-up: compile / load the numba cache, first block
        seconds = _time_read(gen.read, total, chunk)
        info = GENERATORS[name]
        print(f"{name:<14}{info.quality:<8}{total / seconds / 1e6:>10.0f}"
              f"{total / seconds / 2**20:>10.0f}{seconds / base:>13.1f}")
    print(f"{'(read pass)':<22}{total / base / 1e6:>10.0f}{total / base / 2**20:>10.0f}{1.0:>13.1f}")


if __name__ == "__main__":
    main()
