"""loading.input-divider through two series resistors: the figure counts the whole path, the finding names the
path's first part and the op-amp."""

from __future__ import annotations

import math

from fixtures.rules import kit

from afecheck.analysis import analyse
from afecheck.checks.loading import input_divider_error
from afecheck.model.load import load_design

TWO_IN_SERIES = """
afecheck: 1
name: two series resistors
parts:
  P: {gbw: 10 MHz, open_loop_gain: 1e5, output_resistance: 0, input_resistance_diff: 1e12, input_resistance_cm: 1e12,
      input_capacitance_cm: 10 pF, input_capacitance_diff: 0, offset_voltage: 0, bias_current: 0, offset_current: 0}
rails: {VP: {voltage: 5 V}, VN: {voltage: -5 V}}
signals:
  IN: {dc: [0 V, 0 V], ac_amplitude: 0.1 V, band: [10 Hz, 100 kHz], source_resistance: 1k}
components:
  R1: {kind: resistor, value: 10k, pins: {1: IN, 2: M}}
  R2: {kind: resistor, value: 10k, pins: {1: M, 2: P}}
  U1: {kind: opamp, part: P, pins: {in+: P, in-: OUT, out: OUT, v+: VP, v-: VN}}
"""


def test_a_two_resistor_path_counts_both_and_names_the_first(tmp_path) -> None:
    path = tmp_path / "d.yaml"
    path.write_text(TWO_IN_SERIES, encoding="utf-8")
    loaded = load_design(path)
    analysis = analyse(loaded)
    (f,) = kit.run(input_divider_error, loaded, analysis.stages, nets=dict(analysis.nets))
    # 1 k + 10 k + 10 k = 21 kΩ against 1 TΩ || 10 pF at 100 kHz: loss 1 − |Zin/(Rs + Zin)| (complex divider, Ohm)
    z_in = 1e12 / complex(1.0, 2 * math.pi * 1e5 * 1e12 * 10e-12)
    loss = 1 - abs(z_in / (21e3 + z_in))
    assert math.isclose(f.ctx["value"], loss, rel_tol=1e-9) and f.ctx["source_resistance"] == 21e3
    # the refs (part of the waiver and baseline fingerprint, engine/finding.py) are those the loading family uses:
    # the series part at the source end of the path and the op-amp, so a waiver written for one stays put
    assert f.location.refs == ("R1", "U1")
    assert f.location.nets == ("IN", "P")
