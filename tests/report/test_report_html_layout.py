"""The HTML report's layout (verdict first, then pictures, then folded tables, run settings and the audit
trail), both tails in the figures, the Run section in words, and the fit pictures."""

from __future__ import annotations

import html as htmlmod
import json
import re
from html.parser import HTMLParser

import numpy as np
import pytest
from matplotlib.colors import to_rgba
from scipy import stats as sstats

from rngassay import api
from rngassay.checks.transform.picture import continuous_picture, discrete_picture
from rngassay.model import CheckReport, Report, Round
from rngassay.report import figures
from rngassay.report.html import OPEN_UP_TO, render_html
from rngassay.report.run_text import human, run_rows

EVIL = "<script>alert(1)</script>"
QUOTES = "a\"b'c"


class _Doc(HTMLParser):
    """Section ids in order, <details> with their open flag and the sections they sit in, and visible text per
    section."""

    def __init__(self):
        super().__init__()
        self.sections: list[str] = []
        self.details: list[tuple[str, bool]] = []
        self.text: dict[str, list[str]] = {}
        self.tags: list[str] = []
        self._cur = "top"
        self._skip = 0

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.append(tag)
        if tag == "section":
            self._cur = a.get("id") or a.get("aria-label") or "?"
            self.sections.append(self._cur)
        if tag == "details":
            self.details.append((self._cur, "open" in a))
        self._skip += tag in ("style", "title")

    def handle_endtag(self, tag):
        self._skip -= tag in ("style", "title")

    def handle_data(self, data):
        if not self._skip:
            self.text.setdefault(self._cur, []).append(data)

    def section_text(self, name: str) -> str:
        return htmlmod.unescape(" ".join(self.text.get(name, [])))


def _parse(doc: str) -> _Doc:
    d = _Doc()
    d.feed(doc)
    d.close()
    return d


def _row(cid, p, grade, reps, kind="continuous", second_level=None, family="classic"):
    rd = Round(replicates=len(reps), bytes=1024 * len(reps), p_value=p, replicate_p=list(reps))
    return CheckReport(id=cid, key=cid.split()[0], family=family, params={"t": 4}, view="uniforms", kind=kind,
                       statistic=1.0, p_value=p, grade=grade, bytes=rd.bytes, replicates=len(reps),
                       adjusted_p=min(1.0, p * 3), second_level=dict(second_level or {}), rounds=[rd])


def _report(n_checks: int = 3) -> Report:
    rng = np.random.default_rng(8)
    checks = [
        # p near 1 on the usual side in every replicate: the uniformity test of the replicate p-values fails
        _row("runs up", 1e-9, "fail", [0.9999999, 0.999999, 0.99999, 0.999995],
             second_level={"uniformity": {"p_value": 1e-9}, "min_replicate": {"p_value": 0.99}}),
        # a both-tails check whose pooled count is far too small (left tail)
        _row("collision d=1024", 1e-12, "fail", [1e-4, 1e-5, 1e-3, 1e-4], kind="discrete",
             second_level={"pooled": {"p_right": 1.0, "p_left": 5e-13, "p_value": 1e-12},
                           "min_replicate": {"p_value": 4e-5}}),
        # the usual side: small p
        _row("gap a=0 b=0.5", 1e-10, "fail", [1e-11, 1e-3, 0.2, 0.4],
             second_level={"min_replicate": {"p_value": 1e-10}}),
    ]
    for i in range(n_checks - 3):
        checks.append(_row(f"serial d={i + 2}", float(rng.uniform(0.1, 1)), "pass", rng.random(4).tolist(),
                           family="bits"))
    return Report(command="test", source={"kind": "builtin", "name": "lcg demo", "format": "u1",
                                          "bytes_read": 4 << 20, "sha256": "ab" * 32},
                  budget_bytes=4 << 20, alpha=1e-3, verdict="fail", combined_p=1e-12, checks=checks,
                  elapsed_s=1.5, plan=[{"id": c.id, "family": c.family, "params": c.params, "view": "uniforms",
                                        "bytes": 1 << 20, "replicates": 4} for c in checks],
                  settings={"workers_used": 1, "segments": 4, "notable_factor": 10.0,
                            "shared_segments": True, "detail": {"a": None, "b": [1, 2]}},
                  audit={"invocation": "command line", "argv": ["rngassay", "test"], "started_utc": "2030-01-02T03:04:05Z",
                         "ended_utc": "2030-01-02T03:04:09Z", "versions": {"rngassay": "0"}, "seeds": [],
                         "selection": {}, "left_out": [], "completed": []})


