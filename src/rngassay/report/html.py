"""The HTML report: one self-contained file.

Figures are embedded as base64 ``data:`` URIs and the style sheet is inline; the page loads nothing from
outside and runs no script (a Content-Security-Policy in the page says so to the browser as well). Every
string that came from the input or the run (source names, paths, check ids, parameters, notes, errors) goes
through :func:`html.escape` before it is written.
"""

from __future__ import annotations

import base64
import html
import math
from typing import Any

from ..sizes import format_size
from ..model import GRADES, CheckReport, Report, is_left_out_note
from .stages import alpha_text, stage_lines
from .findings import findings_html

P_TINY = 1e-300


def format_p(p: float | None) -> str:
    """A p-value in scientific notation with 3 significant digits, never shown as 0.

    None -> "—" (not computed); NaN/inf -> "n/a"; p <= 0 (an underflow) -> "< 1e-300".
    """
    if p is None:
        return "\u2014"
    try:
        p = float(p)
    except (TypeError, ValueError):
        return "n/a"
    if not math.isfinite(p):
        return "n/a"
    if p < P_TINY:  # at the floor (2.2e-308 times a small factor): the exact figure means nothing
        return f"< {P_TINY:.0e}"
    return f"{p:.2e}"


def format_params(params: Any) -> str:
    """Parameters as ``key=value`` pairs separated by commas (not escaped)."""
    if isinstance(params, dict):
        return ", ".join(f"{k}={_value(v)}" for k, v in params.items())
    return "" if params is None else str(params)


def _value(v: Any) -> str:
    if isinstance(v, float):
        return f"{v:g}"
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    return str(v)


def format_count(n: Any) -> str:
    """An exact byte count with thousands separators."""
    try:
        return f"{int(n):,}"
    except (TypeError, ValueError):
        return str(n)


def _e(x: Any) -> str:
    """Escaped for HTML; control characters (from file names, generator names) shown escaped, never raw."""
    t = "" if x is None else str(x)
    if not t.isprintable():
        t = "".join(ch if ch.isprintable() or ch in "\n" else ch.encode("unicode_escape", "backslashreplace")
                    .decode("ascii") for ch in t)
    return html.escape(t, quote=True)


def _bytes_cell(n: Any) -> str:
    try:
        human = format_size(int(n)) if int(n) > 0 else ""
    except (TypeError, ValueError):
        human = ""
    small = f"<br><small>{_e(human)}</small>" if human and not human.endswith(" B") else ""
    return f'<td class="num">{_e(format_count(n))}{small}</td>'


def _grade_cell(grade: str) -> str:
    cls = f"g-{grade}" if grade in GRADES else "g-other"
    return f'<td><span class="grade {cls}">{_e(grade)}</span></td>'


