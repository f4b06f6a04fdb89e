"""The self-contained HTML report and its figures."""

from __future__ import annotations

import base64
import html as htmlmod
import re
import struct
from html.parser import HTMLParser

import numpy as np
import pytest

from rngassay.report import figures
from rngassay.report.html import format_p, render_html
from rngassay.model import CAUTIONS, CheckReport, Report, Round

EVIL = "<script>alert(1)</script>"
PNG_MAGIC = b"\x89PNG\r\n\x1a\n"


def _check(cid, p, grade, rounds, family="gap", adjusted=None, error=None, params=None):
    return CheckReport(
        id=cid, key=cid, family=family, params=params if params is not None else {"t": 16, "lo": 0.0, "hi": 0.5},
        view="uniforms", kind="continuous", statistic=1.5, p_value=p, grade=grade,
        bytes=sum(r.bytes for r in rounds), replicates=rounds[-1].replicates if rounds else 0,
        adjusted_p=adjusted, rounds=rounds, null="the values are independent and uniform on [0, 1)", error=error,
    )


def _rounds(*spec, seed=0):
    """spec: (replicates, round p) pairs; replicate p-values are fixed-seed uniforms."""
    rng = np.random.default_rng(seed)
    return [Round(replicates=n, bytes=1024 * n, p_value=p, replicate_p=rng.random(n).tolist()) for n, p in spec]


@pytest.fixture
def report() -> Report:
    checks = [
        _check("serial d=3 overlapping", 0.61, "pass", _rounds((8, 0.61), seed=1), family="serial", adjusted=1.0),
        _check("gap [0, 0.5) t=16", 3.2e-9, "fail", _rounds((8, 2e-3), (16, 3.2e-9), seed=2), adjusted=9.6e-9),
        _check("runs up", 4.4e-3, "notable", _rounds((8, 0.02), (16, 4.4e-3), seed=3), family="runs",
               adjusted=8.8e-3),
        _check("coupon collector d=8", 1e-300, "fail", _rounds((4, 1e-300), seed=4), family="coupon",
               adjusted=4e-300),
    ]
    checks[3].rounds[0].replicate_p = [1e-300, 0.0, 1e-20, 0.5]  # extreme and underflowed replicate p-values
    return Report(
        command="test",
        source={"kind": "file", "name": "stream.bin", "format": "<u4", "bytes_read": 1_048_576,
                "sha256": "9f" * 32},
        budget_bytes=1 << 20, alpha=0.01, verdict="fail", combined_p=2.5e-12, checks=checks, elapsed_s=3.25,
        plan=[{"id": c.id, "family": c.family, "params": c.params, "view": "uniforms", "bytes": c.bytes,
               "replicates": c.replicates} for c in checks],
        notes=["the stream ended before the budget"],
    )


@pytest.fixture
def fast_figures(monkeypatch):
    """For tests about the page text only: skip drawing (the real figures are tested below)."""
    tiny = PNG_MAGIC + b"\x00\x00\x00\x0dIHDR" + struct.pack(">II", 1, 1)
    monkeypatch.setattr(figures, "all_figures", lambda r: dict.fromkeys(("summary", "heatmap", "histogram", "qq"), tiny))


class _Tags(HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags: list[tuple[str, dict]] = []
        self.text: list[str] = []  # visible text (not the style sheet or the title)
        self._skip = 0

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))
        self._skip += tag in ("style", "title")

    def handle_endtag(self, tag):
        self._skip -= tag in ("style", "title")

    def handle_data(self, data):
        if not self._skip:
            self.text.append(data)


def _parse(doc: str) -> _Tags:
    t = _Tags()
    t.feed(doc)
    t.close()
    return t


def _png_size(png: bytes) -> tuple[int, int]:
    assert png[:8] == PNG_MAGIC
    w, h = struct.unpack(">II", png[16:24])  # IHDR width and height (PNG spec, ISO/IEC 15948 §11.2.2)
    return w, h


# -- p-value formatting -----------------------------------------------------------------------------------------
@pytest.mark.parametrize(
    "p, text",
    [
        (1.23456e-5, "1.23e-05"),  # 3 significant digits
        (0.5, "5.00e-01"),
        (1.0, "1.00e+00"),
        (1e-300, "1.00e-300"),
        (5e-324, "< 1e-300"),  # below the floor: the exact figure carries no meaning (IEEE 754 subnormal)
        (2e-300, "2.00e-300"),
        (0.0, "< 1e-300"),  # an underflow is never printed as 0
        (float("nan"), "n/a"),
        (None, "\u2014"),
    ],
)
def test_format_p(p, text):
    assert format_p(p) == text


