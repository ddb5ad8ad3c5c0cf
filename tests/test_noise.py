"""Noise analysis against published values, a textbook formula, and ngspice's ``.noise`` analysis."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
import yaml

from afecheck.analysis.channel import find_channels
from afecheck.analysis.noise import BOLTZMANN, analyse_noise, band_rms, channel_noise, johnson_density
from afecheck.model.load import load_design
from tests.ngspice_harness import needs_ngspice, run_ngspice
from tests.tools.budget_stages import write_channel
from tests.tools.noise_deck import noise_deck, parse_noise


def test_johnson_noise_of_1k_at_300k_is_4_07_nv():
    # Johnson, "Thermal agitation of electricity in conductors", Phys. Rev. 32, 97 (1928) and Nyquist, "Thermal
    # agitation of electric charge in conductors", Phys. Rev. 32, 110 (1928): v = √(4kTR); 1 kΩ at 300 K ≈ 4.07 nV/√Hz
    assert johnson_density(1e3, 300.0) == pytest.approx(4.07e-9, rel=2e-3)
    assert johnson_density(4e3, 300.0) == pytest.approx(2 * 4.07e-9, rel=2e-3)


def test_power_law_integration_is_exact_for_white_and_one_over_f():
    # ∫ en²(1 + fc/f) df = en²·[(fH − fL) + fc·ln(fH/fL)]: the closed form in Motchenbacher & Connelly,
    # "Low-Noise Electronic System Design" (Wiley, 1993), ch. 1 (from memory)
    f = np.logspace(0, 4, 9)
    en, fc = 10e-9, 100.0
    exact = en * math.sqrt((1e4 - 1) + fc * math.log(1e4))
    assert math.hypot(band_rms(f, en**2 + 0 * f), band_rms(f, en**2 * fc / f)) == pytest.approx(exact, rel=1e-9)


def _design(tmp_path, text: str):
    path = tmp_path / "d.yaml"
    path.write_text(text, encoding="utf-8")
    return load_design(path)


NON_INVERTING = """
afecheck: 1
name: non-inverting noise check
operating_temperature: [0 °C, 26.85 °C]
parts:
  QUIET:
    gbw: 1 THz
    open_loop_gain: 1e9
    second_pole: 1e15
    output_resistance: 0
    input_resistance_diff: 1e15
    input_resistance_cm: 1e15
    input_capacitance_diff: 0
    input_capacitance_cm: 0
    voltage_noise: 5 nV/rtHz
    voltage_noise_corner: {vc}
    current_noise: 2 pA/rtHz
    current_noise_corner: 0
rails: {{VP: {{voltage: 5 V}}, VN: {{voltage: -5 V}}}}
signals:
  IN: {{dc: [0, 0], band: [10 Hz, 10 kHz], source_resistance: 1k}}
components:
  U1: {{kind: opamp, part: QUIET, pins: {{in+: IN, in-: FB, out: OUT, v+: VP, v-: VN}}}}
  RF: {{kind: resistor, value: 9k, pins: {{1: OUT, 2: FB}}}}
  RG: {{kind: resistor, value: 1k, pins: {{1: FB, 2: GND}}}}
