"""Chart of a watch: e-values on a log scale with their thresholds, the return-rate CUSUM with its limit, and
tier frequencies against the declared odds with 99 % Wilson confidence bands.  PNG via matplotlib's Agg canvas
(no pyplot state); HTML self-contained (inline PNG, every text escaped)."""

from __future__ import annotations

import base64
import html
import io
import math
import os

import numpy as np

CAUTION = ("An alarm is a reason to investigate, not proof of a fault or of fraud. Regulated games answer to "
           "their jurisdiction's technical standards and accredited test laboratories.")
Z99 = 2.5758293035489004  # normal 0.995 quantile


def wilson(k: float, n: float, z: float = Z99) -> tuple[float, float]:
    """Wilson score interval for a binomial proportion (Wilson 1927)."""
    if n <= 0:
        return 0.0, 1.0
    ph = k / n
    den = 1 + z * z / n
    mid = (ph + z * z / (2 * n)) / den
    half = z * math.sqrt(ph * (1 - ph) / n + z * z / (4 * n * n)) / den
    return max(0.0, mid - half), min(1.0, mid + half)


def _figure(summary: dict, history: dict, declared):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(9, 10), dpi=100)
    FigureCanvasAgg(fig)
    ax1, ax2, ax3 = fig.subplots(3, 1)
    n = np.asarray(history["n"], dtype=float)
    ax1.plot(n, history["log10_e_table"], color="black", lw=1.5, label="whole table")
    for t, v in history["log10_e_tiers"].items():
        ax1.plot(n, v, lw=0.8, label=f"tier {t}")
    ax1.axhline(summary["log10_threshold_table"], color="black", ls="--", lw=1, label="table threshold")
    ax1.axhline(summary["log10_threshold_tier"], color="red", ls=":", lw=1, label="tier threshold")
    ax1.set_ylabel("log10 e-value")
    ax1.set_title("Anytime-valid e-values against the declared odds")
    ax1.legend(fontsize=6, ncol=3, loc="upper left")
    cus = summary.get("cusum")
    if cus:
        ax2.plot(n, history["cusum_up"], color="tab:blue", label="upper CUSUM")
        ax2.plot(n, [-v for v in history["cusum_down"]], color="tab:orange", label="lower CUSUM (negated)")
        for s in (1, -1):
            ax2.axhline(s * cus["h"], color="red", ls="--", lw=1)
        ax2.set_title(f"Return-rate CUSUM (limits +/-h = {cus['h']:.2f}; in-control ARL {cus['arl0_outcomes']:.3g} outcomes)")
        ax2.legend(fontsize=7)
    else:
        ax2.text(0.5, 0.5, "no prizes declared: no return-rate CUSUM", ha="center", transform=ax2.transAxes)
    ax2.set_ylabel("CUSUM")
    tot = max(1, summary["outcomes"])
    tiers = list(declared.tiers)
    x = np.arange(len(tiers))
    obs = np.array([summary["counts"][t] / tot for t in tiers])
    lo_hi = np.array([wilson(summary["counts"][t], tot) for t in tiers])
    p = np.asarray(declared.probs)
    floor = 0.1 / tot
    ax3.errorbar(x, np.maximum(obs, floor), yerr=[np.maximum(obs, floor) - np.maximum(lo_hi[:, 0], floor * 0.5),
                                                  np.maximum(lo_hi[:, 1], floor) - np.maximum(obs, floor)],
                 fmt="o", color="tab:blue", capsize=3, label="observed (99 % Wilson band)")
    ax3.scatter(x, np.maximum(p, floor), marker="_", s=400, color="red", label="declared")
    ax3.set_yscale("log")
    ax3.set_xticks(x, tiers, fontsize=7, rotation=30)
    ax3.set_ylabel("frequency")
    ax3.set_title(f"Tier frequencies after {summary['outcomes']:,} outcomes")
    ax3.legend(fontsize=7)
    for ax in (ax1, ax2):
        ax.set_xlabel("outcomes")
    fig.text(0.5, 0.005, CAUTION, ha="center", fontsize=7, wrap=True)
    fig.tight_layout(rect=(0, 0.03, 1, 1))
    return fig


def render_png_bytes(summary: dict, history: dict, declared) -> bytes:
    fig = _figure(summary, history, declared)
    buf = io.BytesIO()
    fig.savefig(buf, format="png")
    return buf.getvalue()


def render_png(summary: dict, history: dict, declared, path: str | os.PathLike) -> None:
    """Write the chart as PNG, atomically (temporary file, then rename)."""
    data = render_png_bytes(summary, history, declared)
    tmp = f"{os.fspath(path)}.tmp"
    with open(tmp, "wb") as f:
        f.write(data)
    os.replace(tmp, path)


def _e(x) -> str:
    t = str(x)
    t = "".join(ch if ch.isprintable() or ch == "\n" else ch.encode("unicode_escape").decode("ascii") for ch in t)
    return html.escape(t, quote=True)


def render_html(summary: dict, history: dict, declared, title: str = "Outcome watch") -> str:
    """A self-contained page: the chart inline, the alarms, the thresholds and the caution."""
    png = base64.b64encode(render_png_bytes(summary, history, declared)).decode("ascii")
    rows = "".join(f"<tr><td>{_e(a['index'])}</td><td>{_e(a['time'] or '')}</td><td>{_e(a['statistic'])}</td>"
                   f"<td>{_e(a['tier'] or '')}</td><td>{_e(a['message'])}</td></tr>" for a in summary["alarms"])
    cus = summary.get("cusum")
    arl = (f"<p>Return-rate CUSUM: limit h = {cus['h']:.3f}, reference k = {cus['k']:.3f} (batch standard deviations), "
           f"in-control ARL {cus['arl0_outcomes']:.3g} outcomes.</p>") if cus else ""
    rr = summary.get("declared_return")
    return ("<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
            "<meta name='viewport' content='width=device-width, initial-scale=1'><title>" + _e(title) + "</title>"
            "<style>body{font-family:sans-serif;max-width:60em;margin:auto;padding:0 12px}"
            "td,th{border:1px solid #ccc;padding:2px 6px;vertical-align:top}img{max-width:100%;height:auto}"
            "table{border-collapse:collapse}h1{overflow-wrap:anywhere}.caution{background:#fff4d6;padding:6px}"
            "</style></head><body>"
            f"<h1>{_e(title)}</h1><p class='caution'>{_e(CAUTION)}</p>"
            f"<p>Outcomes seen: {summary['outcomes']:,}. Alpha {summary['alpha']:g} (anytime-valid, all e-processes). "
            f"Declared return rate: {_e('not declared' if rr is None else f'{rr:.4f}')}; observed: "
            f"{_e('n/a' if summary.get('observed_return') is None else format(summary['observed_return'], '.4f'))}.</p>"
            + arl + f"<img src='data:image/png;base64,{png}' alt='watch chart'>"
            "<h2>Alarms</h2><table><tr><th>index</th><th>time</th><th>statistic</th><th>tier</th><th>message</th></tr>"
            + (rows or "<tr><td colspan='5'>none</td></tr>") + "</table></body></html>")