_CSS = """
.wide { overflow-x: auto; }  /* a narrow window scrolls the tables instead of cutting them */
:root { --ink:#1f2328; --muted:#5b6570; --line:#d8dde3; --bg:#fbfbfa;
        --pass:#2f7350; --notable:#a86d07; --fail:#a8322b; }
* { box-sizing: border-box; }
body { margin: 0 auto; max-width: 1100px; padding: 1.2rem 1.4rem 3rem; color: var(--ink); background: var(--bg);
       font: 14px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, sans-serif; }
h1 { font-size: 1.25rem; margin: 0 0 .2rem; }
h2 { font-size: 1.05rem; margin: 2rem 0 .6rem; padding-bottom: .2rem; border-bottom: 1px solid var(--line); }
.banner { display: flex; gap: 1.5rem; align-items: center; padding: .9rem 1.1rem; border-radius: 6px;
          border: 1px solid var(--line); background: #fff; }
.banner .word { font-size: 2rem; font-weight: 700; letter-spacing: .02em; }
.banner.v-pass .word { color: var(--pass); } .banner.v-notable .word { color: var(--notable); }
.banner.v-fail .word { color: var(--fail); }
.banner.v-pass { border-left: 8px solid var(--pass); } .banner.v-notable { border-left: 8px solid var(--notable); }
.banner.v-fail { border-left: 8px solid var(--fail); }
.banner .facts { color: var(--muted); }
.incomplete { margin: .8rem 0; padding: .6rem .9rem; background: #fff4d6; border: 1px solid #e7c66a; border-radius: 6px; }
dl.kv { display: grid; grid-template-columns: max-content 1fr; gap: .15rem 1rem; margin: 0; }
dl.kv dt { color: var(--muted); } dl.kv dd { margin: 0; overflow-wrap: anywhere; }
code, .mono { font-family: ui-monospace, "SFMono-Regular", Menlo, Consolas, monospace; font-size: .92em; }
table { border-collapse: collapse; width: 100%; background: #fff; }
th, td { text-align: left; padding: .3rem .5rem; border-bottom: 1px solid var(--line); vertical-align: top; }
th { font-weight: 600; color: var(--muted); font-size: .9em; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td small { color: var(--muted); }
tr.err td { color: var(--fail); font-size: .92em; border-top: 0; }
.grade { display: inline-block; min-width: 5.5em; text-align: center; padding: 0 .4em; border-radius: 3px;
         color: #fff; font-size: .9em; }
.g-pass { background: var(--pass); } .g-notable { background: var(--notable); }
.g-fail { background: var(--fail); } .g-other { background: var(--muted); }
.figs { display: grid; grid-template-columns: 1fr 1fr; gap: 1rem; }
figure { margin: 0; padding: .6rem; background: #fff; border: 1px solid var(--line); border-radius: 6px; }
figure.wide { grid-column: 1 / -1; }
figure img { max-width: 100%; height: auto; display: block; margin: 0 auto; }
figcaption { color: var(--muted); font-size: .88em; margin-top: .4rem; }
ul.cautions { margin: .6rem 0 0; padding-left: 1.2rem; color: var(--muted); font-size: .88em; }
ul.cautions li { margin-bottom: .1rem; }
details { margin: .2rem 0; } details > summary { cursor: pointer; color: var(--muted); padding: .3rem 0; }
details[open] > summary { margin-bottom: .4rem; }
ol.marks, ul.marks { columns: 2 28em; column-gap: 2rem; margin: .6rem 0 0; font-size: .92em; }
ol.marks li, ul.marks li { break-inside: avoid; margin-bottom: .15rem; overflow-wrap: anywhere; }
small.regular { color: #2c5d8f; } p.marks-head { margin: .6rem 0 .2rem; color: var(--muted); }
@media (max-width: 600px) {
  body { padding: .8rem .7rem 2rem; }
  .banner { flex-direction: column; align-items: flex-start; gap: .3rem; }
  dl.kv { grid-template-columns: 1fr; } dl.kv dt { margin-top: .35rem; }
  .figs { grid-template-columns: 1fr; }
  figure.wide { overflow-x: auto; } figure.wide img { max-width: none; width: 680px; }
}
table.left-out td:last-child { overflow-wrap: anywhere; } table.left-out td:first-child { width: 30%; min-width: 9em; }
h3 { font-size: .95rem; margin: 1.2rem 0 .4rem; }
footer { margin-top: 2.5rem; color: var(--muted); font-size: .85em; }
"""

_CSP = "default-src 'none'; img-src data:; style-src 'unsafe-inline'"


def _img(png: bytes, alt: str) -> str:
    data = base64.b64encode(png).decode("ascii")
    return f'<img src="data:image/png;base64,{data}" alt="{_e(alt)}">'