"""


def _textbook_non_inverting(t_k: float, rs: float, rf: float, rg: float, en: float, inn: float) -> float:
    """Output density of a non-inverting stage: the sum of squares in Jung (ed.), "Op Amp Applications Handbook"
    (Analog Devices / Newnes, 2005), section 1.7, op-amp noise (from memory): NG²(en² + 4kTRs + in²Rs²)
    + in²Rf² + 4kTRf + (Rf/Rg)²·4kTRg."""
    ng = 1 + rf / rg
    four_kt = 4 * BOLTZMANN * t_k
    return math.sqrt(ng**2 * (en**2 + four_kt * rs + (inn * rs) ** 2) + (inn * rf) ** 2 + four_kt * rf
                     + (rf / rg) ** 2 * four_kt * rg)


def test_non_inverting_total_noise_matches_the_textbook_sum(tmp_path):
    loaded = _design(tmp_path, NON_INVERTING.format(vc=0))
    res = analyse_noise(loaded, ["OUT"]).nets["OUT"]
    assert res.temperature_k == pytest.approx(300.0)
    expected = _textbook_non_inverting(300.0, 1e3, 9e3, 1e3, 5e-9, 2e-12)
    assert res.output_density[len(res.freqs) // 2] == pytest.approx(expected, rel=1e-6)
    assert res.output_rms == pytest.approx(expected * math.sqrt(1e4 - 10), rel=1e-6)
    assert res.input_rms == pytest.approx(res.output_rms / 10, rel=1e-6)
    names = [c.name for c in res.contributors]
    assert names[0] == "U1 voltage noise"  # NG·en = 50 nV beats NG·√(4kT·1k) = 40.7 nV
    assert sum(c.share for c in res.contributors) == pytest.approx(1.0)


def test_one_over_f_corner_raises_the_rms_by_the_closed_form(tmp_path):
    white = analyse_noise(_design(tmp_path, NON_INVERTING.format(vc=0)), ["OUT"]).nets["OUT"]
    pink = analyse_noise(_design(tmp_path, NON_INVERTING.format(vc="1 kHz")), ["OUT"]).nets["OUT"]
    extra = (10 * 5e-9) ** 2 * 1e3 * math.log(1e4 / 10)  # NG²·en²·fc·ln(fH/fL), Motchenbacher & Connelly ch. 1
    assert pink.output_rms**2 - white.output_rms**2 == pytest.approx(extra, rel=1e-6)


HAND_DECK = """hand-written non-inverting stage: 1 k source, 9 k / 1 k, noiseless high-gain amplifier
VIN in 0 DC 0 AC 1
RS in p 1k
RF out fb 9k
RG fb 0 1k
EA out 0 p fb 1e9
.options temp=26.85 tnom=26.85
.control
set numdgt=15
noise v(out) VIN dec 10 10 10k
setplot noise1
print frequency onoise_spectrum
setplot noise2
print onoise_total
quit
.endc
.end
"""


@needs_ngspice
@pytest.mark.ngspice
def test_hand_written_deck_agrees_with_the_analysis(tmp_path):
    design = NON_INVERTING.format(vc=0).replace("5 nV/rtHz", "0").replace("2 pA/rtHz", "0")
    res = analyse_noise(_design(tmp_path, design), ["OUT"]).nets["OUT"]
    text, _ = run_ngspice(HAND_DECK)
    f, dens, total = parse_noise(text)
    ours = channel_noise(load_design(tmp_path / "d.yaml"), find_channels(load_design(tmp_path / "d.yaml"))["OUT"],
                         ["OUT"], f)["OUT"]
    assert np.allclose(ours.output_density, dens, rtol=1e-6)
    assert res.output_rms == pytest.approx(total, rel=1e-4)


def _compare_with_ngspice(loaded, net: str) -> None:
    band = find_channels(loaded)[net]
    ours_default = analyse_noise(loaded, [net]).nets[net]
    lo, hi = ours_default.band
    deck, _ = noise_deck(loaded, net, lo, hi)
    text, _ = run_ngspice(deck)
    f, dens, total = parse_noise(text)
    ours = channel_noise(loaded, band, [net], f)[net]
    worst = float(np.max(np.abs(np.array(ours.output_density) / dens - 1)))
    assert worst < 0.01, f"density off by {worst:.2%} at {net}"
    # ngspice's "dec" grid stops at the last point not past the band's top (473 Hz for 500 Hz): integrate on its grid
    assert ours.output_rms == pytest.approx(total, rel=0.01)
    if np.isclose(f[-1], hi):
        assert ours_default.output_rms == pytest.approx(total, rel=0.01)


@needs_ngspice
@pytest.mark.ngspice
@pytest.mark.parametrize("seed", range(4))
def test_generated_channels_agree_with_ngspice(tmp_path, seed):
    path, out = write_channel(tmp_path, seed)
    _compare_with_ngspice(load_design(path), out)


@needs_ngspice
@pytest.mark.ngspice
@pytest.mark.slow
@pytest.mark.parametrize("seed", range(4, 124))
def test_many_generated_channels_agree_with_ngspice(tmp_path, seed):
    path, out = write_channel(tmp_path, seed)
    _compare_with_ngspice(load_design(path), out)


@needs_ngspice
@pytest.mark.ngspice
@pytest.mark.parametrize("seed", range(3))
def test_one_over_f_corners_agree_with_ngspice(tmp_path, seed):
    # 1/f checked against ngspice itself (not only the closed form above): each op-amp noise source in the deck is a
    # resistor's flicker noise, K·I/f with K = 4kT·fc (tests/tools/noise_deck.py), so ngspice integrates
    # en²·(1 + fce/f) and in²·(1 + fci/f) through the circuit on its own
    import dataclasses

    path, out = write_channel(tmp_path, seed, white=False)
    loaded = load_design(path)
    flat = dataclasses.replace(loaded, parts={n: m.model_copy(update={"voltage_noise_corner": 0.0,
                                                                      "current_noise_corner": 0.0})
                                              for n, m in loaded.parts.items()})
    # the corners matter here (the comparison below could not pass with them ignored)
    pink, white = (analyse_noise(x, [out]).nets[out].output_density[0] for x in (loaded, flat))
    assert pink > 1.02 * white
    _compare_with_ngspice(loaded, out)


@needs_ngspice
@pytest.mark.ngspice
@pytest.mark.slow
@pytest.mark.parametrize("seed", range(3, 40))
def test_many_one_over_f_channels_agree_with_ngspice(tmp_path, seed):
    path, out = write_channel(tmp_path, seed, white=False)
    _compare_with_ngspice(load_design(path), out)


def test_budget_yaml_round_trip(tmp_path):
    path, out = write_channel(tmp_path, 3)
    data = yaml.safe_load(path.read_text())
    assert data["budgets"][out]["noise"] == 1e-3


# Every sample but the one whose sensor runs far from the design's temperature: this deck writer gives every
# resistor one temperature, while afecheck takes an RTD's noise at the middle of its own range
# (tests/test_budget_sensors.py compares that with a hand-written deck holding per-resistor temperatures).
OWN_TEMPERATURE = {"pt1000_process_probe.yaml"}
SAMPLES = sorted(p.name for p in Path("sample_designs").glob("*.yaml")
                 if not p.name.endswith(".intent.yaml") and p.name not in OWN_TEMPERATURE)


@needs_ngspice
@pytest.mark.ngspice
@pytest.mark.parametrize("sample", SAMPLES)
def test_every_sample_design_agrees_with_ngspice(sample):
    from afecheck.analysis import analyse
    from afecheck.analysis.worksheet import worksheet_nets

    loaded = load_design(f"sample_designs/{sample}")  # 1/f corners and all
    worked = worksheet_nets(loaded, analyse(loaded))
    if not worked:  # nothing asks for noise here: then the design declares no budget and no load
        assert not loaded.design.budgets and not loaded.design.loads
        return
    noise = analyse_noise(loaded, worked)
    # a net is left out only for what the design lacks, never for an analysis failure (a current signal once was)
    assert all(r == "no signal band is declared for the channel" for r in noise.not_evaluated.values()), noise
    if not noise.nets:
        return  # every worksheet net evaluated (a current signal once was not)
    nets = list(noise.nets)
    for net in nets:
        _compare_with_ngspice(loaded, net)
