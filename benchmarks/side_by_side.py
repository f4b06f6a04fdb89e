"""Two versions of rngassay side by side on the same files, alternating, each run in a fresh process.

    python benchmarks/side_by_side.py OLD_SRC [--rounds 2] [--sizes 1MiB,64MiB,1GiB]

OLD_SRC is the ``src`` folder of another checkout (e.g. ``git worktree add /tmp/base <rev>`` then
``/tmp/base/src``); the new version is the one installed here. Writes PCG64 files of each size (seed 1) to a
temporary folder, then for each round and size runs ``rngassay test FILE --budget SIZE -q`` with the old
version (``PYTHONPATH=OLD_SRC``) and the new one, alternating, and prints every wall time, the best of each,
and one chunked read pass over the largest file (8 MiB reads, each summed). The first round also fills each
version's numba cache: use at least two rounds and read the best.
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time

import numpy as np

from battery import _chunked_read, write_stream  # benchmarks/battery.py (this folder is on sys.path)


def main() -> None:
    from rngassay.sizes import parse_size

    ap = argparse.ArgumentParser()
    ap.add_argument("old_src")
    ap.add_argument("--rounds", type=int, default=2)
    ap.add_argument("--sizes", default="1MiB,64MiB")
    a = ap.parse_args()
    if not os.path.isdir(os.path.join(a.old_src, "rngassay")):
        print(f"side_by_side.py: {a.old_src}: no rngassay package there (give the src folder of another checkout)",
              file=sys.stderr)
        raise SystemExit(2)
    sizes = {}
    for label in a.sizes.split(","):
        try:
            sizes[label] = parse_size(label, "--sizes")
        except ValueError as e:  # InputError: one line, exit 2, before anything is written
            print(f"side_by_side.py: {e}", file=sys.stderr)
            raise SystemExit(2) from None
    tmp = tempfile.mkdtemp()
    files = {}
    rng = np.random.Generator(np.random.PCG64(1))
    for label, size in sizes.items():
        path = os.path.join(tmp, f"{label}.bin")
        write_stream(path, size, rng)
        files[label] = path
    best: dict[tuple[str, str], float] = {}
    try:
        for r in range(a.rounds):
            for label, path in files.items():
                for who, env in (("old", {**os.environ, "PYTHONPATH": a.old_src}), ("new", dict(os.environ))):
                    t = time.perf_counter()
                    subprocess.run([sys.executable, "-m", "rngassay", "test", path, "--budget", label, "-q"],
                                   env=env, capture_output=True)
                    sec = time.perf_counter() - t
                    best[(who, label)] = min(best.get((who, label), float("inf")), sec)
                    print(f"round {r + 1} {who} {label}: {sec:.2f} s", flush=True)
        print()
        for label in files:
            print(f"{label}: old {best[('old', label)]:.2f} s, new {best[('new', label)]:.2f} s (best of {a.rounds})")
        big = max(files.values(), key=os.path.getsize)
        print(f"one chunked read pass over {os.path.basename(big)}: {_chunked_read(big):.2f} s")
    finally:
        for p in files.values():
            os.unlink(p)
        os.rmdir(tmp)


if __name__ == "__main__":
    main()
