"""The top of the HTML page: the verdict against the gate in words (FAIL, PASS, gate not applied with the open
counts), the counts by severity and status, the designs with their files and rule sets, the cautions of declared
hazards, and what could not be evaluated, each linked to where it is shown."""

from __future__ import annotations

import re
from pathlib import Path

from markupsafe import escape
from test_html_report import html_of

from afecheck.report.cautions import cautions

ROOT = Path(__file__).resolve().parents[1]
SOIL = ROOT / "sample_designs" / "soil_probe_reader.yaml"  # 3 errors, as the Markdown headline in the docs says

HAZARD = """\
afecheck: 1
name: mains-side current monitor
ground: GND
hazards: [mains]
rails:
  VCC: {voltage: 5 V, tolerance: 5%}
signals:
  IN: {dc: [1 V, 2 V], band: [1 Hz, 50 Hz]}
components:
  U1: {kind: opamp, part: AFE-GP1, pins: {in+: IN, in-: OUT, out: OUT, v+: VCC, v-: GND}}
  U2: {kind: opamp, part: AFE-GP1, pins: {in+: OUT, in-: O2, out: O2, v+: VLOST, v-: GND}}
  R9: {kind: resistor, value: 10k, pins: {1: VLOST, 2: GND}}
"""


def _header(text: str) -> str:
    return text[:text.index("</header>")]


def test_verdict_says_in_words_whether_the_gate_passed_failed_or_was_not_applied() -> None:
    assert "Gate not applied (fail level never): 3 errors and 0 warnings open" in _header(html_of(SOIL))
    failed = _header(html_of(SOIL, fail_on="error"))
    assert 'class="verdict verdict-fail"' in failed and "FAIL: 3 findings at or above the fail level (error)" in failed
    passed = _header(html_of(ROOT / "sample_designs" / "daq_front_end.yaml", fail_on="error"))  # the clean sample
    assert 'class="verdict verdict-pass"' in passed
    assert "PASS: nothing open at or above the fail level (error)" in passed


def test_counts_by_severity_and_status_sit_under_the_verdict() -> None:
    head = _header(html_of(SOIL))
    cells = re.findall(r"<td>(\d+)</td>", head)
    assert cells[:3] == ["3", "0", "0"] and len(cells) == 6  # error, warning, info, waived, unchanged, fixed


def test_designs_cautions_and_not_evaluated_are_listed_with_links(tmp_path: Path) -> None:
    path = tmp_path / "hazard.yaml"
    path.write_text(HAZARD, encoding="utf-8")
    text = html_of(path)
    summary = text[text.index('<section id="summary"'):text.index('<section id="findings"')]
    assert '<a href="#design-1">mains-side current monitor</a>' in summary and str(path) in summary
    assert "Caution: declared hazards (mains)" in summary
    lines = cautions(["mains"])
    assert len(lines) >= 2 and all(f"<li>{escape(line)}</li>" in summary for line in lines)
    # U2's supply pin is on no rail: its stage cannot be judged, and the top says so with a link to the finding
    gaps = summary[summary.index("<h3>Not evaluated</h3>"):]
    assert "U2" in gaps and re.search(r'<a href="#(finding-\d+|stage-1-\d+)">', gaps)
