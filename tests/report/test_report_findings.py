"""Findings in words through the battery and every renderer: the report model (JSON round trip), the terminal
block, JUnit properties and system-out, and the HTML section (see report/findings.py for when they are shown)."""

from __future__ import annotations

import json
import xml.etree.ElementTree as ET

import numpy as np

import rngassay
from rngassay.battery.findings import SAMPLE_BYTES, SampleTap, collect
from rngassay.intake.formats import parse_format
from rngassay.model import Report
from rngassay.report.findings import findings_html
from rngassay.report.html import render_html
from rngassay.report.junit import render_junit
from rngassay.report.terminal import render


def _lcg32_report() -> Report:
    return rngassay.assay(gen="lcg32", seed=3, fmt="<u4", budget="1MiB", workers=1,
                          checks=["monobit frequency", "byte frequency"])


def test_battery_files_the_findings_of_the_first_segment():
    r = _lcg32_report()
    lane = next(f for f in r.findings if f["kind"] == "lane" and f["test"] == "periodic")
    assert lane["stats"]["periods"][0] == 2 and lane["stats"]["lanes"][0] == 0
    assert lane["sample"].startswith("the first ") and lane["alpha"] == 1e-6 and lane["tests"] > 100
    # JSON round trip keeps them
    back = Report.from_dict(json.loads(r.to_json()))
    assert back.findings == json.loads(json.dumps(r.findings))


def test_sound_run_has_no_findings_and_shows_nothing():
    r = rngassay.assay(np.random.Generator(np.random.PCG64(20261203)), budget="1MiB", workers=1,
                       checks=["monobit frequency"])
    assert r.findings == []
    assert "findings" not in render(r)
    assert findings_html(r) == "" and 'class="findings"' not in render_html(r)
    props = {p.get("name"): p.get("value") for p in ET.fromstring(render_junit(r).split("\n", 1)[1]).iter("property")}
    assert props["findings"] == "0"


def test_renderers_show_the_findings():
    r = _lcg32_report()
    text = render(r)
    assert "\nfindings     the first " in text and "bit 0 every 2" in text
    assert "lanes: bit 0 = least significant bit of each <u4 value" in text
    # the block sits under the check table, above the verdict
    assert text.index("findings ") < text.index("verdict ")
    page = render_html(r)
    assert page.index('class="findings"') < page.index("<h2>Checks</h2>")  # right after the verdict
    assert "bit 0 every 2" in page and "What was found" in page
    xml = render_junit(r)
    props = {p.get("name"): p.get("value") for p in ET.fromstring(xml.split("\n", 1)[1]).iter("property")}
    assert int(props["findings"]) == len(r.findings) >= 1
    assert any("bit 0 every 2" in v for k, v in props.items() if k.startswith("finding."))
    assert "findings (the first" in xml


def test_tap_keeps_only_the_first_segment_capped():
    class Fake:
        fmt = parse_format("<u4")

        def __init__(self):
            self.calls = 0

        def read_values(self, n):
            self.calls += 1
            return np.full(n, self.calls, dtype=np.uint32)

    tap = SampleTap(Fake())
    tap.read_values(SAMPLE_BYTES)  # more values than the cap
    tap.read_values(10)
    assert tap.sample is not None and tap.sample.size == SAMPLE_BYTES // 4 and set(tap.sample.tolist()) == {1}
    assert tap.calls == 2  # attributes pass through to the stream


def test_a_failing_search_is_a_note_not_a_crash():
    tap = SampleTap(None)
    tap.sample = np.array(["not", "numbers"])  # nonsense the search cannot handle
    found, note = collect(tap, parse_format("<u4"))
    assert found == [] and note is not None and note.startswith("findings: the search failed")
