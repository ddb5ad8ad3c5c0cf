"""dc-accuracy.bias-offset with a 0 Ω source at in+: the bias current still flows through R− = Rf || Rg.

Found by the mutation run (the rule skipped R+ = 0 and so said nothing where a 1 Ω source gave an error)."""

from __future__ import annotations

import pytest
from fixtures.rules import kit

from afecheck.analysis import analyse
from afecheck.checks.loading import bias_current_offset
from afecheck.engine.finding import Severity
from afecheck.model.load import load_design

GAIN_TWO = """
afecheck: 1
name: bias current into a megohm feedback network
parts:
  B: {{gbw: 1 MHz, open_loop_gain: 1e5, output_resistance: 0, input_resistance_diff: 1e12, input_resistance_cm: 1e12,
      bias_current: 100 nA, offset_current: 0, offset_voltage: 1 mV}}
rails: {{VP: {{voltage: 5 V}}, VN: {{voltage: -5 V}}}}
signals:
  IN: {{dc: [0 V, 0.1 V], source_resistance: {rs}}}
components:
  U1: {{kind: opamp, part: B, pins: {{in+: IN, in-: FB, out: OUT, v+: VP, v-: VN}}}}
  RF: {{kind: resistor, value: 1M, pins: {{1: OUT, 2: FB}}}}
  RG: {{kind: resistor, value: 1M, pins: {{1: FB, 2: GND}}}}
"""


def _finding(tmp_path, rs: str):
    path = tmp_path / "d.yaml"
    path.write_text(GAIN_TWO.format(rs=rs), encoding="utf-8")
    loaded = load_design(path)
    analysis = analyse(loaded)
    (f,) = kit.run(bias_current_offset, loaded, analysis.stages, nets=dict(analysis.nets))
    return f


@pytest.mark.parametrize("rs", [0.0, 1.0])
def test_a_stiff_source_still_leaves_the_bias_current_through_r_minus(tmp_path, rs) -> None:
    # NG·(|Ib|·|R− − R+| + |Ios|/2·(R− + R+)) (W. Jung, "Op Amp Applications Handbook", Newnes, 2005, ch. 1) with
    # NG = 2, Ib = 100 nA, Ios = 0, R− = 1 MΩ || 1 MΩ = 500 kΩ: 100 mV for R+ = 0 (99.9998 mV for 1 Ω), against
    # 10 × NG·Vos = 20 mV: an error whether the source is 0 Ω or 1 Ω.
    f = _finding(tmp_path, repr(rs))
    expected = 2 * 100e-9 * (500e3 - rs)
    assert f.severity is Severity.ERROR
    assert f.ctx["value"] == pytest.approx(expected, rel=1e-5)  # the 1 TΩ input resistances move NG by ~1e-6
    assert f.ctx["r_plus"] == rs and f.ctx["r_minus"] == pytest.approx(500e3, rel=1e-12)
    assert f.ctx["limit"] == pytest.approx(20e-3, rel=1e-5)
