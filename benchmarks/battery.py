"""The whole battery over a large file: time against one numpy read pass, peak memory, share per family.

    python benchmarks/battery.py [--size 1GiB] [--workers 2]

Writes SIZE bytes of PCG64 output to a temporary file, times one numpy read pass over it
(``np.fromfile(path, np.uint8).sum()``, page cache warm), then runs
``rngassay test FILE --budget SIZE --workers N --json ...`` in a child process and reports its wall time,
the ratio to the read pass, the peak resident memory of the largest process (the main process or a
worker, from getrusage of the children), and the share of check time per family from the JSON report.
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
    a = ap.parse_args()
    size = parse_size(a.size, "--size")
    tmp = tempfile.mkdtemp()
    path = os.path.join(tmp, "pcg64.bin")
    rng = np.random.Generator(np.random.PCG64(1))
    with open(path, "wb") as f:
        left = size
        while left:
            n = min(left, 64 << 20)
            f.write(rng.bytes(n))
            left -= n
    try:
        for _ in range(2):  # the second pass is the one with a warm page cache
            t = time.perf_counter()
            np.fromfile(path, dtype=np.uint8).sum()
            read_pass = time.perf_counter() - t
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
        print(f"numpy read pass (np.fromfile + sum): {read_pass:.2f} s")
        print(f"battery wall time: {wall:.1f} s = {wall / read_pass:.1f}x the read pass")
        print(f"peak RSS of the largest process: {peak:.0f} MiB")
        print("share of check time by family: " + ", ".join(
            f"{k} {100 * v / total:.0f}%" for k, v in sorted(fam.items(), key=lambda kv: -kv[1])))
        slow = sorted(rep["checks"], key=lambda c: -c.get("seconds", 0))[:8]
        print("costliest checks: " + "; ".join(f"{c['id']} {c['seconds']:.1f} s" for c in slow))
    finally:
        for f in os.listdir(tmp):
            os.unlink(os.path.join(tmp, f))
        os.rmdir(tmp)


if __name__ == "__main__":
    main()
