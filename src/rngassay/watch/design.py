"""Design of the monitor's alarms: thresholds, the streak rule and the CUSUM's in-control run length.

* Streak: the exact probability that a window of ``w`` outcomes holds ``k`` or more hits of a tier of
  declared probability ``p`` is the binomial upper tail ``P(Bin(w, p) >= k)``; over a horizon of
  ``H`` outcomes the union bound over its ``H - w + 1`` windows bounds the false-alarm probability.
* CUSUM: two-sided tabular CUSUM (Page 1954) on standardised batch means; the in-control average run
  length (ARL) of each side by the Markov-chain method of Brook & Evans (1972, Biometrika 59(3)) with
  increments of the batch mean's exact mean, variance and skewness (a Pearson type III law, common
  practice for skewed sums; normal when the skewness is 0), the two sides combined by ``1/ARL = 1/ARL+ + 1/ARL-`` (Lucas & Crosier 1982,
  from memory; exact for independent sides, a close approximation for the CUSUM pair).
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
from scipy.stats import norm, pearson3


def binom_tail(w: int, p: float, k: int) -> float:
    """P(Bin(w, p) >= k), summed term by term (exact up to float rounding)."""
    if k <= 0:
        return 1.0
    return float(math.fsum(math.comb(w, j) * p**j * (1.0 - p) ** (w - j) for j in range(k, w + 1)))


def streak_rule(p: float, w: int, horizon: float, alpha_each: float) -> tuple[int, float, float]:
    """The smallest ``k`` in ``2..w`` with ``(horizon - w + 1) * P(Bin(w, p) >= k) <= alpha_each``.

    Returns ``(k, per-window probability, horizon bound)``; ``k = 0`` when no ``k <= w`` qualifies.
    """
    windows = max(1.0, horizon - w + 1)
    for k in range(2, w + 1):
        q = binom_tail(w, p, k)
        if windows * q <= alpha_each:
            return k, q, windows * q
    return 0, float("nan"), float("nan")


def _cdf(x: np.ndarray, skew: float) -> np.ndarray:
    """CDF of the standardised increment: normal, or Pearson type III (a standardised shifted gamma) of the given skewness."""
    if skew == 0.0:
        return norm.cdf(x)
    return pearson3.cdf(x, skew)


def arl_one_sided(k: float, h: float, n_states: int = 400, shift: float = 0.0, skew: float = 0.0) -> float:
    """ARL from zero of ``S = max(0, S + Z - k)``, alarm at ``S >= h``, ``Z = shift + Y`` with ``Y`` of mean 0,
    variance 1 and skewness ``skew`` (normal when 0, else Pearson type III): the Brook-Evans chain.

    State 0 is "at zero"; state ``i`` (1..N-1) the interval of width ``d = 2h / (2N - 1)`` centred on
    ``i d``; ``ARL = (I - P)^{-1} 1`` at state 0.
    """
    N = n_states
    d = 2.0 * h / (2 * N - 1)
    centres = np.arange(N) * d
    edges = (np.arange(N) + 0.5) * d  # upper edges of the states
    arg = edges[None, :] - centres[:, None] + k - shift  # P[i, j] = P(c_i + Z - k in state j)
    cdf = _cdf(arg, skew)
    P = np.empty((N, N))
    P[:, 0] = cdf[:, 0]
    P[:, 1:] = cdf[:, 1:] - cdf[:, :-1]
    L = np.linalg.solve(np.eye(N) - P, np.ones(N))
    return float(L[0])


@lru_cache(maxsize=256)
def arl_two_sided(k: float, h: float, shift: float = 0.0, skew: float = 0.0, n_states: int = 400) -> float:
    """Two-sided ARL; the lower side sees ``-Z`` (shift and skewness change sign)."""
    up = arl_one_sided(k, h, n_states, shift, skew)
    down = arl_one_sided(k, h, n_states, -shift, -skew)
    return 1.0 / (1.0 / up + 1.0 / down)


@lru_cache(maxsize=64)
def limit_for_arl(k: float, arl_target: float, skew: float = 0.0, n_states: int = 400) -> float:
    """The decision limit ``h`` whose two-sided in-control ARL (in batches) is ``arl_target``.

    Bisection on a coarse chain (80 states), then secant steps on log ARL with the full chain.
    """
    def f(h: float, n: int) -> float:
        return math.log(arl_two_sided(k, h, 0.0, skew, n)) - math.log(arl_target)

    lo, hi = 0.1, 1.0
    while f(hi, 80) < 0:
        lo, hi = hi, hi * 2
        if hi > 1e4:
            raise ValueError("ARL target out of reach")
    for _ in range(30):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if f(mid, 80) < 0 else (lo, mid)
    h0, h1 = hi, hi * 1.02
    f0, f1 = f(h0, n_states), f(h1, n_states)
    for _ in range(8):
        if abs(f1) < 1e-7 or f1 == f0:
            break
        h0, h1, f0 = h1, h1 - f1 * (h1 - h0) / (f1 - f0), f1
        f1 = f(h1, n_states)
    return h1
