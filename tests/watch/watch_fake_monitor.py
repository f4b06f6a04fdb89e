"""A test double of rngassay.watch.monitor (the statistics core is built elsewhere): the same interface, a trivial
deterministic statistic. It alarms once when the last declared tier has come up more than EXCESS times above its
expected count, so that tests of the command side (reading, state, resume, output) have alarms to see."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from rngassay.checks.transform.declared import read_odds

EXCESS = 15.0


@dataclass
class Declared:
    tiers: list
    probs: np.ndarray
    prizes: np.ndarray | None = None

    def return_rate(self):
        return None if self.prizes is None else float(np.dot(self.probs, self.prizes))


def declared_from_odds(path) -> Declared:
    d = read_odds(path)
    return Declared(list(d.outcomes), np.asarray(d.probs))


class Monitor:
    def __init__(self, declared, alpha=0.001, **options):
        self.declared, self.alpha = declared, alpha
        self.n, self.top, self.alarmed = 0, 0, False
        self.stakes = 0.0
        self.seen_starts: list[int] = []

    def update_many(self, tiers, stakes, payouts, start_index, times=None):
        assert start_index == self.n, (start_index, self.n)  # the caller's count of outcomes matches ours
        self.seen_starts.append(start_index)
        alarms = []
        last = len(self.declared.tiers) - 1
        p = float(self.declared.probs[last])
        if stakes is not None:
            self.stakes += float(np.sum(stakes))
        for k, t in enumerate(np.asarray(tiers).tolist()):
            self.n += 1
            self.top += t == last
            excess = self.top - p * self.n
            if not self.alarmed and excess > EXCESS:
                self.alarmed = True
                alarms.append({"index": start_index + k, "time": None if times is None else times[k],
                               "statistic": "fake excess of the last tier", "value": float(excess),
                               "threshold": EXCESS, "tier": self.declared.tiers[last], "message": "test double"})
        return alarms

    def state(self):
        return {"n": self.n, "top": self.top, "alarmed": self.alarmed, "stakes": self.stakes}

    @classmethod
    def from_state(cls, declared, state):
        m = cls(declared)
        m.n, m.top, m.alarmed, m.stakes = state["n"], state["top"], state["alarmed"], state["stakes"]
        return m

    def summary(self):
        return {"n": self.n, "top": self.top}

    def history(self):
        return {}
