"""The design's independent quantities by hand: rails at their tolerance, a reference stacked on a rail, signals over
their range, an op-amp's offset sources, thermistor grids and a divider's Thevenin form."""

from __future__ import annotations

import numpy as np
import pytest

from afecheck.analysis.affine import BASE_POINTS
from afecheck.analysis.corners import Corners
from afecheck.graph.build import circuit_of
from afecheck.model.load import load_design

DESIGN = """
afecheck: 1
name: corners by hand
parts:
  P: {gbw: 1 MHz, open_loop_gain: 1e5}
rails: {VCC: {voltage: 5 V, tolerance: 5%}, VEE: {voltage: -12 V, tolerance: 10%}, VZ: {voltage: 3 V}}
signals:
  IN: {dc: [0.2 V, 1 V]}
  FLAT: {dc: [0.5 V, 0.5 V]}
components:
  VR1: {kind: vsource, value: 1.25 V, pins: {p: REFP, n: VCC}}
  VR2: {kind: vsource, value: 0.5 V, pins: {p: VCC, n: REFN}}
  R1: {kind: resistor, value: 30k, pins: {1: VCC, 2: MID}}
  R2: {kind: resistor, value: 10k, pins: {1: MID, 2: GND}}
  RT1: {kind: ntc, r25: 10k, beta: 3950 K, temperature: [0 °C, 50 °C], pins: {1: MID, 2: T1}}
  RT2: {kind: ntc, r25: 10k, beta: 3950 K, temperature: [-20 °C, 60 °C], pins: {1: T1, 2: T2}}
  RT3: {kind: ntc, r25: 10k, beta: 3950 K, pins: {1: T2, 2: GND}}
  U1: {kind: opamp, part: P, pins: {in+: IN, in-: OUT, out: OUT, v+: VCC, v-: VEE}}
  U2: {kind: opamp, part: P, pins: {in+: FLAT, in-: OUT2, out: OUT2, v+: VZ, v-: GND}}
  RL: {kind: resistor, value: 10k, pins: {1: REFP, 2: REFN}}
  RL2: {kind: resistor, value: 10k, pins: {1: REFN, 2: MID}}
"""


@pytest.fixture(scope="module")
def corners(tmp_path_factory):
    path = tmp_path_factory.mktemp("corners") / "d.yaml"
    path.write_text(DESIGN, encoding="utf-8")
    return Corners(circuit_of(load_design(path)))


def test_rails_move_by_their_tolerance_about_their_voltage(corners):
    # V·(1 ± tolerance) (hand calculation): 5 V ± 5 % is 4.75..5.25 V; −12 V ± 10 % is −13.2..−10.8 V (the
    # deviation is |V|·tolerance, whatever the sign); a rail with no tolerance does not move
    assert corners.rail_form("VCC").extremes() == (pytest.approx(4.75), pytest.approx(5.25))
    assert corners.rail_form("VEE").extremes() == (pytest.approx(-13.2), pytest.approx(-10.8))
    vz = corners.rail_form("VZ")
    assert vz.extremes() == (3.0, 3.0) and vz.keys == ()
    assert corners.fixed_form("GND").extremes() == (0.0, 0.0)


def test_a_source_stacked_on_a_rail_follows_it(corners):
    # VR1's + pin sits 1.25 V above VCC: 6.0..6.5 V; VR2's − pin sits 0.5 V below VCC: 4.25..4.75 V (Kirchhoff's
    # voltage law around the source, hand calculation); both move with the one VCC quantity
    refp = corners.fixed_form("REFP")
    assert refp.extremes() == (pytest.approx(6.0), pytest.approx(6.5)) and refp.keys == ("rail:VCC",)
    assert corners.fixed_form("REFN").extremes() == (pytest.approx(4.25), pytest.approx(4.75))
    assert corners.fixed_form("MID") is None  # a divider node is not held fixed


def test_signals_span_their_declared_range(corners):
    # the middle of the range ± half its width: 0.6 ± 0.4 V; a one-point range is a constant
    sig = corners.signal_form("IN")
    assert sig.at().nominal == pytest.approx(0.6)
    assert sig.extremes() == (pytest.approx(0.2), pytest.approx(1.0))
    flat = corners.signal_form("FLAT")
    assert flat.keys == () and flat.extremes() == (0.5, 0.5)