def _verdict(r: Report) -> list[str]:
    """The title, the verdict banner (with when the report was made), the incomplete marker and the cautions."""
    src = r.source or {}
    verdict = r.verdict if r.verdict in GRADES else "other"
    counts = {g: sum(1 for c in r.checks if c.grade == g) for g in GRADES}
    tally = ", ".join(f"{counts[g]} {g}" for g in GRADES)
    made = (r.audit or {}).get("ended_utc") or (r.audit or {}).get("started_utc")
    out = [
        f"<h1>rngassay report: {_e(src.get('name', 'unnamed source'))}</h1>",
        f'<section class="banner v-{verdict}" aria-label="verdict">',
        f'<div class="word">{_e(r.verdict)}</div>',
        '<div class="facts">',
        f"<div>{len(r.checks)} checks: {_e(tally)}; {_e(alpha_text(r))}</div>",
        f"<div>combined p = <strong>{_e(format_p(r.combined_p))}</strong> <small>({_e(r.combined_method)})</small></div>",
        f"<div><small>{_e(_command_label(r.command))}"
        + (f"; report made {_e(made)} UTC" if made else "") + "</small></div>",
        "</div></section>",
    ]
    if r.incomplete:
        from .trail import completed_text

        done = completed_text(r)
        out.append(
            '<div class="incomplete"><strong>incomplete</strong> \u2014 the run stopped early'
            + (f" ({_e(done)} of what was planned)" if done else "")
            + "; this report covers only the checks that finished, and the verdict rests on them alone.</div>"
        )
    if r.cautions:
        out.append('<ul class="cautions" aria-label="cautions">' + "".join(f"<li>{_e(c)}</li>" for c in r.cautions)
                   + "</ul>")
    return out


_COMMANDS = {"test": "stream assay (rngassay test)", "fit": "conformance to a declared law (rngassay fit)",
             "seeds": "seed sweep (rngassay seeds)"}


def _command_label(command: str) -> str:
    return _COMMANDS.get(command, f"rngassay {command}")


def _bytes_text(n: Any) -> str:
    if n is None:
        return "\u2014"
    try:
        human = format_size(int(n)) if int(n) > 0 else ""
    except (TypeError, ValueError):
        return _e(n)
    return _e(f"{format_count(n)} bytes" + (f" ({human})" if human and not human.endswith(" B") else ""))


def _rounds_text(c: CheckReport) -> str:
    return " \u2192 ".join(f"{format_p(rd.p_value)} ({rd.replicates}\u00d7)" for rd in c.rounds)


OPEN_UP_TO = 20  # the checks table starts open when it has at most this many rows


def _p_cell(c: CheckReport, side: int) -> str:
    mark = '<br><small class="regular">left tail</small>' if side < 0 else ""
    return f'<td class="num">{_e(format_p(c.p_value))}{mark}</td>'


def _check_table(r: Report) -> list[str]:
    if not r.checks:
        return ['<section id="checks">', "<h2>Checks</h2>", "<p>No checks ran.</p>", "</section>"]
    from .figures import regular_side

    show_rounds = any(len(c.rounds) > 1 for c in r.checks)
    # text: amounts are values, not bytes (a fit counts the bytes of its file and of the transformed values)
    text = str(r.source.get("format", "")).startswith("text") and r.command != "fit"
    unit = "values in all" if text else "bytes in all"
    head = ["check", "family", "parameters", "p-value", "Holm-adjusted p", "grade", unit, "replicates"]
    if show_rounds:
        head.append("rounds (p, replicates)")
    num = {"p-value", "Holm-adjusted p", unit, "replicates"}
    n = len(r.checks)
    bad = sum(1 for c in r.checks if c.grade != "pass")
    out = [
        '<section id="checks">',
        "<h2>Checks</h2>",
        f'<details class="checks"{" open" if n <= OPEN_UP_TO else ""}>',
        f"<summary>All {n} checks, worst first ({bad} not passing); amounts are {_e(unit)} (every round)</summary>",
        "<div class=\"wide\"><table class=\"checks\"><thead><tr>"
        + "".join(f'<th class="num">{h}</th>' if h in num else f"<th>{h}</th>" for h in head)
        + "</tr></thead><tbody>",
    ]
    for c in r.worst_first():
        tip = " \u2014 ".join(x for x in (c.title, f"null: {c.null}" if c.null else "") if x)
        cells = [
            f'<td class="mono" title="{_e(tip)}">{_e(c.id)}</td>',
            f"<td>{_e(c.family)}</td>",
            f'<td class="mono">{_e(format_params(c.params))}</td>',
            _p_cell(c, regular_side(c)[0]),
            f'<td class="num">{_e(format_p(c.adjusted_p))}</td>',
            _grade_cell(c.grade),
            f'<td class="num">{_e(format_count(c.bytes))}</td>' if text else _bytes_cell(c.bytes),
            f'<td class="num">{_e(c.replicates)}</td>',
        ]
        if show_rounds:
            cells.append(f"<td class=\"mono\">{_e(_rounds_text(c)) if len(c.rounds) > 1 else ''}</td>")
        out.append("<tr>" + "".join(cells) + "</tr>")
        if c.error:
            out.append(f'<tr class="err"><td colspan="{len(head)}">could not run: {_e(c.error)}</td></tr>')
    out += ["</tbody></table></div>", "</details>", "</section>"]
    return out