# -- the page -------------------------------------------------------------------------------------------------
def test_page_is_self_contained(report):
    doc = render_html(report)
    t = _parse(doc)
    names = [tag for tag, _ in t.tags]
    assert "script" not in names and "link" not in names and "iframe" not in names and "object" not in names
    assert not re.search(r"https?://|//[a-z0-9.-]+\.[a-z]{2,}/", doc, re.I)
    for tag, attrs in t.tags:
        for k, v in attrs.items():
            assert not k.startswith("on"), (tag, k)  # no inline event handlers
            if k in ("src", "href"):
                assert v.startswith("data:image/png;base64,"), (tag, k, v[:40])
    imgs = [a["src"] for tag, a in t.tags if tag == "img"]
    assert len(imgs) == 4
    for src in imgs:
        png = base64.b64decode(src.split(",", 1)[1], validate=True)
        w, h = _png_size(png)
        assert 100 <= w <= 1200 and 100 <= h <= 2000


def test_header_and_sections(report, fast_figures):
    doc = render_html(report)
    text = htmlmod.unescape(" ".join(_parse(doc).text))
    assert '<div class="word">fail</div>' in doc
    assert "2.50e-12" in text  # combined p
    for piece in ("file", "stream.bin", "<u4", "1,048,576 bytes", "9f" * 32, "0.01", "3.25 s", "1 MiB"):
        assert piece in text, piece
    assert "incomplete" not in text
    assert "the stream ended before the budget" in text
    for caution in CAUTIONS:
        assert caution in text
    assert text.count("uniforms") >= 4  # plan table rows show the view


def test_incomplete_marker(report, fast_figures):
    report.incomplete = True
    text = " ".join(_parse(render_html(report)).text)
    assert "incomplete" in text


def test_check_table_worst_first_with_rounds(report, fast_figures):
    doc = render_html(report)
    table = doc[doc.index('<table class="checks">'): doc.index("</table>")]
    order = [table.index(htmlmod.escape(c.id)) for c in report.worst_first()]
    assert order == sorted(order)
    # worst first: the two fails (smallest p first), then the notable, then the pass
    assert [c.id for c in report.worst_first()] == [
        "coupon collector d=8", "gap [0, 0.5) t=16", "runs up", "serial d=3 overlapping"]
    assert "rounds (p, replicates)" in table
    assert "2.00e-03 (8\u00d7) \u2192 3.20e-09 (16\u00d7)" in table
    assert "9.60e-09" in table  # Holm-adjusted p
    assert "t=16, lo=0, hi=0.5" in table
    assert not re.search(r">\s*0(\.0+)?\s*<", table)  # no p-value (or anything) printed as a bare 0
    for g in ("pass", "notable", "fail"):
        assert f'class="grade g-{g}">{g}</span>' in table


def test_rounds_column_only_when_some_check_has_more_than_one(report, fast_figures):
    for c in report.checks:
        c.rounds = c.rounds[-1:]
    assert "rounds (p, replicates)" not in render_html(report)


def test_input_strings_are_escaped(report):
    report.source["name"] = EVIL
    report.source["format"] = EVIL
    report.command = EVIL
    report.checks[0].id = EVIL
    report.checks[1].id = "gap " + EVIL
    report.checks[1].params = {"lo": EVIL}
    report.checks[2].error = EVIL
    report.checks[2].null = '" onmouseover="alert(1)'
    report.notes = [EVIL]
    report.plan[0]["id"] = EVIL
    report.settings = {"label": EVIL}
    doc = render_html(report)
    assert EVIL not in doc
    assert "<script" not in doc.lower()
    escaped = htmlmod.escape(EVIL)  # &lt;script&gt;alert(1)&lt;/script&gt;
    assert doc.count(escaped) >= 9
    t = _parse(doc)
    assert all(tag != "script" for tag, _ in t.tags)
    assert all(not k.startswith("on") for _, a in t.tags for k in a)


def test_zero_and_one_check():
    base = dict(command="test", source={"kind": "builtin", "name": "demo"}, budget_bytes=1024, alpha=0.01)
    doc0 = render_html(Report(verdict="pass", combined_p=None, checks=[], **base))
    assert "No checks ran." in doc0 and doc0.count("data:image/png;base64,") == 4
    one = _check("runs up", 0.3, "pass", _rounds((5, 0.3)))
    doc1 = render_html(Report(verdict="pass", combined_p=0.3, checks=[one], **base))
    assert "runs up" in doc1 and "rounds (p, replicates)" not in doc1


