"""A stage next to an output that another op-amp drives: two channels, each an inverting stage U, a weak
non-inverting driver W and a summing stage B that adds U's and W's outputs. W's closed-loop output resistance
against Blackman's impedance formula, and the channels, alike but for W's gain resistor, each keep their own."""

from __future__ import annotations

import pytest

from tests.hand_part import part, stages_of

CHANNEL = """
  VS{c}: {{kind: signal_source, dc: [0, 0], ac_amplitude: 10 mV, band: [10 Hz, 1 kHz], pins: {{p: S{c}, n: GND}}}}
  RI{c}: {{kind: resistor, value: 10k, pins: {{1: S{c}, 2: M{c}}}}}
  RF{c}: {{kind: resistor, value: 10k, pins: {{1: M{c}, 2: O{c}}}}}
  U{c}: {{kind: opamp, part: RO, pins: {{in+: GND, in-: M{c}, out: O{c}, v+: VP, v-: VN}}}}
  W{c}: {{kind: opamp, part: WEAK, pins: {{in+: S{c}, in-: G{c}, out: P{c}, v+: VP, v-: VN}}}}
  RW{c}: {{kind: resistor, value: {rw}, pins: {{1: G{c}, 2: P{c}}}}}
  RG{c}: {{kind: resistor, value: 1k, pins: {{1: G{c}, 2: GND}}}}
  R1{c}: {{kind: resistor, value: 1k, pins: {{1: O{c}, 2: N{c}}}}}
  R2{c}: {{kind: resistor, value: 1k, pins: {{1: P{c}, 2: N{c}}}}}
  R3{c}: {{kind: resistor, value: 1k, pins: {{1: N{c}, 2: Q{c}}}}}
  B{c}: {{kind: opamp, part: P, pins: {{in+: GND, in-: N{c}, out: Q{c}, v+: VP, v-: VN}}}}"""

# WEAK: A0 = 10 behind 10 kΩ of open-loop output resistance
DESIGN = ("afecheck: 1\nname: two summing channels\nparts:\n" + part("P") + "\n" + part("RO", ro="1k") + "\n"
          + part("WEAK", ro="10k").replace("open_loop_gain: 1e5", "open_loop_gain: 10")
          + "\nrails: {VP: {voltage: 5 V}, VN: {voltage: -5 V}}\ncomponents:" + CHANNEL.format(c="A", rw="1")
          + CHANNEL.format(c="B", rw="10k") + "\nloads: {QA: {resistance: 10k}, QB: {resistance: 10k}}\n")


def _rout(rw: float) -> float:
    """Blackman: Zout = Z0/(1 + T) with the output open (no short-circuit return), Z0 = Ro ∥ Rload with the loop
    disabled, T = A0·β·Rload/(Ro + Rload), β = RG/(RG + RW); Rload = (RW + RG) ∥ R2, R2 ending on B's virtual
    ground (R. B. Blackman, "Effect of feedback on impedance", Bell System Technical Journal 22, 1943)."""
    ro, a0, rg, r2 = 10e3, 10.0, 1e3, 1e3
    rload = 1 / (1 / (rw + rg) + 1 / r2)
    z0 = 1 / (1 / ro + 1 / rload)
    return z0 / (1 + a0 * rg / (rg + rw) * rload / (ro + rload))


def test_each_weak_driver_keeps_its_own_output_resistance(tmp_path):
    stages = stages_of(tmp_path, DESIGN)
    # 322.8 Ω at unity gain (RW = 1 Ω), 780.1 Ω at gain 11 (RW = 10 kΩ); B's virtual ground is 1e-5 of R2 off 0 Ω
    assert stages["WA"].output_resistance == pytest.approx(_rout(1.0), rel=1e-4)
    assert stages["WB"].output_resistance == pytest.approx(_rout(10e3), rel=1e-4)
