"""Building a netlist: at one temperature every thermometer (NTC, RTD) takes it, while a bridge arm, which follows
a load and not a temperature, stays at the middle of its measurand; a thermistor hot enough to fall below 1 Ω is
still a resistor; a duplicated element name is refused by name."""

from __future__ import annotations

import math

import pytest

from afecheck.analysis.netlist import GROUND, Netlist, NetlistOptions, Resistor, netlist_from_design
from afecheck.model.load import load_design

DESIGN = """
afecheck: 1
name: thermometers and a bridge
rails: {VREF: {voltage: 2.5 V}}
components:
  RT1: {kind: ntc, r25: 10k, beta: 3950 K, temperature: [20 °C, 60 °C], pins: {1: VREF, 2: TH}}
  R1: {kind: resistor, value: 10k, pins: {1: TH, 2: GND}}
  RT2: {kind: ntc, r25: 10, beta: 4000 K, temperature: [25 °C, 150 °C], pins: {1: VREF, 2: HOT}}
  R2: {kind: resistor, value: 10, pins: {1: HOT, 2: GND}}
  LC1: {kind: bridge, arrangement: full, resistance: 350, sensitivity: 2 mV/V, measurand: [0, 1],
        pins: {exc+: VREF, exc-: GND, out+: SP, out-: SN}}
loads: {TH: {resistance: 1T}, HOT: {resistance: 1T}, SP: {resistance: 1T}, SN: {resistance: 1T}}
"""


def test_a_netlist_temperature_sets_the_thermistor_and_leaves_the_bridge_alone(tmp_path):
    path = tmp_path / "d.yaml"
    path.write_text(DESIGN, encoding="utf-8")
    nl = netlist_from_design(load_design(path), options=NetlistOptions(temperature_c=0.0))
    # Beta model R(T) = R25·exp(B·(1/T − 1/298.15 K)) at 0 °C (IEC 60539 B-value; hand calculation), not at the
    # 40 °C middle of its declared range
    assert nl.element("RT1").value == pytest.approx(10e3 * math.exp(3950 * (1 / 273.15 - 1 / 298.15)), rel=1e-12)
    # full bridge arms R(1 ± S·m) at the middle m = 0.5 of the measurand, S = 2 mV/V (docs/FORMAT.md; out+ is
    # V·(1 + S·m)/2, so the bottom-left arm rises and the top-left falls), whatever the netlist temperature
    assert nl.element("LC1.bl").value == pytest.approx(350 * (1 + 0.002 * 0.5), rel=1e-12)
    assert nl.element("LC1.tl").value == pytest.approx(350 * (1 - 0.002 * 0.5), rel=1e-12)


def test_a_thermistor_below_one_ohm_is_still_a_resistor(tmp_path):
    # a 10 Ω inrush-type NTC (B = 4000 K) at 150 °C: R = 10 Ω·exp(4000·(1/423.15 − 1/298.15)) = 0.190 Ω (IEC 60539
    # Beta model; hand calculation), a finite positive resistance however small
    path = tmp_path / "d.yaml"
    path.write_text(DESIGN, encoding="utf-8")
    nl = netlist_from_design(load_design(path), ["RT2", "R2"], NetlistOptions(ntc_temperature_c={"RT2": 150.0}))
    r = 10.0 * math.exp(4000 * (1 / 423.15 - 1 / 298.15))
    assert r < 1.0
    assert nl.element("RT2").value == pytest.approx(r, rel=1e-12)


def test_a_duplicated_element_name_is_refused_naming_only_the_duplicate():
    with pytest.raises(ValueError) as err:
        Netlist((Resistor("R1", "A", GROUND, 1e3), Resistor("R2", "A", "B", 1e3), Resistor("R1", "B", GROUND, 1e3)))
    assert str(err.value) == "duplicate element names in netlist: R1"