_CAPTIONS = {
    "summary": (
        "Evidence per check, by family",
        "One bar per check, grouped by family in the order the checks ran; its height is \u2212log10 of the "
        "check's p-value. Bars up: the statistic is larger than chance allows (the usual side: more deviation "
        "than chance). Bars down: the left tail \u2014 the statistic is smaller than chance allows: the data "
        "are too regular, or an event comes too seldom (a p-value near 1 on the usual side). Colour is the "
        "grade; the dashed lines are the run's alpha and the dotted lines the cut of Holm's step-down procedure across all checks, on both sides. When few checks fail, numbers "
        "mark them as listed below the figure.",
    ),
    "fit_qq": (
        "Values against the declared law: quantiles",
        "Continuous law: each sample quantile against the declared law's quantile at the same probability, "
        "with a pointwise 95% band; points off the line and outside the band at an end mean the tails "
        "differ from the declared law. Discrete law: the observed cumulative proportion against the declared "
        "distribution function, outcome by outcome (a P-P plot).",
    ),
    "fit_histogram": (
        "Values against the declared law: counts",
        "Continuous law: the values in 40 equal bins between the sample's 0.1% and 99.9% quantiles, with the "
        "count the declared law expects in each bin (the line); counts outside the bins are in the corner. "
        "Discrete law: each outcome's count with the count the declared law expects.",
    ),
    "heatmap": (
        "Replicates by check, both tails",
        "Rows are checks (worst first), columns their replicates over all rounds. Red: a small replicate "
        "p-value; blue: a p-value near 1 (too regular); white: unremarkable; grey: no replicate there (the "
        "check ran fewer replicates or rounds). A discrete check's p-values near 1 stay white (a count of "
        "zero gives p = 1 often by chance). Failing checks marked \u25bc left tail have their evidence there (statistic too small); "
        "where such a check tests both tails its replicate p-values are two-sided and its small ones are "
        "drawn blue. A red column shared by many checks points at one bad segment of the stream. At most "
        "40 checks are shown, worst first.",
    ),
    "histogram": (
        "Histogram of replicate p-values",
        "All first-level replicate p-values in 20 bins; the dashed line is the count expected per bin if they "
        "are uniform. A pile-up near 0 means evidence against randomness; a pile-up near 1 (or a gap) can mean "
        "a stream that is too regular, or a discrete statistic.",
    ),
    "qq": (
        "Uniform Q-Q plot",
        "Sorted replicate p-values against their expected uniform positions, with a pointwise 95% band. "
        "Points below the band at the left mean too many small p-values; above it at the right, too many "
        "near 1.",
    ),
}
WIDE_FIGURES = ("summary", "heatmap")


