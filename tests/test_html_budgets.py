"""The HTML page's noise and DC-error panels: every stage card carries, for the nets it drives, the noise density
plot with its contributors and the DC-error worksheet, with numbers taken from the noise and DC-error analyses (the
analyses themselves are checked against ngspice and published formulas in test_noise.py and test_dc_error.py)."""

from __future__ import annotations

import math
import re
from pathlib import Path

import pytest
from test_html_report import html_of, outline

from afecheck.analysis.dc_error import analyse_dc_error
from afecheck.analysis.noise import analyse_noise
from afecheck.model.load import load_design
from afecheck.model.units import format_si

ROOT = Path(__file__).resolve().parents[1]
DAQ = ROOT / "sample_designs" / "daq_front_end.yaml"
# stage card -> the nets it drives: its output, then the converter input after its RC (the sample's three channels)
PANELS = {"stage-1-1": ("AAMP", "ADC_A"), "stage-1-2": ("BAMP", "ADC_B"), "stage-1-3": ("CAMP", "ADC_C")}


@pytest.fixture(scope="module")
def page() -> str:
    return html_of(DAQ)


def _card(text: str, sid: str) -> str:
    return re.search(rf'<section class="stage" id="{sid}".*?</section>', text, re.S).group(0)


def test_each_stage_card_has_noise_and_dc_error_panels_for_the_nets_it_drives(page: str) -> None:
    for sid, nets in PANELS.items():
        card = _card(page, sid)
        assert re.findall(r"Noise and DC error at <code>([^<]+)</code>", card) == list(nets)
        for k in range(1, len(nets) + 1):
            assert f'<figure id="{sid}-net{k}-noise">' in card and f'id="{sid}-net{k}-noise-caption"' in card



def test_noise_caption_carries_the_analysis_totals_budget_and_every_contributor(page: str) -> None:
    loaded = load_design(DAQ)
    noise = analyse_noise(loaded, ["ADC_A", "ADC_B", "ADC_C"])
    captions = dict(re.findall(r'<figcaption id="([^"]+)-noise-caption">(.*?)</figcaption>', page, re.S))
    for sid, (_, adc) in PANELS.items():
        n = noise.nets[adc]
        text = captions[f"{sid}-net2"]
        assert f"{format_si(n.output_rms, 'V', 3)} rms over" in text
        budget = loaded.design.budgets[adc].noise
        assert f"budget {format_si(budget, 'V', 3)} ({100 * n.output_rms / budget:.3g} % used)" in text
        for c in n.contributors:
            assert f"{c.name} {100 * c.share:.2g} %" in text
    # channel B: the bridge's gain-101 stage, input-referred noise named with the bridge signal
    assert "from BRIDGE" in captions["stage-1-2-net2"]


def test_contributor_densities_add_in_power_to_the_total() -> None:
    # independent sources add in power (Johnson 1928; Nyquist 1928: uncorrelated thermal sources); the per-source
    # curves the plot draws must rebuild the total curve it draws
    net = analyse_noise(load_design(DAQ), ["ADC_B"]).nets["ADC_B"]
    for k, total in enumerate(net.output_density):
        rebuilt = math.sqrt(sum(c.output_density[k] ** 2 for c in net.contributors))
        assert rebuilt == pytest.approx(total, rel=1e-9)
    assert sum(c.share for c in net.contributors) == pytest.approx(1.0, rel=1e-9)


def test_dc_error_worksheet_shows_the_analysis_terms_and_totals(page: str) -> None:
    loaded = load_design(DAQ)
    dc = analyse_dc_error(loaded, ["ADC_B"]).nets["ADC_B"]
    card = _card(page, "stage-1-2")
    panel = card[card.index("Noise and DC error at <code>ADC_B</code>"):]
    v = lambda x: format_si(x, "V", 3)  # noqa: E731
    budget = loaded.design.budgets["ADC_B"]
    assert (f"<td>offset</td><td>{v(dc.offset_worst)}</td><td>{v(dc.offset_rss)}</td><td>{v(budget.offset)} "
            f"({100 * dc.offset_worst / budget.offset:.3g} % used)</td>") in panel
    assert f"<td>gain error</td><td>{100 * dc.gain_error_worst:.3g} %</td>" in panel
    assert f"<td>drift</td><td>{v(dc.drift_worst)}</td><td>{v(dc.drift_rss)}</td>" in panel
    rows = re.findall(r"<tr><td>([^<]+)</td><td>(±[^<]+)</td><td>([^<]+)</td><td>([^<]+)</td>", panel)
    first = dc.terms[0]
    assert rows[0] == (first.name, "±0.1 %", v(first.error_low), v(first.error_high))  # RB3 ±0.1 % in the sample
    assert f"worst-case corners {v(dc.corner_low)} to {v(dc.corner_high)}" in panel


def test_a_sensor_tolerance_is_listed_but_marked_not_counted(page: str) -> None:
    card = _card(page, "stage-1-3")
    assert "RT1 tolerance (sensor, not counted)" in card


def test_panels_keep_headings_in_order_and_ids_unique(page: str) -> None:
    o = outline(page)
    assert all(b - a <= 1 for a, b in zip(o.headings, o.headings[1:], strict=False))
    assert len(o.ids) == len(set(o.ids))
    assert all(s.get("aria-labelledby") in o.ids for s in o.svgs)


def test_panels_are_byte_identical_across_runs(page: str) -> None:
    assert html_of(DAQ) == page


def test_a_net_without_a_band_says_why_instead_of_a_panel(tmp_path: Path) -> None:
    design = tmp_path / "noband.yaml"
    design.write_text("""\
afecheck: 1
name: no band
ground: GND
rails:
  VCC: {voltage: 5 V, tolerance: 5%}
signals:
  IN: {dc: [1 V, 2 V]}
components:
  U1: {kind: opamp, part: AFE-GP1, pins: {in+: IN, in-: OUT, out: OUT, v+: VCC, v-: GND}}
""", encoding="utf-8")
    text = html_of(design)
    assert "Not evaluated: noise: no signal band is declared for the channel" in text
    assert "DC-error worksheet at OUT" in text
