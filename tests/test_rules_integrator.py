"""Feedback sense on integrators: feedback only through a capacitor is a warning (no DC path), not "no feedback"."""

from __future__ import annotations

from pathlib import Path

from afecheck.api import check_file
from afecheck.engine.finding import Severity

DESIGN = """afecheck: 1
rails: {{VCC: {{voltage: 5 V}}, VMID: {{voltage: 2.5 V}}}}
components:
  R1: {{kind: resistor, value: 10k, pins: {{1: IN, 2: INM}}}}
  C1: {{kind: capacitor, value: 1u, dielectric: film, pins: {{1: INM, 2: OUT}}}}
  U1: {{kind: opamp, part: AFE-PREC1, pins: {{in+: VMID, in-: INM, out: OUT, v+: VCC, v-: GND}}}}
{extra}signals: {{IN: {{dc: [2.4 V, 2.6 V]}}}}
loads: {{OUT: {{resistance: 100k}}}}
"""


def _afe204(tmp_path: Path, extra: str = "") -> list:
    path = tmp_path / "integrator.yaml"
    path.write_text(DESIGN.format(extra=extra), encoding="utf-8")
    return [f for f in check_file(path).findings if f.rule == "stability.feedback-sense"]


def test_integrator_without_dc_path_is_an_error_naming_the_capacitor(tmp_path: Path) -> None:
    # Bode return ratio: feedback only through capacitors -> T(0) = 0 -> the output integrates to a rail: error
    (finding,) = _afe204(tmp_path)
    assert finding.severity == Severity.ERROR
    assert finding.location.refs[0] == "C1"
    assert finding.ctx["feedback"] == "no-dc-path"


def test_resistor_across_the_capacitor_gives_the_dc_path(tmp_path: Path) -> None:
    # RULES-REFERENCE R5m: with 1 MΩ across C the loop closes at DC (output settles at NG·Vos), so nothing to report
    extra = "  R2: {kind: resistor, value: 1M, pins: {1: INM, 2: OUT}}\n"
    assert _afe204(tmp_path, extra) == []
