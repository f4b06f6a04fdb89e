"""The two pictures of a ``fit`` report: the values against the declared law, drawn from the report's
``fit_picture`` (made by :mod:`rngassay.checks.transform.picture`).

Continuous law: a Q-Q plot (sample quantiles against the declared law's quantiles, with a pointwise 95% band)
and a histogram of the values with the counts the law expects per bin. Discrete law or odds table: outcome
counts against expected counts, and the observed cumulative proportion against the declared distribution
function at each outcome (a P-P plot: a discrete law's quantiles are steps, so its Q-Q plot says little).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from .draw import INK, REF, _empty, _figure, _png, _shorten

OBSERVED = "#7a9cc6"
DECLARED = "#b8413a"
MAX_BARS = 80  # outcomes drawn one by one; more are drawn as a line


def _arr(v: Any) -> np.ndarray:
    return np.array([np.nan if x is None else x for x in (v or [])], dtype=float)


def fit_figures(picture: dict[str, Any]) -> dict[str, bytes]:
    """{"fit_qq": png, "fit_histogram": png} for a report's ``fit_picture``."""
    if picture.get("kind") == "continuous":
        return {"fit_qq": _qq(picture), "fit_histogram": _histogram(picture)}
    if picture.get("kind") == "discrete":
        return {"fit_qq": _pp(picture), "fit_histogram": _outcomes(picture)}
    return {}


def _qq(pic: dict[str, Any]) -> bytes:
    q = pic.get("qq") or {}
    sample, declared = _arr(q.get("sample")), _arr(q.get("declared"))
    lo, hi = _arr(q.get("band_low")), _arr(q.get("band_high"))
    fig = _figure(4.4, 4.2)
    ax = fig.add_subplot()
    ok = np.isfinite(sample) & np.isfinite(declared)
    if not ok.any():
        return _empty(fig, ax, "no quantiles to show")
    band = ok & np.isfinite(lo) & np.isfinite(hi)
    if band.any():
        ax.fill_between(declared[band], lo[band], hi[band], color="#d9e2ee", linewidth=0, label="95% pointwise band")
    a = float(min(declared[ok].min(), sample[ok].min()))
    b = float(max(declared[ok].max(), sample[ok].max()))
    ax.plot([a, b], [a, b], color=REF, linestyle="--", linewidth=1.0, label="y = x (the declared law)")
    ax.plot(declared[ok], sample[ok], ".", color="#2f5f98", markersize=3, label="sample quantiles")
    ax.set_xlabel("declared law's quantile", fontsize=8)
    ax.set_ylabel("sample quantile", fontsize=8)
    ax.tick_params(labelsize=7)
    ax.set_title(f"Q-Q against the declared law, n = {pic.get('n')}", fontsize=9)
    ax.legend(fontsize=7, loc="upper left", frameon=False)
    fig.tight_layout()
    return _png(fig)


def _histogram(pic: dict[str, Any]) -> bytes:
    h = pic.get("histogram") or {}
    edges, obs, exp = _arr(h.get("edges")), _arr(h.get("observed")), _arr(h.get("expected"))
    fig = _figure(5.2, 4.2)
    ax = fig.add_subplot()
    if edges.size < 2 or obs.size != edges.size - 1:
        return _empty(fig, ax, "no histogram to show")
    ax.bar(edges[:-1], obs, width=np.diff(edges), align="edge", color=OBSERVED, edgecolor="white", linewidth=0.5,
           label="values")
    ax.stairs(np.nan_to_num(exp), edges, color=DECLARED, linewidth=1.4, label="expected by the declared law")
    below, above = h.get("below") or {}, h.get("above") or {}
    ax.set_xlabel("value", fontsize=8)
    ax.set_ylabel("count per bin", fontsize=8)
    ax.tick_params(labelsize=7)
    ax.set_title(f"Histogram against the declared law, n = {pic.get('n')}", fontsize=9)
    outside = (f"outside the bins: {below.get('observed', 0)} below (expected {below.get('expected', 0):.3g}), "
               f"{above.get('observed', 0)} above (expected {above.get('expected', 0):.3g})")
    ax.text(0.99, 0.80, outside, transform=ax.transAxes, fontsize=6.5, ha="right", va="top", color=REF, wrap=True)
    ax.legend(fontsize=7, loc="upper right", frameon=False)
    ax.set_ylim(0, max(float(np.nanmax(obs)), float(np.nanmax(np.nan_to_num(exp)))) * 1.3)
    fig.tight_layout()
    return _png(fig)


def _outcomes(pic: dict[str, Any]) -> bytes:
    labels = [str(s) for s in pic.get("outcomes") or []]
    obs, exp = _arr(pic.get("observed")), _arr(pic.get("expected"))
    fig = _figure(5.2, 4.2)
    ax = fig.add_subplot()
    if not labels or obs.size != len(labels) or exp.size != len(labels):
        return _empty(fig, ax, "no outcome counts to show")
    x = np.arange(len(labels))
    if len(labels) <= MAX_BARS:
        ax.bar(x, obs, width=0.8, color=OBSERVED, label="observed")
        ax.plot(x, exp, "_", color=DECLARED, markersize=max(4, 180 / len(labels)), markeredgewidth=2,
                label="expected by the declared law")
    else:
        ax.plot(x, obs, color=OBSERVED, linewidth=1.0, label="observed")
        ax.plot(x, exp, color=DECLARED, linewidth=1.0, linestyle="--", label="expected by the declared law")
    step = max(1, len(labels) // 12)
    ax.set_xticks(x[::step], [_shorten(s, 12) for s in labels[::step]], fontsize=7,
                  rotation=45 if any(len(s) > 3 for s in labels) else 0, ha="right" if any(len(s) > 3 for s in labels) else "center")
    ax.set_ylabel("count", fontsize=8)
    ax.tick_params(axis="y", labelsize=7)
    if float(np.nanmax(exp)) / max(float(np.nanmin(exp[exp > 0])) if (exp > 0).any() else 1.0, 1e-300) > 1e3:
        ax.set_yscale("log")  # rare prize tiers would be invisible on a linear axis
    ax.set_title(f"Outcome counts against the declared law, n = {pic.get('n')}", fontsize=9)
    ax.legend(fontsize=7, loc="upper right", frameon=False)
    fig.tight_layout()
    return _png(fig)


def _pp(pic: dict[str, Any]) -> bytes:
    obs, exp = _arr(pic.get("observed")), _arr(pic.get("expected"))
    fig = _figure(4.4, 4.2)
    ax = fig.add_subplot()
    n = float(np.nansum(obs))
    if obs.size == 0 or n <= 0 or exp.size != obs.size:
        return _empty(fig, ax, "no outcome counts to show")
    fo = np.cumsum(obs) / n
    fe = np.cumsum(np.nan_to_num(exp)) / max(float(np.nansum(exp)), 1e-300)
    ax.plot([0, 1], [0, 1], color=REF, linestyle="--", linewidth=1.0, label="y = x (the declared law)")
    ax.plot(fe, fo, "o-", color="#2f5f98", markersize=3, linewidth=0.8, label="outcomes in declared order")
    ax.set_xlim(0, 1)
    ax.set_ylim(0, 1)
    ax.set_aspect("equal")
    ax.set_xlabel("declared cumulative probability", fontsize=8)
    ax.set_ylabel("observed cumulative proportion", fontsize=8, color=INK)
    ax.tick_params(labelsize=7)
    ax.set_title("P-P against the declared law", fontsize=9)
    ax.legend(fontsize=7, loc="upper left", frameon=False)
    fig.tight_layout()
    return _png(fig)
