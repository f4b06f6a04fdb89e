"""Figures for the HTML report, drawn with matplotlib's Agg canvas and returned as PNG bytes.

Every function takes a :class:`~rngassay.model.Report` and copes with zero checks, one check, checks
without replicate p-values, and p-values down to (and below) 1e-300: p-values are clipped to
``[P_FLOOR, 1]`` before taking logarithms, and non-finite ones are left out and counted in the title.
No pyplot state is used (figures are built on ``matplotlib.figure.Figure`` with an Agg canvas), so nothing
needs a display and calls are safe from worker threads.
"""

from __future__ import annotations

import io
import math
from collections.abc import Sequence

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.colors import Normalize
from matplotlib.figure import Figure
from matplotlib.ticker import FixedFormatter, FixedLocator, MaxNLocator, NullLocator

from ..model import CheckReport, Report

P_FLOOR = 1e-300  # smallest p-value drawn; anything smaller (or 0 from underflow) is drawn as this
HEAT_CAP = 10.0  # colour scale of the heat map stops at -log10 p = 10
MAX_ROWS = 60  # bar chart and heat map show at most this many checks (strongest evidence / worst first)
MAX_QQ_POINTS = 4000  # the Q-Q plot draws at most this many order statistics (evenly spaced ranks)
SYMLOG_ABOVE = 30.0  # the bar chart's axis turns logarithmic beyond 5 when some -log10 p exceeds this
DPI = 100

GRADE_COLOURS = {"pass": "#4c8c6a", "borderline": "#d49a2a", "fail": "#b8413a"}
INK = "#222222"
REF = "#555555"


# -- numbers -------------------------------------------------------------------------------------------------
def holm_adjust(p: Sequence[float] | np.ndarray) -> np.ndarray:
    """Holm (1979) adjusted p-values (:func:`rngassay.stats.holm_adjusted`); non-finite entries stay NaN
    and do not count towards ``m``."""
    from ..stats import holm_adjusted

    p = np.asarray(p, dtype=float)
    out = np.full(p.shape, np.nan)
    ok = np.isfinite(p)
    if ok.any():
        out[ok] = holm_adjusted(p[ok])
    return out


def holm_threshold(p: Sequence[float] | np.ndarray, alpha: float) -> float | None:
    """The p-value cut of Holm's procedure at family-wise level ``alpha``: exactly the checks with ``p <= cut``
    are rejected. With ``k`` rejections among ``m`` finite p-values it is ``alpha / (m - k + 1)`` (``alpha / m``
    when ``k = 0``). None when there are no finite p-values.
    """
    adj = holm_adjust(p)
    ok = np.isfinite(adj)
    m = int(ok.sum())
    if m == 0:
        return None
    k = int((adj[ok] <= alpha).sum())
    return alpha / (m - k + 1) if k > 0 else alpha / m


def _clip(p: np.ndarray) -> np.ndarray:
    return np.clip(p, P_FLOOR, 1.0)


def neglog10(p: np.ndarray | float) -> np.ndarray:
    """-log10 p with p clipped to ``[P_FLOOR, 1]`` (so the result lies in ``[0, 300]``)."""
    return -np.log10(_clip(np.asarray(p, dtype=float)))


def check_replicate_p(c: CheckReport) -> np.ndarray:
    """A check's first-level replicate p-values over all its rounds, in order (may be empty)."""
    parts = [np.asarray(r.replicate_p, dtype=float).ravel() for r in c.rounds if len(r.replicate_p)]
    return np.concatenate(parts) if parts else np.empty(0)


def replicate_pvalues(report: Report) -> tuple[np.ndarray, int]:
    """All first-level replicate p-values of all checks (finite ones, clipped to [P_FLOOR, 1]) and the number
    of non-finite values left out."""
    parts = [check_replicate_p(c) for c in report.checks]
    allp = np.concatenate(parts) if parts else np.empty(0)
    ok = np.isfinite(allp)
    return _clip(allp[ok]), int((~ok).sum())


# -- drawing helpers -------------------------------------------------------------------------------------------
def _figure(width: float, height: float) -> Figure:
    fig = Figure(figsize=(width, height), dpi=DPI)
    FigureCanvasAgg(fig)
    return fig


def _png(fig: Figure) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=DPI, metadata={"Software": None})
    return buf.getvalue()


def _empty(fig: Figure, ax, message: str) -> bytes:
    ax.set_axis_off()
    ax.text(0.5, 0.5, message, ha="center", va="center", color=REF, fontsize=10, transform=ax.transAxes)
    return _png(fig)


def _plural(n: int, word: str) -> str:
    return f"{n} {word}" + ("" if n == 1 else "s")


def _omitted(n: int) -> str:
    return f" ({n} without a p-value left out)" if n else ""