def _figure_html(name: str, png: bytes) -> str:
    title, caption = _CAPTIONS[name]
    cls = ' class="wide"' if name in WIDE_FIGURES else ""
    return (f'<figure id="fig-{name}"{cls}>{_img(png, title)}<figcaption><strong>{_e(title)}.</strong> '
            f"{_e(caption)}</figcaption></figure>")


def _summary(r: Report, figs: dict[str, bytes]) -> list[str]:
    """The summary figure and the key to its numbered checks."""
    from .figures import MAX_NUMBERED, marked_checks, regular_side

    out = ['<section id="summary">', "<h2>Evidence at a glance</h2>", _figure_html("summary", figs["summary"])]
    marks = marked_checks(r)
    if marks:
        bad = sum(1 for c in r.checks if c.grade in ("fail", "notable"))
        numbered = bad <= MAX_NUMBERED
        out.append(f"<p class=\"marks-head\">{'Numbered in the figure' if numbered else 'Strongest evidence'}"
                   f" ({len(marks)} of {bad} failing or notable):</p>")
        out.append(f'<{"ol" if numbered else "ul"} class="marks">')
        for c in marks:
            side = " \u2014 left tail (statistic too small)" if regular_side(c)[0] < 0 else ""
            out.append(f'<li><span class="mono">{_e(c.id)}</span>: p = {_e(format_p(c.p_value))}, '
                       f'<span class="grade g-{_e(c.grade)}">{_e(c.grade)}</span>{_e(side)}</li>')
        out.append(f'</{"ol" if numbered else "ul"}>')
    out.append("</section>")
    return out


def _other_figures(figs: dict[str, bytes]) -> list[str]:
    rest = [(k, v) for k, v in figs.items() if k != "summary"]
    return (['<section id="figures">', "<h2>Figures</h2>", '<div class="figs">']
            + [_figure_html(k, v) for k, v in rest] + ["</div>", "</section>"])


def _plan(r: Report) -> list[str]:
    if not r.plan:
        return []
    text = str(r.source.get("format", "")).startswith("text") and r.command != "fit"
    unit = "values per replicate" if text else "bytes per replicate"
    out = [
        '<section id="plan">',
        "<h2>Plan</h2>",
        f'<details class="plan"{" open" if len(r.plan) <= OPEN_UP_TO else ""}>',
        f"<summary>{len(r.plan)} planned checks with their parameters; amounts are {unit}</summary>",
        "<div class=\"wide\"><table class=\"plan\"><thead><tr><th>check</th><th>family</th><th>parameters</th><th>view</th>"
        f'<th class="num">{unit}</th><th class="num">replicates</th></tr></thead><tbody>',
    ]
    for item in r.plan:
        item = item if isinstance(item, dict) else {"id": item}
        out.append(
            "<tr>"
            f'<td class="mono">{_e(item.get("id", ""))}</td>'
            f"<td>{_e(item.get('family', ''))}</td>"
            f'<td class="mono">{_e(format_params(item.get("params", {})))}</td>'
            f"<td>{_e(item.get('view', ''))}</td>"
            f"{_bytes_cell(item.get('bytes', ''))}"
            f'<td class="num">{_e(item.get("replicates", ""))}</td>'
            "</tr>"
        )
    out += ["</tbody></table></div>", "</details>"]
    fixed: dict[str, str] = {}
    for item in r.plan:
        if isinstance(item, dict) and item.get("sample"):
            fixed.setdefault(str(item.get("key") or item.get("id", "")), str(item["sample"]))
    if fixed:
        out.append("<p>Block checks read a fixed sample (at most this much, however large the budget):</p>")
        out.append('<ul class="samples">' + "".join(f"<li><b>{_e(k)}</b>: {_e(v)}</li>" for k, v in fixed.items())
                   + "</ul>")
    out.append("</section>")
    return out


