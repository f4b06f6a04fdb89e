"""Figures for the HTML report, drawn with matplotlib's Agg canvas and returned as PNG bytes.

Every function takes a :class:`~rngassay.model.Report` and copes with zero checks, one check, checks
without replicate p-values, and p-values down to (and below) 1e-300: p-values are clipped to
``[P_FLOOR, 1]`` before taking logarithms, and non-finite ones are left out and counted in the title.
No pyplot state is used (figures are built on ``matplotlib.figure.Figure`` with an Agg canvas), so nothing
needs a display and calls are safe from worker threads.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from matplotlib.colors import Normalize
from matplotlib.figure import Figure
from matplotlib.ticker import FixedFormatter, FixedLocator, MaxNLocator, NullLocator

from ..model import CheckReport, Report
from .draw import DPI, INK, REF, _blank, _empty, _figure, _png, _shorten  # noqa: F401  (DPI: the figures' scale)

P_FLOOR = 1e-300  # smallest p-value drawn; anything smaller (or 0 from underflow) is drawn as this
HEAT_CAP = 8.0  # colour scale of the heat map stops at p = 1e-8 (and 1 - p = 1e-8)
MAX_ROWS = 40  # the heat map shows at most this many checks (worst first)
MAX_NUMBERED = 8  # the summary figure numbers the failing and notable checks when there are at most this many
MAX_QQ_POINTS = 4000  # the Q-Q plot draws at most this many order statistics (evenly spaced ranks)
SYMLOG_ABOVE = 30.0  # the bar chart's axis turns logarithmic beyond 5 when some -log10 p exceeds this

GRADE_COLOURS = {"pass": "#4c8c6a", "notable": "#d49a2a", "fail": "#b8413a"}
NO_DATA = "#d4d4d4"
REGULAR = "#2c5d8f"  # text about the left tail (too regular)


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


def _plural(n: int, word: str) -> str:
    return f"{n} {word}" + ("" if n == 1 else "s")


def _omitted(n: int) -> str:
    return f" ({n} without a p-value left out)" if n else ""


# -- the replicate p-value figures -------------------------------------------------------------------------------------------
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


# -- which tail -----------------------------------------------------------------------------------------------
def check_side(c: CheckReport) -> tuple[int, str]:
    """Which tail a check's evidence lies in: (+1, why) when its p-value is small because the statistic is
    larger than chance allows (the usual side: more deviation than chance), (-1, why) when it lies in the
    left tail -- the statistic smaller, the data closer to expectation than chance allows ("too regular").

    Read from the second level that carries the check's p-value: the pooled statistic's (or a fit check's)
    ``p_left`` against ``p_right`` where the check tests both tails (its p-value then uses the left tail:
    it is below ``p_right``); replicate p-values piling up near 1 where the uniformity test of the replicate
    p-values is the smallest part. ``why`` is "pooled", "fit", "replicates" or "" (the usual side)."""
    sl = c.second_level or {}
    if "p_left" in sl and "p_right" in sl:  # a fit check (one sample)
        return (-1, "fit") if _left_side(sl, c.p_value) else (1, "")
    parts = {k: v.get("p_value") for k, v in sl.items() if isinstance(v, dict) and "p_value" in v}
    parts = {k: float(v) for k, v in parts.items() if isinstance(v, (int, float)) and math.isfinite(v)}
    if not parts:
        return 1, ""
    top = min(parts, key=lambda k: parts[k])
    if top == "pooled" and _left_side(sl["pooled"], sl["pooled"]["p_value"]):
        return -1, "pooled"
    if top == "uniformity":
        reps = check_replicate_p(c)
        reps = reps[np.isfinite(reps)]
        if reps.size and float(np.mean(reps)) > 0.5:
            return -1, "replicates"
    return 1, ""


def regular_side(c: CheckReport) -> tuple[int, str]:
    """:func:`check_side` for a check that did not pass, (1, "") for one that did: only evidence is called
    "too regular" in words (the summary figure still draws every check on its side)."""
    return check_side(c) if c.grade != "pass" else (1, "")


def _left_side(d: dict, p: float) -> bool:
    right, left = d.get("p_right"), d.get("p_left")
    if not isinstance(right, (int, float)) or not isinstance(left, (int, float)):
        return False
    return left < right and p < right  # the p-value came from the left tail


def signed_evidence(p: np.ndarray | float) -> np.ndarray:
    """The heat map's tail-aware scale: -log10 p for p below 1/2 (positive), log10(1 - p) for p of 1/2 and
    above (negative: a p-value near 1); NaN stays NaN. |value| < 0.31 around p = 1/2."""
    p = np.asarray(p, dtype=float)
    with np.errstate(all="ignore"):
        low = -np.log10(_clip(p))
        high = np.log10(np.clip(1.0 - p, P_FLOOR, 1.0))
    return np.where(p < 0.5, low, high)


# -- the summary figure -----------------------------------------------------------------------------------------
def family_of(c: CheckReport) -> str:
    """The group a check is drawn in: its family (the PIT battery of a fit apart from the fit's own checks)."""
    return f"PIT {c.family}" if c.id.startswith("pit: ") else c.family


def marked_checks(report: Report, most: int = 12) -> list[CheckReport]:
    """The checks the summary figure numbers (1, 2, ...): failing and notable ones, strongest evidence
    first, at most ``most``."""
    bad = [c for c in report.checks if c.grade in ("fail", "notable") and isinstance(c.p_value, (int, float))
           and math.isfinite(c.p_value)]
    return keep_left_tail(sorted(bad, key=lambda c: (c.p_value, c.id)), most)


def keep_left_tail(ordered: list[CheckReport], most: int) -> list[CheckReport]:
    """The first ``most`` of ``ordered``, except that failing or notable checks in the left tail are kept
    (in place of the last others) so that a cut list never hides the "too regular" side."""
    if len(ordered) <= most:
        return list(ordered)
    left = [c for c in ordered if regular_side(c)[0] < 0][:most]
    keep = {id(c) for c in left}
    for c in ordered:
        if len(keep) >= most:
            break
        keep.add(id(c))
    return [c for c in ordered if id(c) in keep]


def evidence_by_family(report: Report) -> bytes:
    """The summary figure as PNG (see :func:`evidence_figure`)."""
    return _png(evidence_figure(report))


def evidence_figure(report: Report) -> Figure:
    """-log10 p of every check as a bar, checks grouped by family in the run's order: bars up for evidence in
    the usual tail (more deviation than chance), bars down for the left tail (too regular, see
    :func:`check_side`); coloured by grade; dashed lines at the run's alpha, dotted at Holm's cut (both
    tails); failing and notable checks numbered as in :func:`marked_checks`."""
    checks = [c for c in report.checks if isinstance(c.p_value, (int, float)) and math.isfinite(c.p_value)]
    bad = len(report.checks) - len(checks)
    fig = _figure(9.0, 3.7)
    ax = fig.add_subplot()
    if not checks:
        _blank(fig, ax, "no check p-values to show" + _omitted(bad))
        return fig
    groups: dict[str, list[CheckReport]] = {}
    for c in checks:
        groups.setdefault(family_of(c), []).append(c)
    xs, hs, cols, pos, centres, seps = [], [], [], {}, [], []
    x = 0.0
    for name, members in groups.items():
        first = x
        for c in members:
            side, _ = check_side(c)
            pos[c.id] = x
            xs.append(x)
            hs.append(side * float(neglog10(c.p_value)))
            cols.append(GRADE_COLOURS.get(c.grade, REF))
            x += 1.0
        centres.append(((first + x - 1.0) / 2.0, f"{name} ({len(members)})"))
        seps.append(x + 0.25)
        x += 1.5
    hs_a = np.array(hs)
    ax.bar(xs, hs_a, width=0.8, color=cols, linewidth=0)
    ax.axhline(0.0, color=INK, linewidth=0.8)
    top = max(3.0, float(np.abs(hs_a).max()))
    lines = []
    if 0.0 < report.alpha < 1.0:
        lines.append((-math.log10(report.alpha), "--", REF, f"alpha = {report.alpha:.3g}"))
    cut = holm_threshold(np.array([c.p_value for c in checks]), report.alpha)
    if cut is not None and 0.0 < cut < 1.0:
        lines.append((-math.log10(cut), ":", "#b8413a", f"Holm cut = {cut:.3g}"))
    for h, style, colour, label in lines:
        ax.axhline(h, color=colour, linestyle=style, linewidth=1.0, label=label)
        ax.axhline(-h, color=colour, linestyle=style, linewidth=1.0)
        top = max(top, h * 1.15)
    for s in seps[:-1]:
        ax.axvline(s, color="#cccccc", linewidth=0.6)
    numbered = marked_checks(report) if len(marked_checks(report, most=MAX_NUMBERED + 1)) <= MAX_NUMBERED else []
    for k, c in enumerate(numbered, start=1):
        if c.id in pos:
            h = hs[xs.index(pos[c.id])]
            ax.annotate(str(k), (pos[c.id], h), xytext=(0, 3 if h >= 0 else -3), textcoords="offset points",
                        ha="center", va="bottom" if h >= 0 else "top", fontsize=7, color=INK)
    _evidence_axis(ax, top)
    ax.set_xlim(-1.0, x - 1.0)
    ax.set_xticks([m for m, _ in centres], [_shorten(t, 28) for _, t in centres], fontsize=8)
    ax.tick_params(axis="x", length=0)
    from matplotlib.patches import Patch

    handles, labels = ax.get_legend_handles_labels()
    handles += [Patch(color=GRADE_COLOURS[g]) for g in ("pass", "notable", "fail")]
    labels += ["pass", "notable", "fail"]
    fig.legend(handles, labels, fontsize=7, loc="upper right", ncol=5, frameon=False, bbox_to_anchor=(0.99, 0.995))
    fig.text(0.01, 0.985, f"Evidence per check by family ({_plural(len(checks), 'check')}){_omitted(bad)}",
             fontsize=9, ha="left", va="top")
    fig.subplots_adjust(left=0.09, right=0.99, top=0.88, bottom=0.1)
    return fig


def _evidence_axis(ax, top: float) -> None:
    """A symmetric -log10 p axis: up = small p (more deviation than chance), down = too regular."""
    if top > SYMLOG_ABOVE:  # a few huge values would flatten the rest: linear to 5, logarithmic beyond
        ax.set_yscale("symlog", linthresh=5.0, linscale=1.0)
        ticks = [t for t in (1, 3, 10, 30, 100, 300) if t <= top * 1.3]
        ax.yaxis.set_major_locator(FixedLocator([-t for t in ticks[::-1]] + [0] + ticks))
        ax.yaxis.set_major_formatter(FixedFormatter([str(t) for t in ticks[::-1]] + ["0"] + [str(t) for t in ticks]))
        ax.yaxis.set_minor_locator(NullLocator())
        ax.set_ylim(-top * 1.3, top * 1.3)
    else:
        ax.set_ylim(-top * 1.12, top * 1.12)
        ax.yaxis.set_major_formatter(FixedFormatter([]))
        ticks = [t for t in MaxNLocator(4, integer=True).tick_values(0, top) if 0 < t <= top * 1.1]
        ax.yaxis.set_major_locator(FixedLocator([-t for t in ticks[::-1]] + [0] + ticks))
        ax.yaxis.set_major_formatter(FixedFormatter([f"{t:g}" for t in ticks[::-1]] + ["0"] + [f"{t:g}" for t in ticks]))
    ax.set_ylabel("-log10 p", fontsize=8)
    ax.tick_params(axis="y", labelsize=7)
    box = {"facecolor": "white", "edgecolor": "none", "alpha": 0.85, "pad": 1.0}
    ax.text(0.005, 0.98, "\u2191 small p: more deviation than chance allows", transform=ax.transAxes, fontsize=7,
            va="top", ha="left", color=REF, bbox=box)
    ax.text(0.005, 0.02, "\u2193 left tail: statistic smaller than chance allows (too regular, too few events)",
            transform=ax.transAxes, fontsize=7, va="bottom", ha="left", color=REGULAR, bbox=box)


def replicate_heatmap(report: Report) -> bytes:
    """The heat map as PNG (see :func:`heatmap_figure`)."""
    return _png(heatmap_figure(report))


def heatmap_figure(report: Report) -> Figure:
    """Replicate p-values on the tail-aware scale of :func:`signed_evidence` (red: small p, blue: p near 1),
    one row per check (worst first), one column per replicate (all rounds in order), capped at
    ``HEAT_CAP``; cells a check does not have are grey (with a legend entry). A check whose evidence lies
    in the left tail by its pooled or fit result (:func:`check_side`) tests both tails, so its replicate
    p-values are two-sided: its small ones are drawn on the too-regular side and its label says so."""
    rows = [(c, check_replicate_p(c)) for c in report.worst_first()]
    rows = [(c, r) for c, r in rows if r.size]
    if not rows:
        fig = _figure(5.2, 2.0)
        _blank(fig, fig.add_subplot(), "no replicate p-values to show")
        return fig
    kept = {id(c) for c in keep_left_tail([c for c, _ in rows], MAX_ROWS)}
    rows = [(c, r) for c, r in rows if id(c) in kept]
    width = max(r.size for _, r in rows)
    grid = np.full((len(rows), width), np.nan)
    labels = []
    for i, (c, r) in enumerate(rows):
        s = np.clip(signed_evidence(r), -HEAT_CAP, HEAT_CAP)
        if c.kind == "discrete":
            s = np.where(r >= 0.5, 0.0, s)  # a discrete p-value of 1 (e.g. a count of 0) is common by chance
        side, why = regular_side(c)
        if side < 0 and why in ("pooled", "fit"):
            s = -np.abs(s) * (r < 0.5) + s * (r >= 0.5)  # two-sided p: a small one is on the check's (left) side
        grid[i, : r.size] = s
        labels.append(_shorten(c.id, 56) + (" \u25bc left tail" if side < 0 else ""))
    data = np.ma.masked_invalid(grid)
    n = len(rows)
    longest = max(len(t) for t in labels)
    left = min(0.55, 0.1 + 0.0095 * min(longest, 70))
    height = 2.3 + 0.15 * n
    fig = _figure(8.0, height)
    ax = fig.add_subplot()
    import matplotlib

    cmap = matplotlib.colormaps["RdBu_r"].with_extremes(bad=NO_DATA)
    im = ax.imshow(data, aspect="auto", interpolation="nearest", cmap=cmap, norm=Normalize(-HEAT_CAP, HEAT_CAP))
    ax.set_yticks(np.arange(n), labels, fontsize=7)
    for t, (c, _) in zip(ax.get_yticklabels(), rows):
        if regular_side(c)[0] < 0:
            t.set_color(REGULAR)
    ax.xaxis.set_major_locator(FixedLocator(range(width)) if width <= 12 else MaxNLocator(integer=True))
    ax.set_xlabel("replicate (rounds in order)", fontsize=8)
    ax.tick_params(axis="x", labelsize=7)
    cbar = fig.colorbar(im, ax=ax, fraction=0.04, pad=0.02)
    ticks = [-HEAT_CAP, -4.0, -2.0, 0.0, 2.0, 4.0, HEAT_CAP]
    cbar.set_ticks(ticks)
    cbar.set_ticklabels([f"1-p = 1e-{-t:g}" if t < 0 else (f"p = 1e-{t:g}" if t > 0 else "p = 0.5") for t in ticks])
    cbar.ax.tick_params(labelsize=7)
    from matplotlib.patches import Patch

    fig.legend([Patch(color="#b2182b"), Patch(color="#2166ac"), Patch(color=NO_DATA)],
               ["small p (more deviation than chance)", "p near 1 (left tail: too regular)", "grey: no replicate there"],
               fontsize=7, loc="lower center", ncol=3, frameon=False, bbox_to_anchor=(0.5, 0.0))
    ax.set_title(f"Replicate p-values by check, both tails (colour capped at 1e-{HEAT_CAP:g})", fontsize=9)
    fig.subplots_adjust(left=left, right=0.86, top=1 - 0.45 / height, bottom=min(0.45, 0.95 / height))
    return fig


def all_figures(report: Report) -> dict[str, bytes]:
    """The report figures by name, in the order the HTML report shows them: the summary first, then (for a
    fit) the values against the declared law, then the replicate views."""
    out = {"summary": evidence_by_family(report)}
    if report.fit_picture:
        from .fit_figures import fit_figures

        out.update(fit_figures(report.fit_picture))
    out.update({"heatmap": replicate_heatmap(report), "histogram": pvalue_histogram(report),
                "qq": uniform_qq(report)})
    return out
