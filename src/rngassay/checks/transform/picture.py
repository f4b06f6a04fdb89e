"""What a ``fit`` report draws of the data against the declared law: a few hundred quantile pairs for a Q-Q
plot (with a pointwise 95% band) and binned counts against the counts the law expects (a histogram), for a
continuous declaration; outcome counts against expected counts, and the two cumulative distributions, for
a discrete one. Pure functions: values and the frozen law in, plain lists out (they go into the JSON report
as ``fit_picture``, so a report read back can be drawn again).

Plotting positions: the i-th smallest of n values is set against the declared law's quantile at
``i / (n + 1)``, the mean of the i-th uniform order statistic; the band maps the 2.5% and 97.5% points of its
``Beta(i, n + 1 - i)`` law through the declared quantile function (common practice for Q-Q bands).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

QQ_POINTS = 400  # at most this many quantile pairs (evenly spaced ranks, plus the extremes)
HIST_BINS = 40
HIST_TRIM = 1e-3  # the histogram spans the sample's 0.1% to 99.9% quantiles; the rest is counted apart


def _floats(a: np.ndarray) -> list[float | None]:
    return [float(v) if math.isfinite(v) else None for v in np.asarray(a, dtype=float)]


def continuous_picture(frozen: Any, x: np.ndarray, points: int = QQ_POINTS, bins: int = HIST_BINS) -> dict[str, Any]:
    """Q-Q pairs and a histogram of ``x`` against the continuous law ``frozen`` (a frozen scipy.stats law)."""
    from scipy.stats import beta

    xs = np.sort(np.asarray(x, dtype=float))
    n = int(xs.size)
    if n == 0:
        return {}
    if n <= points:
        idx = np.arange(n)
    else:  # evenly spaced ranks, and the five most extreme at each end (where misfit shows first)
        idx = np.unique(np.concatenate([np.linspace(0, n - 1, points).round().astype(np.int64),
                                        np.arange(5), np.arange(n - 5, n)]))
    i = idx + 1.0
    with np.errstate(all="ignore"):
        declared = frozen.ppf(i / (n + 1.0))
        band_lo = frozen.ppf(beta.ppf(0.025, i, n + 1.0 - i))
        band_hi = frozen.ppf(beta.ppf(0.975, i, n + 1.0 - i))
    lo, hi = (float(v) for v in np.quantile(xs, [HIST_TRIM, 1.0 - HIST_TRIM]))
    if not hi > lo:
        lo, hi = float(xs[0]), float(xs[-1])
    if not hi > lo:
        hi = lo + 1.0
    edges = np.linspace(lo, hi, bins + 1)
    inside = xs[(xs >= lo) & (xs <= hi)]
    observed, _ = np.histogram(inside, bins=edges)
    with np.errstate(all="ignore"):
        cdf = np.asarray(frozen.cdf(edges), dtype=float)
    expected = n * np.diff(cdf)
    return {
        "kind": "continuous",
        "n": n,
        "qq": {"probability": _floats(i / (n + 1.0)), "sample": _floats(xs[idx]), "declared": _floats(declared),
               "band_low": _floats(band_lo), "band_high": _floats(band_hi)},
        "histogram": {"edges": _floats(edges), "observed": [int(v) for v in observed],
                      "expected": _floats(expected),
                      "below": {"observed": int(np.sum(xs < lo)), "expected": float(n * cdf[0])},
                      "above": {"observed": int(np.sum(xs > hi)), "expected": float(n * (1.0 - cdf[-1]))}},
    }


def discrete_picture(labels: list[str], counts: np.ndarray, probs: np.ndarray) -> dict[str, Any]:
    """Outcome counts against the counts the declared probabilities expect, in the declared order."""
    counts = np.asarray(counts, dtype=np.int64)
    probs = np.asarray(probs, dtype=float)
    n = int(counts.sum())
    return {"kind": "discrete", "n": n, "outcomes": [str(s) for s in labels],
            "observed": [int(v) for v in counts], "expected": _floats(n * probs)}
