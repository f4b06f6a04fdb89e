"""Peak memory of a full battery run on piped input, against the same bytes as a file.

    python benchmarks/pipe_rss.py [--size 1GiB] [--workers 1] [--no-file]

Runs ``rngassay emit pcg64 --bytes SIZE | rngassay test - --budget SIZE --workers N --json ...`` and
reports the peak resident set size (RSS) of the ``rngassay test`` process (``wait4`` rusage:
``ru_maxrss``, the largest of the process and the workers it reaped), the peak PSS of the process and
its workers together (sampled from /proc every 50 ms), its wall time and MiB/s; then the same
bytes written to a temporary file and given as a path (unless ``--no-file``), so the two can be
compared. The two reports must agree (same SHA-256, same verdict and p-values): the script checks it.

Target (issue 11, item 6): peak RSS < 512 MiB for a 1 GiB piped run.
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time


def _tree_pss_kib(pid: int) -> int:
    """Current proportional set size (PSS: shared pages split between the processes sharing them) of a
    process and its children (Linux /proc/PID/smaps_rollup), KiB; 0 when unreadable."""
    total = 0
    pids = [pid]
    try:
        with open(f"/proc/{pid}/task/{pid}/children") as f:
            pids += [int(x) for x in f.read().split()]
    except OSError:
        pass
    for q in pids:
        try:
            with open(f"/proc/{q}/smaps_rollup") as f:
                for line in f:
                    if line.startswith("Pss:"):
                        total += int(line.split()[1])
        except OSError:
            pass
    return total


def _run(argv: list[str], stdin=None) -> tuple[int, float, float, float]:
    """Run argv; return (exit status, peak RSS of its largest process in MiB, peak sampled PSS of the
    process and its workers together in MiB, seconds)."""
    import threading

    t = time.perf_counter()
    p = subprocess.Popen(argv, stdin=stdin, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    if stdin is not None and hasattr(stdin, "close"):
        stdin.close()  # the emitter gets SIGPIPE if the reader stops early
    peak = [0]
    done = threading.Event()

    def sample() -> None:  # every 50 ms: may miss a short spike (the ru_maxrss column does not)
        while not done.wait(0.05):
            peak[0] = max(peak[0], _tree_pss_kib(p.pid))

    th = threading.Thread(target=sample, daemon=True)
    th.start()
    _, status, ru = os.wait4(p.pid, 0)
    done.set()
    th.join()
    secs = time.perf_counter() - t
    err = p.stderr.read().decode() if p.stderr else ""
    if err.strip():
        print(err.strip(), file=sys.stderr)
    return os.waitstatus_to_exitcode(status), ru.ru_maxrss / 1024, peak[0] / 1024, secs


def _summary(path: str) -> tuple:
    with open(path) as f:
        d = json.load(f)
    return d["source"]["sha256"], d["source"]["bytes_read"], d["verdict"], [(c["id"], c["p_value"]) for c in d["checks"]]


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--size", default="1GiB")
    ap.add_argument("--workers", type=int, default=1)
    ap.add_argument("--no-file", action="store_true", help="skip the comparison run on a file")
    a = ap.parse_args()
    exe = [sys.executable, "-m", "rngassay"]
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        emit = subprocess.Popen(exe + ["emit", "pcg64", "--bytes", a.size], stdout=subprocess.PIPE)
        pj = os.path.join(tmp, "pipe.json")
        rc, rss, tree, secs = _run(exe + ["test", "-", "--budget", a.size, "--workers", str(a.workers), "--quiet",
                                          "--json", pj], stdin=emit.stdout)
        emit.wait()
        rows.append(("pipe", rc, rss, tree, secs, pj))
        if not a.no_file:
            data = os.path.join(tmp, "data.bin")
            with open(data, "wb") as f:
                subprocess.run(exe + ["emit", "pcg64", "--bytes", a.size], stdout=f, check=True)
            fj = os.path.join(tmp, "file.json")
            rc, rss, tree, secs = _run(exe + ["test", data, "--budget", a.size, "--workers", str(a.workers),
                                              "--quiet", "--json", fj])
            rows.append(("file", rc, rss, tree, secs, fj))
        nbytes = _summary(pj)[1]
        print(f"rngassay test on {a.size} of pcg64, --workers {a.workers}")
        print(f"{'input':<6} {'exit':>4} {'peak RSS MiB':>13} {'all processes':>14} {'seconds':>8} {'MiB/s':>7}")
        for name, rc, rss, tree, secs, _ in rows:
            print(f"{name:<6} {rc:>4} {rss:>13.0f} {tree:>14.0f} {secs:>8.1f} {nbytes / 2**20 / secs:>7.1f}")
        print("peak RSS: the largest single process (wait4 ru_maxrss); all processes: PSS of the test process "
              "and its workers together (shared pages counted once), sampled every 50 ms")
        if len(rows) == 2:
            same = _summary(rows[0][-1]) == _summary(rows[1][-1])
            print(f"pipe and file reports agree (SHA-256, bytes, verdict, p-values): {'yes' if same else 'NO'}")


if __name__ == "__main__":
    main()