# -- order and structure ------------------------------------------------------------------------------------------
def test_sections_come_in_order_with_the_verdict_and_cautions_first():
    r = _report()
    doc = render_html(r)
    d = _parse(doc)
    assert d.sections == ["verdict", "summary", "figures", "checks", "plan", "run", "audit"]
    first = doc[: doc.index('<section id="summary">')]
    assert '<div class="word">fail</div>' in first
    assert all(htmlmod.escape(c) in first for c in r.cautions)  # the cautions sit by the verdict
    assert "report made 2030-01-02T03:04:09Z UTC" in htmlmod.unescape(first)  # the time stamp
    assert first.index('<div class="word">') < first.index('<ul class="cautions"')
    assert doc.count("data:image/png;base64,") == 4  # summary, heat map, histogram, Q-Q
    # the summary figure is the first picture on the page, before any table
    assert doc.index("data:image/png") > doc.index('<section id="summary">')
    assert doc.index("data:image/png") < doc.index("<table")
    assert "script" not in d.tags


def test_the_tables_fold_into_details_closed_when_long():
    short = _parse(render_html(_report(3)))
    assert ("checks", True) in short.details and ("plan", True) in short.details  # 3 rows: open
    long = _parse(render_html(_report(OPEN_UP_TO + 5)))
    assert ("checks", False) in long.details and ("plan", False) in long.details  # closed by default
    doc = render_html(_report(OPEN_UP_TO + 5))
    table = doc[doc.index('<section id="checks">'):]
    assert table.index("<details") < table.index('<table class="checks">') < table.index("</details>")


def test_units_are_said_in_each_table():
    doc = htmlmod.unescape(render_html(_report()))
    checks = doc[doc.index('<section id="checks">'): doc.index('<section id="plan">')]
    plan = doc[doc.index('<section id="plan">'): doc.index('<section id="run">')]
    assert "bytes in all" in checks and "per replicate" not in checks
    assert "bytes per replicate" in plan and "in all" not in plan


# -- the Run section ----------------------------------------------------------------------------------------------
def test_run_section_has_human_labels_and_no_python_literals():
    d = _parse(render_html(_report()))
    text = d.section_text("run")
    for literal in ("True", "False", "None", "{", "}", "[", "]", "_"):
        assert literal not in text, literal
    for words in ("Worker processes", "Checks share segments",
                  "4,194,304 bytes (4 MiB) in all", "4,194,304 bytes (4 MiB) in all (the checks share it)", "yes",
                  "a: not set; b: 1, 2", "Holm-adjusted p from alpha to 10 \u00d7 alpha"):
        assert words in text, words


def test_human_values():
    assert human(True) == "yes" and human(False) == "no" and human(None) == "not set"
    assert human(1234567) == "1,234,567" and human(20240917, "pit_seed") == "20240917"
    assert human({"segments": 4, "bytes": 160000}) == "Segments (one replicate of each check per segment): 4; bytes: 160,000"
    assert human([]) == "none" and human(0.25) == "0.25"


def test_text_input_counts_values():
    r = _report()
    r.source = {"kind": "file", "name": "die.txt", "format": "text", "bytes_read": 2000, "values": 1000}
    rows = {k: v for k, v, _ in run_rows(r)}
    assert rows["Read"] == "2,000 bytes (1.95 KiB) in all" or rows["Read"].startswith("2,000 bytes")
    assert rows["Values read"] == "1,000 values in all"
    assert rows["Budget"].endswith("values in all (the checks share it)")


# -- both tails ---------------------------------------------------------------------------------------------------
def test_signed_scale_of_the_heat_map():
    np.testing.assert_allclose(figures.signed_evidence([1e-3, 0.5 - 1e-12, 1 - 1e-3, 1.0 - 1e-8]),
                               [3.0, np.log10(2.0), -3.0, -8.0], atol=1e-6)
    assert np.isnan(figures.signed_evidence([np.nan])).all()


