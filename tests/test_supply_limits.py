"""Supply span, input overdrive current and the isolation resistor, against arithmetic and ngspice's loop gain."""

from __future__ import annotations

import math

import numpy as np
import pytest

from afecheck.analysis import analyse
from afecheck.analysis.channel import channel_netlist, find_channels
from afecheck.analysis.spice import AcSweep, ControlBlock, loop_break_netlist, spice_deck
from afecheck.analysis.supply import _with_isolation, analyse_supply
from afecheck.model.load import load_design
from tests.ngspice_harness import needs_ngspice, read_raw, run_ngspice

RULES = "rules/limits"


def test_supply_span_at_the_rails_corners():
    loaded = load_design(f"{RULES}/supply-range/bad.yaml")
    c = analyse_supply(loaded, analyse(loaded)).opamps["U1"]
    assert (c.span_min, c.span_max) == pytest.approx((30 * 0.95, 30 * 1.05))  # ±15 V at 5 %


def test_input_current_past_the_protection_diode():
    loaded = load_design(f"{RULES}/input-current/bad.yaml")
    (d,) = analyse_supply(loaded, analyse(loaded)).opamps["U1"].inputs
    assert d.current == pytest.approx((12 - 5 - 0.5) / 100)  # Ohm's law across the series resistor


@needs_ngspice
@pytest.mark.ngspice
def test_isolation_resistor_gives_60_degrees_in_ngspice(tmp_path):
    loaded = load_design(f"{RULES}/capacitive-load/bad.yaml")
    c = analyse_supply(loaded, analyse(loaded)).opamps["U1"]
    netlist = _with_isolation(channel_netlist(loaded, find_channels(loaded)["OUT"]), "OUT",
                              c.isolation_resistance, loaded.fixed_nets)
    broken, back = loop_break_netlist(netlist, "U1")
    deck = spice_deck(broken, control=ControlBlock(op=False, ac=AcSweep(200, 1e5, 1e8), ac_nodes=[back]))
    run_ngspice(deck.text, workdir=tmp_path)
    raw = read_raw(tmp_path / "ac.raw")
    t = -raw[deck.vector(back)]
    mag = np.abs(t)
    k = int(np.nonzero((mag[:-1] >= 1) & (mag[1:] < 1))[0][0])
    w = math.log(mag[k]) / (math.log(mag[k]) - math.log(mag[k + 1]))  # crossover interpolated in log |T|
    phase = np.degrees(np.unwrap(np.angle(t)))
    pm = 180 + phase[k] + w * (phase[k + 1] - phase[k])
    assert pm == pytest.approx(60.0, abs=0.3)