# -- the four figures -------------------------------------------------------------------------------------------
def pvalue_histogram(report: Report, bins: int = 20) -> bytes:
    """Histogram of all first-level replicate p-values in ``bins`` equal bins on [0, 1], with the count
    expected in each bin under uniformity (n / bins) drawn as a reference line."""
    p, bad = replicate_pvalues(report)
    fig = _figure(5.2, 3.2)
    ax = fig.add_subplot()
    if p.size == 0:
        return _empty(fig, ax, "no replicate p-values to show")
    edges = np.linspace(0.0, 1.0, bins + 1)
    counts, _ = np.histogram(p, bins=edges)
    ax.bar(edges[:-1], counts, width=1.0 / bins, align="edge", color="#7a9cc6", edgecolor="white", linewidth=0.6)
    expected = p.size / bins
    ax.axhline(expected, color=REF, linestyle="--", linewidth=1.0, label=f"uniform: {expected:.3g} per bin")
    ax.set_xlim(0, 1)
    ax.set_ylim(0, max(counts.max(), expected) * 1.15)
    ax.set_xlabel("replicate p-value")
    ax.set_ylabel("count")
    ax.set_title(f"Replicate p-values, {p.size} from {_plural(len(report.checks), 'check')}{_omitted(bad)}", fontsize=9)
    ax.legend(fontsize=8, loc="upper right", frameon=False)
    fig.tight_layout()
    return _png(fig)


def uniform_qq(report: Report) -> bytes:
    """Uniform Q-Q plot of all first-level replicate p-values: the i-th smallest of n against its expected
    value i/(n+1), with a pointwise 95% band from the Beta(i, n+1-i) law of uniform order statistics."""
    from scipy.stats import beta

    p, bad = replicate_pvalues(report)
    fig = _figure(3.6, 3.6)
    ax = fig.add_subplot()
    if p.size == 0:
        return _empty(fig, ax, "no replicate p-values to show")
    n = p.size
    srt = np.sort(p)
    if n > MAX_QQ_POINTS:
        idx = np.unique(np.linspace(0, n - 1, MAX_QQ_POINTS).round().astype(np.int64))
    else:
        idx = np.arange(n)
    i = idx + 1.0
    expected = i / (n + 1.0)
    lo = beta.ppf(0.025, i, n + 1.0 - i)
    hi = beta.ppf(0.975, i, n + 1.0 - i)
    ax.fill_between(expected, lo, hi, color="#d9e2ee", linewidth=0, label="95% pointwise band")
    ax.plot([0, 1], [0, 1], color=REF, linewidth=1.0, linestyle="--")
    ax.plot(expected, srt[idx], ".", color="#2f5f98", markersize=2.5 if n > 200 else 4)
    ax.set_xlim(0, 1)
    ax.set_ylim(0, 1)
    ax.set_aspect("equal")
    ax.set_xlabel("expected (uniform)")
    ax.set_ylabel("observed p-value")
    ax.set_title(f"Uniform Q-Q, n = {n}{_omitted(bad)}", fontsize=9)
    ax.legend(fontsize=7, loc="upper left", frameon=False)
    fig.tight_layout()
    return _png(fig)


