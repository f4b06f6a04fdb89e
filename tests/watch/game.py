"""The invented instant-win game of the watch tests: 'Lantern Lights', a fictional operator's scratch game.

Six prize tiers from 1 in 1,000,000 to 1 in 5 and a losing outcome; prizes per unit stake give a
declared return rate of 0.95.
"""

import numpy as np

from rngassay.watch.monitor import Declared

TIERS = ["grand", "major", "minor", "bonus", "small", "free", "lose"]
PROBS = np.array([1e-6, 1e-5, 1e-4, 1e-3, 1e-2, 0.2, 0.0])
PROBS[-1] = 1.0 - PROBS[:-1].sum()
PRIZES = np.array([50_000.0, 5_000.0, 500.0, 100.0, 20.0, 2.5, 0.0])  # 0.05+0.05+0.05+0.1+0.2+0.5 = 0.95

CSV = "outcome,probability,prize\n" + "".join(f"{t},{float(p)!r},{float(z)!r}\n" for t, p, z in zip(TIERS, PROBS, PRIZES))


def declared() -> Declared:
    return Declared(list(TIERS), PROBS.copy(), PRIZES.copy())


def draw(rng: np.random.Generator, n: int, probs: np.ndarray = PROBS) -> np.ndarray:
    """n outcomes (tier indices) with the given probabilities (inverse CDF of uniforms)."""
    cum = np.cumsum(probs)
    cum[-1] = 1.0
    return np.searchsorted(cum, rng.random(n), side="right").astype(np.int64)
