"""The console entry point: a stop signal that comes while the program is still loading ends it quietly.

Loading the command line takes a fraction of a second (numpy, scipy, click). A SIGINT, SIGTERM or SIGHUP in that
time finds no run to stop and no report to write: it ends the program with one line and exit 128 + the signal
(130, 143, 129), never a traceback. Once the command runs, its own handling takes over (reports marked
incomplete; see :mod:`rngassay.battery.run`).
"""

from __future__ import annotations

import signal
import sys


def _early(signum: int, frame: object) -> None:
    sys.stderr.write("rngassay: stopped before the run started; nothing was read\n")
    raise SystemExit(128 + signum)


def main() -> int:
    for name in ("SIGINT", "SIGTERM", "SIGHUP"):
        if hasattr(signal, name):
            signal.signal(getattr(signal, name), _early)
    from .cli import main as cli_main

    return cli_main()