def test_which_tail_a_check_lies_in():
    r = _report()
    sides = {c.id: figures.check_side(c) for c in r.checks}
    assert sides["runs up"] == (-1, "replicates")  # replicate p-values piled up near 1
    assert sides["collision d=1024"] == (-1, "pooled")  # pooled count in the left tail
    assert sides["gap a=0 b=0.5"] == (1, "")
    fit_row = _row("tail count q=0.001 side=lower", 2e-6, "fail", [2e-6],
                   second_level={"method": "one sample", "p_right": 1.0, "p_left": 1e-6})
    assert figures.check_side(fit_row) == (-1, "fit")
    one_sided = _row("x", 0.02, "pass", [0.02], second_level={"method": "one sample", "p_right": 0.02, "p_left": 0.98})
    assert figures.check_side(one_sided) == (1, "")


def test_summary_figure_draws_left_tail_checks_downward():
    r = _report()
    fig = figures.evidence_figure(r)
    ax = fig.axes[0]
    bars = [p for p in ax.patches if p.get_height() != 0]
    heights = sorted(p.get_height() for p in bars)
    # runs up (p = 1e-9) and collision (p = 1e-12) down, gap (p = 1e-10) up: -log10 p with the tail's sign
    np.testing.assert_allclose(heights, [-12.0, -9.0, 10.0])
    labels = [t.get_text() for t in ax.get_xticklabels()]
    assert labels == ["classic (3)"]  # grouped by family, with the count
    texts = " ".join(t.get_text() for t in ax.texts)
    assert "left tail" in texts and "small p" in texts  # both directions are named on the figure
    legend = [t.get_text() for lg in fig.legends for t in lg.get_texts()]
    assert {"pass", "notable", "fail"} <= set(legend) and any(t.startswith("alpha") for t in legend)


def test_heat_map_colours_p_near_one_as_the_upper_colour_and_has_a_legend():
    r = _report()
    fig = figures.heatmap_figure(r)
    ax = fig.axes[0]
    im = ax.images[0]
    rows = [t.get_text() for t in ax.get_yticklabels()]
    grid = im.get_array()

    def rgba(row_label_start, col):
        i = next(k for k, t in enumerate(rows) if t.startswith(row_label_start))
        return im.cmap(im.norm(grid[i, col]))

    red, blue = rgba("gap a=0 b=0.5", 0), rgba("runs up", 0)
    assert red[0] > red[2] + 0.2  # p = 1e-11: red
    assert blue[2] > blue[0] + 0.2  # p = 0.9999999: blue, the other tail
    mid = im.cmap(im.norm(figures.signed_evidence(0.5)))
    assert min(mid[:3]) > 0.85  # p = 1/2: near white
    coll = rgba("collision", 1)  # two-sided replicate p of a left-tail check: drawn on the left tail's side
    assert coll[2] > coll[0]
    assert any("left tail" in t for t in rows)
    legend = [t.get_text() for lg in fig.legends for t in lg.get_texts()]
    assert any(t.startswith("grey") for t in legend) and any("p near 1" in t for t in legend)
    assert any("small p" in t for t in legend)
    assert tuple(im.cmap.get_bad()) == to_rgba(figures.NO_DATA)  # grey cells are what the legend says


def test_discrete_p_of_one_is_not_coloured():
    r = _report()
    r.checks = [_row("birthday spacings m=512", 0.9, "pass", [1.0, 1.0, 0.3, 1.0], kind="discrete")]
    im = figures.heatmap_figure(r).axes[0].images[0]
    assert im.get_array()[0, 0] == 0.0


def test_left_tail_checks_are_kept_when_lists_are_cut():
    r = _report(3)
    many = [_row(f"aaa {i}", 1e-20, "fail", [1e-20] * 4, second_level={"min_replicate": {"p_value": 1e-20}})
            for i in range(60)]
    r.checks = many + r.checks
    marked = figures.marked_checks(r)
    assert {"runs up", "collision d=1024"} <= {c.id for c in marked} and len(marked) == 12
    rows = [t.get_text() for t in figures.heatmap_figure(r).axes[0].get_yticklabels()]
    assert len(rows) == figures.MAX_ROWS and sum("left tail" in t for t in rows) == 2