def test_offset_sources_split_the_offset_current_between_the_pins(corners):
    # Ib+ = Ib + Ios/2 and Ib− = Ib − Ios/2 (the usual definition of offset current, Ios = Ib+ − Ib−: S. Franco,
    # "Design with Operational Amplifiers and Analog Integrated Circuits", 4th ed., ch. 5, from memory); each
    # quantity at both signs, so Ib+ spans ±(10 nA + 1 nA) and Vos ±2 mV
    forms = corners.offset_forms("U1", -2e-3, 10e-9, 2e-9)
    assert forms["U1#gain"].extremes() == (pytest.approx(-2e-3), pytest.approx(2e-3))
    assert forms["U1#ib+"].extremes() == (pytest.approx(-11e-9), pytest.approx(11e-9))
    assert forms["U1#ib-"].extremes() == (pytest.approx(-11e-9), pytest.approx(11e-9))
    assert forms["U1#ib+"].at().terms["ios:U1"].gain == 0.5
    assert forms["U1#ib-"].at().terms["ios:U1"].gain == -0.5
    assert corners.offset_forms("U1", -2e-3, 10e-9, 2e-9) is forms  # one set per op-amp and values


def test_thermistor_grids(corners):
    # a thermistor sweeps its declared range on 33 evenly spaced temperatures; one at a single temperature (RT3,
    # default 25..25 °C) does not sweep
    assert set(corners.thermistors) == {"RT1", "RT2"}
    assert corners.thermistors["RT1"].tolist() == pytest.approx(np.linspace(0.0, 50.0, BASE_POINTS).tolist())
    one = corners.grid({"RT1"})
    assert one.points == 33 and one.step == 1
    # two at once: 33² = 1089 points exceed the 300 allowed, every second temperature gives 17² = 289 (hand count)
    two = corners.grid({"RT2", "RT1"})
    assert two.swept == ("RT1", "RT2") and two.points == 289 and two.step == 2
    # row-major over (RT1, RT2): RT2 runs fastest in 5 K steps (2 × 80 K/32), RT1 in 3.125 K steps (2 × 50 K/32)
    assert two.temperatures_c["RT2"][:3].tolist() == pytest.approx([-20.0, -15.0, -10.0])
    assert two.temperatures_c["RT2"][16] == pytest.approx(60.0)
    assert two.temperatures_c["RT1"][:17].tolist() == pytest.approx([0.0] * 17)
    assert two.temperatures_c["RT1"][17] == pytest.approx(3.125)
    assert corners.grid({"RT1", "RT2"}) is two


def test_a_thermistor_off_the_grid_sits_at_mid_range(corners):
    # RT2 on a grid over RT1 alone: its resistance everywhere is that at 20 °C, the middle of −20..60 °C:
    # R25·exp(B·(1/293.15 − 1/298.15)) (Beta model, IEC 60539-1)
    grid = corners.grid({"RT1"})
    r = corners.ntc_resistances("RT2", grid)
    assert r == pytest.approx(np.full(33, 10e3 * np.exp(3950 * (1 / 293.15 - 1 / 298.15))).tolist())


def test_divider_thevenin_form(corners):
    # R1 = 30 kΩ to VCC, R2 = 10 kΩ to ground: Thevenin resistance 30k‖10k = 7.5 kΩ, voltage VCC·10/40 =
    # 1.1875..1.3125 V over VCC's ±5 % (Thevenin; hand calculation)
    grid = corners.grid(set())
    r, form = corners.divider_form([("R1", "VCC"), ("R2", "GND")], grid)
    assert r.tolist() == pytest.approx([7.5e3])
    assert form.extremes() == (pytest.approx(1.1875), pytest.approx(1.3125))
    # a leg to a net of unknown voltage: resistance still known, no voltage form
    r2, none = corners.divider_form([("R1", "VCC"), ("R2", "MID")], grid)
    assert r2.tolist() == pytest.approx([7.5e3]) and none is None
