"""Drawing helpers shared by the report's figures: a matplotlib Figure on an Agg canvas (no pyplot state, no
display), PNG bytes out, an empty-figure message, and labels made safe for matplotlib."""

from __future__ import annotations

import io

from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

DPI = 110
INK = "#222222"
REF = "#555555"


# -- drawing helpers -------------------------------------------------------------------------------------------
def _figure(width: float, height: float) -> Figure:
    fig = Figure(figsize=(width, height), dpi=DPI)
    FigureCanvasAgg(fig)
    return fig


def _png(fig: Figure) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=DPI, metadata={"Software": None})
    return buf.getvalue()


def _blank(fig: Figure, ax, message: str) -> None:
    ax.set_axis_off()
    ax.text(0.5, 0.5, message, ha="center", va="center", color=REF, fontsize=10, transform=ax.transAxes)


def _empty(fig: Figure, ax, message: str) -> bytes:
    _blank(fig, ax, message)
    return _png(fig)


def _shorten(s: str, n: int) -> str:
    """Shorten a label and stop matplotlib from reading ``$...$`` in input-made text as mathtext."""
    s = s if len(s) <= n else s[: n - 1] + "\u2026"
    return s.replace("$", r"\$")
