"""The progress display on stderr: elapsed time, what was read of what is planned, the rate, the time left and
the stage. Drawn by tqdm (a widely used progress-bar library), only on a terminal, never with --quiet, and only
once a run has taken more than ``delay`` seconds (short runs stay silent)."""

from __future__ import annotations

import re
import sys
import time
from typing import Any

_COUNT = re.compile(r"(\d+)/(\d+)")


class Progress:
    """Callable with a progress message: a :class:`rngassay.battery.run.Stage` (a ``str`` that carries
    ``done``/``total``/``unit``/``stage``) moves the bar by what was read; a plain message with ``i/n`` in it
    (the seed sweep's blocks) moves it by that count; any other message only changes the label."""

    def __init__(self, quiet: bool, delay: float = 2.0):
        self.on = (not quiet) and sys.stderr.isatty()
        self._t0 = time.monotonic()
        self._delay = delay
        self._bar: Any = None
        self._unit = ""

    def __call__(self, text: str) -> None:
        if not self.on:
            return
        done, total, unit = getattr(text, "done", None), getattr(text, "total", None), getattr(text, "unit", "")
        label = str(text)
        if done is None:
            m = _COUNT.search(label)
            if m and int(m.group(2)) > 0:
                done, total, unit = int(m.group(1)), int(m.group(2)), ""
        bar = self._bar_for(total, unit, done, label[:60])
        bar.set_description_str(label[:60], refresh=False)
        if done is not None:
            bar.update(max(0, min(int(done), int(total)) - bar.n))  # drawn only past the delay (tqdm's own rule)

    def _bar_for(self, total: int | None, unit: str, done: int | None, label: str) -> Any:
        from tqdm import tqdm

        if self._bar is not None and (total != self._bar.total or unit != self._unit):
            self._bar.close()
            self._bar = None
        if self._bar is None:
            waited = time.monotonic() - self._t0
            byte = unit == "bytes"
            self._unit = unit
            self._bar = tqdm(desc=label, total=total, unit="B" if byte else (f" {unit}" if unit else ""), unit_scale=byte or None,
                             unit_divisor=1000, file=sys.stderr, leave=False, dynamic_ncols=True,
                             delay=max(0.0, self._delay - waited), mininterval=0.2,
                             initial=0 if done is None else int(done),  # the rate counts from here
                             bar_format=("{desc} |{bar}| {n_fmt}%s/{total_fmt}%s read, {elapsed} elapsed, {rate_fmt}, "
                                         "{remaining} left" % (("B", "B") if byte else ("", "")))
                             if total else "{desc} {elapsed} elapsed")
        return self._bar

    def done(self) -> None:
        if self._bar is not None:
            self._bar.close()
            self._bar = None