def check_bars(report: Report) -> bytes:
    """Horizontal bars of -log10 p per check, strongest evidence at the top, coloured by grade, with
    vertical lines at the run's alpha and at Holm's cut for the run (see :func:`holm_threshold`)."""
    checks = [c for c in report.checks if isinstance(c.p_value, (int, float)) and math.isfinite(c.p_value)]
    bad = len(report.checks) - len(checks)
    if not checks:
        fig = _figure(5.2, 2.0)
        return _empty(fig, fig.add_subplot(), "no check p-values to show" + _omitted(bad))
    p_all = np.array([c.p_value for c in checks], dtype=float)
    cut = holm_threshold(p_all, report.alpha)
    checks = sorted(checks, key=lambda c: (c.p_value, c.id))
    shown = checks[:MAX_ROWS]
    vals = neglog10(np.array([c.p_value for c in shown]))
    n = len(shown)
    longest = max(len(c.id) for c in shown)
    left = min(0.55, 0.12 + 0.0085 * min(longest, 60))
    height = 1.1 + 0.17 * n
    fig = _figure(7.0, height)
    ax = fig.add_subplot()
    y = np.arange(n)[::-1]
    ax.barh(y, vals, height=0.7, color=[GRADE_COLOURS.get(c.grade, REF) for c in shown])
    ax.set_yticks(y, [_shorten(c.id, 60) for c in shown], fontsize=7)
    ax.set_ylim(-0.6, n - 0.4)
    top = float(vals.max())
    if 0.0 < report.alpha < 1.0:
        a = -math.log10(report.alpha)
        ax.axvline(a, color=REF, linestyle="--", linewidth=1.0, label=f"alpha = {report.alpha:.3g}")
        top = max(top, a)
    if cut is not None and 0.0 < cut < 1.0:
        h = -math.log10(cut)
        ax.axvline(h, color="#b8413a", linestyle=":", linewidth=1.2, label=f"Holm cut = {cut:.3g}")
        top = max(top, h)
    if top > SYMLOG_ABOVE:
        # a few huge values would flatten everything else: linear up to 5, logarithmic beyond
        ax.set_xscale("symlog", linthresh=5.0, linscale=1.0)
        ax.set_xlim(0, top * 1.5)
        ticks = [t for t in (0, 1, 2, 3, 5, 10, 30, 100, 300) if t <= top * 1.5]
        ax.xaxis.set_major_locator(FixedLocator(ticks))
        ax.xaxis.set_major_formatter(FixedFormatter([str(t) for t in ticks]))
        ax.xaxis.set_minor_locator(NullLocator())
        ax.set_xlabel("-log10 p (linear to 5, logarithmic beyond)")
    else:
        ax.set_xlim(0, top * 1.08 + 0.1)
        ax.set_xlabel("-log10 p")
    title = f"Evidence per check ({_plural(len(checks), 'check')}"
    title += f", {n} strongest shown)" if n < len(checks) else ")"
    # title top left and legend top right, both in a band above the axes, so neither covers the other
    fig.text(0.01, 1 - 0.12 / height, title + _omitted(bad), fontsize=9, ha="left", va="top")
    handles, labels = ax.get_legend_handles_labels()
    if handles:
        fig.legend(handles, labels, fontsize=7, loc="upper right", bbox_to_anchor=(0.99, 1 - 0.08 / height),
                   ncol=2, frameon=False)
    fig.subplots_adjust(left=left, right=0.97, top=1 - 0.5 / height, bottom=min(0.45, 0.6 / height))
    return _png(fig)


def replicate_heatmap(report: Report) -> bytes:
    """Heat map of -log10 replicate p-values: one row per check (worst first), one column per replicate
    (all rounds in order); colour capped at ``HEAT_CAP``; cells a check does not have are left grey."""
    rows = [(c, check_replicate_p(c)) for c in report.worst_first()]
    rows = [(c, r) for c, r in rows if r.size]
    if not rows:
        fig = _figure(5.2, 2.0)
        return _empty(fig, fig.add_subplot(), "no replicate p-values to show")
    rows = rows[:MAX_ROWS]
    width = max(r.size for _, r in rows)
    grid = np.full((len(rows), width), np.nan)
    for i, (_, r) in enumerate(rows):
        grid[i, : r.size] = np.where(np.isfinite(r), np.minimum(neglog10(r), HEAT_CAP), np.nan)
    data = np.ma.masked_invalid(grid)
    n = len(rows)
    longest = max(len(c.id) for c, _ in rows)
    left = min(0.5, 0.1 + 0.0085 * min(longest, 60))
    height = 2.0 + 0.17 * n
    fig = _figure(7.0, height)
    ax = fig.add_subplot()
    import matplotlib

    cmap = matplotlib.colormaps["magma_r"].with_extremes(bad="#e6e6e6")
    im = ax.imshow(data, aspect="auto", interpolation="nearest", cmap=cmap, norm=Normalize(0.0, HEAT_CAP))
    ax.set_yticks(np.arange(n), [_shorten(c.id, 60) for c, _ in rows], fontsize=7)
    ax.xaxis.set_major_locator(MaxNLocator(integer=True))
    ax.set_xlabel("replicate index (rounds in order)")
    cbar = fig.colorbar(im, ax=ax, fraction=0.04, pad=0.02)
    cbar.set_label("-log10 p", fontsize=8)
    cbar.ax.tick_params(labelsize=7)
    ax.set_title(f"Replicate evidence by check (colour capped at -log10 p = {HEAT_CAP:g})", fontsize=9)
    fig.subplots_adjust(left=left, right=0.93, top=1 - 0.45 / height, bottom=min(0.45, 0.65 / height))
    return _png(fig)


def _shorten(s: str, n: int) -> str:
    """Shorten a label and stop matplotlib from reading ``$...$`` in input-made text as mathtext."""
    s = s if len(s) <= n else s[: n - 1] + "\u2026"
    return s.replace("$", r"\$")


def all_figures(report: Report) -> dict[str, bytes]:
    """The four report figures by name, in the order the HTML report shows them."""
    return {
        "histogram": pvalue_histogram(report),
        "qq": uniform_qq(report),
        "bars": check_bars(report),
        "heatmap": replicate_heatmap(report),
    }