# -- figures --------------------------------------------------------------------------------------------------
def test_holm_adjust_worked_example():
    # Worked by hand from Holm (1979), Scand. J. Statist. 6:65-70, step-down definition:
    # sorted p = .005, .01, .03, .04 (m = 4) -> 4*.005=.02, 3*.01=.03, 2*.03=.06, 1*.04=.04 -> running max
    adj = figures.holm_adjust([0.01, 0.04, 0.03, 0.005])
    np.testing.assert_allclose(adj, [0.03, 0.06, 0.06, 0.02])
    # at alpha = .05 the first two sorted p-values are rejected (k = 2): cut = alpha / (m - k + 1) = .05/3
    assert figures.holm_threshold([0.01, 0.04, 0.03, 0.005], 0.05) == pytest.approx(0.05 / 3)
    # no rejection: the cut is the first step, alpha / m
    assert figures.holm_threshold([0.5, 0.9], 0.05) == pytest.approx(0.025)
    assert figures.holm_threshold([], 0.05) is None


def test_holm_threshold_separates_exactly_the_rejections():
    rng = np.random.default_rng(11)
    for _ in range(50):
        p = np.concatenate([rng.random(20), 10.0 ** -rng.uniform(0, 6, 5)])
        alpha = 0.01
        cut = figures.holm_threshold(p, alpha)
        rejected = figures.holm_adjust(p) <= alpha
        np.testing.assert_array_equal(p <= cut, rejected)


def test_figures_with_extreme_and_missing_values(report):
    report.checks[0].rounds[0].replicate_p[0] = float("nan")
    report.checks[0].p_value = float("nan")
    for name, png in figures.all_figures(report).items():
        w, h = _png_size(png)
        assert w > 0 and h > 0, name
    p, bad = figures.replicate_pvalues(report)
    assert bad == 1 and p.min() == figures.P_FLOOR and np.isfinite(p).all()


def test_figures_zero_and_one_check():
    empty = Report(command="t", source={}, budget_bytes=1, alpha=0.01, verdict="pass", combined_p=None, checks=[])
    one = Report(command="t", source={}, budget_bytes=1, alpha=0.01, verdict="pass", combined_p=0.5,
                 checks=[_check("runs up $x$", 0.5, "pass", _rounds((3, 0.5)))])
    no_reps = Report(command="t", source={}, budget_bytes=1, alpha=0.01, verdict="pass", combined_p=0.5,
                     checks=[_check("runs up", 0.5, "pass", [])])
    for r in (empty, one, no_reps):
        for png in figures.all_figures(r).values():
            assert png[:8] == PNG_MAGIC


def test_histogram_counts_all_replicates(report):
    p, bad = figures.replicate_pvalues(report)
    assert bad == 0
    assert p.size == sum(len(r.replicate_p) for c in report.checks for r in c.rounds) == 8 + 24 + 24 + 4


def test_many_checks_stay_bounded():
    rng = np.random.default_rng(5)
    checks = [_check(f"linear complexity M=500 lane={i}", float(rng.random()), "pass", _rounds((30, 0.5), seed=i),
                     family="linear complexity") for i in range(200)]
    r = Report(command="t", source={}, budget_bytes=1, alpha=0.01, verdict="pass", combined_p=0.5, checks=checks)
    w, h = _png_size(figures.evidence_by_family(r))
    assert h <= figures.DPI * 3.7 + 1  # the summary figure does not grow with the number of checks
    w, h = _png_size(figures.replicate_heatmap(r))
    assert h <= figures.DPI * (2.3 + 0.15 * figures.MAX_ROWS) + 1


def test_control_characters_never_reach_the_html_raw():
    # a file name with ESC and a bell in it (wave 2b): shown escaped in the page
    from rngassay.report.html import _e

    assert _e("a\x1b[31mb\x07c<") == "a\\x1b[31mb\\x07c&lt;"
    assert "\x1b" not in _e("x\x1by") and _e("plain") == "plain"


def test_fixed_samples_are_listed_once_with_their_reason_and_escaped(report, fast_figures):
    assert "fixed sample" not in render_html(report)  # no block check in the plan: no list
    report.plan.append({"id": "linear complexity M=500", "key": "linear complexity", "family": "bits",
                        "params": {"M": 500}, "view": "bits", "bytes": 512000, "replicates": 4,
                        "sample": "at most 8192 blocks <of> M=500 bits"})
    report.plan.append({"id": "linear complexity M=500 window=x", "key": "linear complexity", "family": "bits",
                        "params": {"M": 500}, "view": "bits", "bytes": 512000, "replicates": 4,
                        "sample": "at most 8192 blocks <of> M=500 bits"})
    out = render_html(report)
    assert "read a fixed sample" in out
    assert out.count("at most 8192 blocks &lt;of&gt; M=500 bits") == 1  # one line per check key, escaped