def _run(r: Report) -> list[str]:
    """The Run section: the source and the settings in words (see :mod:`.run_text`)."""
    from .run_text import run_rows

    mono_dd = '<dd class="mono">'
    rows = [f"<dt>{_e(k)}</dt>{mono_dd if mono else '<dd>'}{_e(v)}</dd>" for k, v, mono in run_rows(r)]
    return ['<section id="run">', "<h2>Run settings</h2>", '<dl class="kv run">'] + rows + ["</dl>", "</section>"]


def _audit(r: Report) -> list[str]:
    """The audit trail: how the run was started, when, versions, seeds, selection, and the checks left out."""
    from . import trail as T

    a = r.audit or {}
    if not a:
        return []
    label = "Command line" if a.get("argv") else "Called as"
    rows = [(label, f'<span class="mono">{_e(T.command_text(a))}</span>'),
            ("Started (UTC)", _e(a.get("started_utc", ""))), ("Ended (UTC)", _e(a.get("ended_utc", "")))]
    v = a.get("versions") or {}
    rows.append(("Versions", _e(", ".join(f"{name} {v[k]}" for k, name in T.VERSION_NAMES if k in v))))
    rows += [("Seed", _e(t)) for t in T.seed_texts(a)] or [("Seed", "no seeded source")]
    rows.append(("Selection", _e(T.selection_text(a))))
    done = T.completed_text(r)
    if done:
        rows.append(("Completed of planned", _e(done)))
    out = ['<section id="audit">', "<h2>Audit trail</h2>", '<dl class="kv audit">']
    out += [f"<dt>{k}</dt><dd>{v}</dd>" for k, v in rows] + ["</dl>"]
    left = a.get("left_out") or []
    if left:
        out.append(f"<h3>Checks left out ({len(left)})</h3>")
        out.append('<div class="wide"><table class="left-out"><thead><tr><th>reason</th><th class="num">checks</th>'
                   "<th>which</th></tr></thead><tbody>")
        for why, checks in T.left_out_groups(left):
            out.append(f"<tr><td>{_e(why)}</td><td class=\"num\">{len(checks)}</td>"
                       f"<td class=\"mono\">{_e('; '.join(checks))}</td></tr>")
        out.append("</tbody></table></div>")
    out.append("</section>")
    return out


def _list(title: str, items: list[str], cls: str = "") -> list[str]:
    if not items:
        return []
    c = f' class="{cls}"' if cls else ""
    return [f"<h2>{title}</h2>", f"<ul{c}>"] + [f"<li>{_e(x)}</li>" for x in items] + ["</ul>"]


def render_html(report: Report) -> str:
    """Render the report as one self-contained HTML page (no external resources, no scripts), in this order:
    the verdict with its cautions; the findings block (when there is one); the summary figure; the other
    figures; the checks table (folded when long); the plan; the run settings; the audit trail; notes."""
    from . import figures  # matplotlib is imported only when figures are drawn

    r = report
    name = (r.source or {}).get("name", "unnamed source")
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        f'<meta http-equiv="Content-Security-Policy" content="{_CSP}">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>rngassay report \u2014 {_e(r.verdict)} \u2014 {_e(name)}</title>",
        f"<style>{_CSS}</style></head><body>",
    ]
    parts += _verdict(r)
    parts += _list("Growth to a decision", stage_lines(r))  # a --grow-to run: its stages, where it stopped
    parts.append(findings_html(r))  # what was found, in words (report/findings.py)
    figs = figures.all_figures(r)
    parts += _summary(r, figs)
    parts += _other_figures(figs)
    parts += _check_table(r)
    parts += _plan(r)
    parts += _run(r)
    parts += _audit(r)
    parts += _list("Notes", [n for n in r.notes if not (r.audit and is_left_out_note(n))])
    parts.append(
        f"<footer>rngassay {_e(r.tool_version)} \u00b7 report schema {_e(r.schema)}</footer>"
    )
    parts.append("</body></html>")
    return "\n".join(parts) + "\n"
