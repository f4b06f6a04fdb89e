
import numpy as np
import pytest
from scipy import stats

from game import declared, draw

from rngassay.watch.chart import CAUTION, render_html, render_png, wilson
from rngassay.watch.monitor import Declared, Monitor


def test_wilson_interval_against_scipy():
    # Source: scipy.stats.binomtest(...).proportion_ci(method="wilson") as the reference.
    for k, n in [(0, 50), (7, 100), (500, 1000)]:
        ci = stats.binomtest(k, n).proportion_ci(0.99, method="wilson")
        assert wilson(k, n) == pytest.approx((ci.low, ci.high), abs=1e-9)


def test_png_and_html(tmp_path):
    m = Monitor(declared())
    x = draw(np.random.default_rng(1), 300_000)
    x[150_000:150_003] = 0
    m.update_many(x, None, None, 0)
    p = tmp_path / "w.png"
    render_png(m.summary(), m.history(), declared(), p)
    assert p.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    d = Declared(["<b>", "x&y"], np.array([0.5, 0.5]), None)
    m2 = Monitor(d)
    m2.update_many(np.array([0, 1] * 50), None, None, 0)
    page = render_html(m2.summary(), m2.history(), d, title="<script>")
    assert "<script>" not in page and "&lt;script&gt;" in page and "data:image/png;base64," in page
    assert CAUTION.split(",")[0].replace("'", "&#x27;") in page
