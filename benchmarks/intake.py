"""Intake throughput and memory.

    python benchmarks/intake.py file [--size 1GiB]      # file -> word view, MB/s
    python benchmarks/intake.py pipe [--size 1GiB]      # `rngassay emit` | intake, MB/s
    python benchmarks/intake.py rss  [--size 8GiB]      # piped stream read end to end, peak RSS

Each prints a small table, and for `file` the ratio to one plain numpy read pass over the same file.
"""

from __future__ import annotations

import argparse
import os
import resource
import subprocess
import sys
import tempfile
import time

import numpy as np


def consume(src_args: list[str], size: int, fmt: str = "<u4") -> tuple[float, int]:
    from rngassay.api import open_stream
    from rngassay.intake import views

    t = time.perf_counter()
    with open_stream(*src_args, fmt=fmt) as s:
        total = 0
        while True:
            v = s.read_values(1 << 20)
            if v.size == 0:
                break
            w = views.as_words32(v, s.fmt)
            total += w.size * 4
            if s.ended:
                break
    return time.perf_counter() - t, total


def bench_file(size: int) -> None:
    with tempfile.NamedTemporaryFile(delete=False, dir=os.environ.get("TMPDIR")) as f:
        rng = np.random.Generator(np.random.PCG64(0))
        left = size
        while left:
            n = min(left, 64 << 20)
            f.write(rng.bytes(n))
            left -= n
        path = f.name
    try:
        # warm the page cache, then time a plain numpy read pass as the yardstick
        for _ in range(2):
            t = time.perf_counter()
            with open(path, "rb", buffering=0) as fh:
                while True:
                    b = fh.read(1 << 20)
                    if not b:
                        break
                    np.frombuffer(b, np.uint32).sum()
            base = time.perf_counter() - t
        el, n = consume([path], size)
        print(f"{'case':<34}{'MB/s':>10}")
        print(f"{'numpy read pass (yardstick)':<34}{size / base / 1e6:>10.0f}")
        print(f"{'rngassay file -> words32':<34}{n / el / 1e6:>10.0f}   ratio {el / base:.2f}x")
    finally:
        os.unlink(path)


def bench_pipe(size: int) -> None:
    emit = subprocess.Popen(
        [sys.executable, "-m", "rngassay", "emit", "pcg64", "--bytes", str(size)], stdout=subprocess.PIPE
    )
    sys.stdin = os.fdopen(emit.stdout.fileno(), "r", closefd=False)
    el, n = consume(["-"], size)
    emit.wait()
    print(f"{'rngassay emit | intake -> words32':<34}{n / el / 1e6:>10.0f} MB/s  ({n} bytes)")


def bench_rss(size: int) -> None:
    emit = subprocess.Popen(
        [sys.executable, "-m", "rngassay", "emit", "pcg64", "--bytes", str(size)], stdout=subprocess.PIPE
    )
    sys.stdin = os.fdopen(emit.stdout.fileno(), "r", closefd=False)
    el, n = consume(["-"], size)
    emit.wait()
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"piped {n} bytes in {el:.1f} s ({n / el / 1e6:.0f} MB/s); reader peak RSS {peak:.0f} MiB")


def main() -> None:
    from rngassay.sizes import parse_size

    ap = argparse.ArgumentParser()
    ap.add_argument("what", choices=["file", "pipe", "rss"])
    ap.add_argument("--size", default=None)
    a = ap.parse_args()
    default = {"file": "1GiB", "pipe": "1GiB", "rss": "8GiB"}[a.what]
    size = parse_size(a.size or default, "--size")
    {"file": bench_file, "pipe": bench_pipe, "rss": bench_rss}[a.what](size)


if __name__ == "__main__":
    main()