# -- hostile names ------------------------------------------------------------------------------------------------
def test_hostile_strings_are_escaped_everywhere():
    r = _report()
    r.source["name"] = EVIL + QUOTES
    r.source[EVIL] = QUOTES  # an unexpected source key
    r.settings[EVIL] = EVIL
    r.checks[0].id = EVIL + QUOTES
    r.checks[1].id = "$x$ " + EVIL  # mathtext in a label must not break matplotlib
    r.audit["argv"] = ["rngassay", "test", EVIL + QUOTES]
    r.cautions = [EVIL]
    r.plan[0]["id"] = QUOTES + EVIL
    doc = render_html(r)
    assert "<script" not in doc.lower()
    assert 'a"b' not in doc and "b'c" not in doc  # quotes are escaped too (&quot; &#x27;)
    assert doc.count(htmlmod.escape(EVIL)) >= 7
    d = _parse(doc)
    assert "script" not in d.tags


# -- fit pictures -------------------------------------------------------------------------------------------------
def test_continuous_picture_against_scipy():
    # reference: scipy.stats.norm quantile and distribution functions, numpy's sort
    x = np.random.default_rng(1).normal(2.0, 3.0, 5000)
    law = sstats.norm(loc=2.0, scale=3.0)
    pic = continuous_picture(law, x)
    q = pic["qq"]
    n = x.size
    prob = np.asarray(q["probability"])
    ranks = np.rint(prob * (n + 1)).astype(int)
    np.testing.assert_allclose(q["declared"], law.ppf(ranks / (n + 1)), rtol=1e-12)
    np.testing.assert_array_equal(q["sample"], np.sort(x)[ranks - 1])
    assert ranks[0] == 1 and ranks[-1] == n and len(ranks) <= 410  # the extremes are always there
    assert np.all(np.asarray(q["band_low"]) <= np.asarray(q["declared"]))
    assert np.all(np.asarray(q["declared"]) <= np.asarray(q["band_high"]))
    h = pic["histogram"]
    assert sum(h["observed"]) + h["below"]["observed"] + h["above"]["observed"] == n
    edges = np.asarray(h["edges"])
    np.testing.assert_allclose(h["expected"], n * np.diff(law.cdf(edges)), rtol=1e-12)
    np.testing.assert_allclose(sum(h["expected"]) + h["below"]["expected"] + h["above"]["expected"], n, rtol=1e-9)
    # fixed seed: the sample follows its law, so the counts agree with the expected ones to a few sigma
    assert abs(sum(h["observed"]) - sum(h["expected"])) < 5 * np.sqrt(n * 0.002)


def test_discrete_picture():
    pic = discrete_picture(["a", "b", "c"], np.array([5, 3, 2]), np.array([0.5, 0.3, 0.2]))
    assert pic == {"kind": "discrete", "n": 10, "outcomes": ["a", "b", "c"], "observed": [5, 3, 2],
                   "expected": [5.0, 3.0, 2.0]}


@pytest.mark.parametrize("dist, make", [
    ("gamma(a=2)", lambda rng: rng.gamma(2.0, size=3000)),
    ("poisson(mu=3)", lambda rng: rng.poisson(3.0, size=3000)),
])
def test_fit_reports_carry_the_two_pictures(dist, make):
    x = make(np.random.default_rng(5))
    rep = api.fit(x, dist=dist, battery=False)
    assert rep.fit_picture["kind"] == ("continuous" if dist.startswith("gamma") else "discrete")
    again = Report.from_dict(json.loads(rep.to_json()))  # kept in the JSON report
    assert again.fit_picture == json.loads(json.dumps(rep.fit_picture))
    doc = render_html(again)
    figs = re.findall(r'<figure id="fig-([a-z_]+)"', doc)
    assert figs[:3] == ["summary", "fit_qq", "fit_histogram"]
    for name in ("fit_qq", "fit_histogram"):
        i = doc.index(f'id="fig-{name}"')
        assert doc[i: i + 100].count("data:image/png;base64,") == 1
    assert "fit_picture" not in render_html(_report())  # test reports have no fit pictures
    assert not Report.from_dict(json.loads(_report().to_json())).fit_picture


def test_a_fit_of_text_values_counts_bytes_in_the_checks_table():
    r = _report()
    r.command = "fit"
    r.source.update(format="text", values=1000)
    doc = render_html(r)
    table = doc[doc.index('<section id="checks">'): doc.index('<section id="plan">')]
    assert "bytes in all" in table and "values in all" not in table
