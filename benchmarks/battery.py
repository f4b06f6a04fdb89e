"""The whole battery over a large file: time against one chunked read pass, peak memory, share per family.

    python benchmarks/battery.py [--size 1GiB] [--workers 2] [--latency]

Writes SIZE bytes of PCG64 output to a temporary file, times one chunked read pass over it (8 MiB reads, each
summed with numpy, page cache warm -- the cost of merely looking at every byte once; a whole-file
``np.fromfile`` is printed too, but it is slow here from page faults and flatters the ratio), then runs
``rngassay test FILE --budget SIZE --workers N --json ...`` in a child process and reports its wall time, the
ratio to the chunked read pass, the peak resident memory of the largest process, how much of the budget the
checks see, and the share of check time per family from the JSON report. ``--latency`` also times
``rngassay --version``, a 1 MiB run and a default (64 MiB) run, each in a fresh process.
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time
from collections import defaultdict

import numpy as np


def main() -> None:
    from rngassay.sizes import format_size, parse_size

    ap = argparse.ArgumentParser()
    ap.add_argument("--size", default="1GiB")
    ap.add_argument("--workers", type=int, default=os.cpu_count() or 1)
    ap.add_argument("--latency", action="store_true", help="also time --version, a 1 MiB and a 64 MiB run")
    a = ap.parse_args()
    size = parse_size(a.size, "--size")
    tmp = tempfile.mkdtemp()
    path = os.path.join(tmp, "pcg64.bin")
    write_stream(path, size, np.random.Generator(np.random.PCG64(1)))
    try:
        for _ in range(2):  # the second pass is the one with a warm page cache
            read_pass = _chunked_read(path)
            t = time.perf_counter()
            np.fromfile(path, dtype=np.uint8).sum()
            whole_read = time.perf_counter() - t
        out = os.path.join(tmp, "report.json")
        cmd = [sys.executable, "-m", "rngassay", "test", path, "--budget", str(size), "--workers", str(a.workers),
               "--json", out, "--quiet"]
        # GNU time reports the child's own peak RSS (getrusage in this process would also count the
        # memory this process had when it forked)
        timer = ["/usr/bin/time", "-f", "MAXRSS %M"] if os.path.exists("/usr/bin/time") else []
        t = time.perf_counter()
        proc = subprocess.run(timer + cmd, capture_output=True, text=True)
        wall = time.perf_counter() - t
        peaks = [int(l.split()[1]) for l in proc.stderr.splitlines() if l.startswith("MAXRSS")]
        peak = peaks[-1] / 1024 if peaks else float("nan")
        if proc.returncode not in (0, 1):
            print(proc.stderr)
            raise SystemExit(proc.returncode)
        rep = json.load(open(out))
        fam = defaultdict(float)
        for c in rep["checks"]:
            fam[c["family"]] += c.get("seconds", 0.0)
        total = sum(fam.values()) or 1.0
        print(f"size {format_size(size)}, workers {a.workers}, {len(rep['checks'])} checks, verdict {rep['verdict']}")
        print(f"chunked read pass (8 MiB reads + numpy sum): {read_pass:.2f} s; whole-file np.fromfile + sum: "
              f"{whole_read:.2f} s")
        print(f"battery wall time: {wall:.1f} s = {wall / read_pass:.1f}x the chunked read pass "
              f"({wall / whole_read:.1f}x np.fromfile); {size / wall / 1e6:.1f} MB/s")
        seen = [c["bytes"] / size for c in rep["checks"] if c.get("bytes")]
        if seen:
            print(f"checks that see at least half of the budget: {sum(x >= 0.5 for x in seen)} of {len(seen)} "
                  f"({100 * sum(x >= 0.5 for x in seen) / len(seen):.0f} %)")
        print(f"peak RSS of the largest process: {peak:.0f} MiB")
        print("share of check time by family: " + ", ".join(
            f"{k} {100 * v / total:.0f}%" for k, v in sorted(fam.items(), key=lambda kv: -kv[1])))
        # the split: block checks on fixed samples against the streaming checks (CPU seconds of the
        # checks themselves, summed over replicates and workers, against one chunked read pass)
        fixed = {pc["id"] for pc in rep.get("plan", []) if pc.get("sample")}
        block = sum(c.get("seconds", 0.0) for c in rep["checks"] if c["id"] in fixed)
        stream = sum(c.get("seconds", 0.0) for c in rep["checks"] if c["id"] not in fixed)
        print(f"check CPU time: streaming checks {stream:.1f} s = {stream / read_pass:.1f}x the chunked read pass "
              f"({stream / read_pass / a.workers:.1f}x per worker); block checks on fixed samples {block:.1f} s "
              f"({len(fixed)} checks)")
        slow = sorted(rep["checks"], key=lambda c: -c.get("seconds", 0))[:8]
        print("costliest checks: " + "; ".join(f"{c['id']} {c['seconds']:.1f} s" for c in slow))
        if a.latency:
            _latency(tmp)
    finally:
        for f in os.listdir(tmp):
            os.unlink(os.path.join(tmp, f))
        os.rmdir(tmp)


def write_stream(path: str, size: int, rng: np.random.Generator) -> None:
    """``size`` bytes of the generator's output to ``path``, in 64 MiB pieces (bounded memory)."""
    with open(path, "wb") as f:
        left = size
        while left:
            n = min(left, 64 << 20)
            f.write(rng.bytes(n))
            left -= n


def _chunked_read(path: str, chunk: int = 8 << 20) -> float:
    """Seconds for one pass over the file in ``chunk``-byte reads, each summed with numpy."""
    t = time.perf_counter()
    with open(path, "rb", buffering=0) as f:
        buf = bytearray(chunk)
        view = memoryview(buf)
        while True:
            n = f.readinto(view)
            if not n:
                break
            np.frombuffer(buf, dtype=np.uint8, count=n).sum()
    return time.perf_counter() - t


def _latency(tmp: str) -> None:
    """Wall time of fresh processes: --version, a 1 MiB run and a default run (64 MiB), default workers."""
    rng = np.random.Generator(np.random.PCG64(2))
    small, default = os.path.join(tmp, "one.bin"), os.path.join(tmp, "default.bin")
    with open(small, "wb") as f:
        f.write(rng.bytes(1 << 20))
    with open(default, "wb") as f:
        f.write(rng.bytes(64 << 20))
    for label, args in (("--version", ["--version"]), ("1 MiB run", ["test", small, "-q"]),
                        ("64 MiB run (the default budget)", ["test", default, "-q"])):
        best = float("inf")
        for _ in range(2):
            t = time.perf_counter()
            subprocess.run([sys.executable, "-m", "rngassay", *args], capture_output=True)
            best = min(best, time.perf_counter() - t)
        print(f"{label}: {best:.2f} s wall (best of 2)")


if __name__ == "__main__":
    main()
