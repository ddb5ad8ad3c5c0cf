"""distortion.impedance-balance applies to follower and non-inverting stages only (its rule page's scope): a
difference amplifier with the same JFET-input part and the same common-mode swing is not judged by it."""

from __future__ import annotations

from pathlib import Path

from fixtures.rules import kit

from afecheck.analysis import analyse
from afecheck.checks.distortion import input_impedance_imbalance
from afecheck.model.load import load_design

BAD = Path(__file__).resolve().parent.parent / "rules" / "distortion" / "impedance-balance" / "bad.yaml"
HYD = "HYD: {dc: [0 V, 0 V], ac_amplitude: 3 V, band: [20 Hz, 20 kHz], source_resistance: 100}"
# The rule page's own flagged example rebuilt as a difference amplifier of gain 1 (four 10 kΩ): in+ swings
# 3 V × 10k/(10k + 10k + 100) ≈ 1.49 V peak at up to 20 kHz (divider, Ohm) and sees about 10 kΩ against the
# 5 kΩ of R1 || R2 at in−: past every threshold of the rule, were the stage in its scope.
DIFFERENCE = """components:
  R1: {kind: resistor, value: 10k, tolerance: 1%, pins: {1: REF, 2: FB}}
  R2: {kind: resistor, value: 10k, tolerance: 1%, pins: {1: FB, 2: HOUT}}
  R3: {kind: resistor, value: 10k, tolerance: 1%, pins: {1: HYD, 2: P}}
  R4: {kind: resistor, value: 10k, tolerance: 1%, pins: {1: P, 2: GND}}
  U1: {kind: opamp, part: LAB-JFET, pins: {in+: P, in-: FB, out: HOUT, v+: VPOS, v-: VNEG}}
loads:
  HOUT: {resistance: 100k}
"""


def _findings(tmp_path: Path, text: str):
    path = tmp_path / "d.yaml"
    path.write_text(text, encoding="utf-8")
    loaded = load_design(path)
    analysis = analyse(loaded)
    return analysis.stages, kit.run(input_impedance_imbalance, loaded, analysis.stages, nets=dict(analysis.nets))


def test_a_difference_amplifier_is_outside_the_rules_scope(tmp_path: Path) -> None:
    text = BAD.read_text(encoding="utf-8")
    assert HYD in text
    stages, flagged = _findings(tmp_path, text)
    assert [s.topology for s in stages] == ["non-inverting"] and len(flagged) == 1  # the page's example
    head = text.split("components:")[0].replace(HYD, HYD + "\n  " + HYD.replace("HYD", "REF", 1))
    stages, found = _findings(tmp_path, head + DIFFERENCE)
    assert [s.topology for s in stages] == ["difference"]
    assert found == []
