"""Named guards for four bugs that were planted in afecheck and went unnoticed by the suite (issue 18).

Each test says which bug it kills; each was checked by planting the bug and seeing the test fail.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from fixtures.rules import kit

from afecheck.analysis import analyse
from afecheck.api import check_file
from afecheck.checks.distortion import slew_rate
from afecheck.engine.finding import Severity
from afecheck.model.load import load_design

CASES = Path(__file__).parent / "reference" / "cases"


def test_signal_source_resistance_reaches_the_stage_gain_and_the_loading_rule() -> None:
    # kills: dropping a signal_source component's source resistance from the netlist (gain -0.667 -> -1.000 while
    # loading.inverting-input kept printing 33.3 % from the declared value). Hand value: inverting gain -R2/(Rs + R1)
    # = -10k/(5k + 10k) = -0.6667 (ideal op-amp, Ohm and Kirchhoff); A0 = 1e5 at noise gain 2.5 moves it by
    # 2.5e-5 relative, so 1e-4 allowed. Loading error Rs/(Rs + R1) = 1/3.
    path = CASES / "inverting_signal_source.yaml"
    (stage,) = analyse(load_design(path)).stages
    (inp,) = [i for i in stage.inputs if i.net == "IN"]
    assert inp.gain == pytest.approx(-10e3 / 15e3, rel=1e-4)
    assert inp.loading_error_max == pytest.approx(5e3 / 15e3, rel=1e-4)
    (finding,) = [f for f in check_file(path).findings if f.rule == "loading.inverting-input"]
    assert finding.ctx["value"] == inp.loading_error_max
    assert "33.3 %" in finding.message


def test_offset_current_sign_between_the_pins_on_a_follower_from_one_megohm() -> None:
    # kills: swapping the sign of the offset current between the two input pins. FORMAT.md: bias_current flows
    # into each input pin, offset_current is the difference between the pins (Ios = Ib+ - Ib-), so with
    # Ib = (Ib+ + Ib-)/2: Ib+ = Ib + Ios/2 = 1 nA + 0.25 nA = 1.25 nA flows out of the 1 MΩ source into in+, leaving
    # in+ at -1.25 mV; the follower repeats it (A0 = 1e6: 1e-6 relative). Ib and Ios are ± quantities (issue 10),
    # so the range is ±1.25 mV whichever pin carries +Ios/2; the sign shows in the output's form instead: -1 MΩ
    # per ampere of Ib and -0.5 MΩ per ampere of Ios (the swapped sign gives +0.5 MΩ).
    result = analyse(load_design(CASES / "follower_bias_1meg.yaml"))
    (stage,) = result.stages
    assert stage.vout_min == pytest.approx(-1.25e-3, rel=1e-4)
    assert stage.vout_max == pytest.approx(1.25e-3, rel=1e-4)
    terms = result.forms["OUT"].at().terms
    assert terms["ib:U1"].gain == pytest.approx(-1e6, rel=1e-4)
    assert terms["ios:U1"].gain == pytest.approx(-0.5e6, rel=1e-4)


def test_peak_output_current_includes_the_load_capacitor(tmp_path: Path) -> None:
    # kills: leaving the load capacitor's current out of the peak output current. A follower with 0 V DC and
    # 1 V peak at up to 10 kHz into 10 kΩ || 10 nF: resistive peak V/R = 100 µA (Ohm), capacitive peak
    # 2π·f·C·V = 628.3 µA (i = C dv/dt of a sine); afecheck adds the two peaks (a conservative bound on the phasor
    # sum). Allowance 1e-3: the follower's |H| differs from 1 by about 1e-4 at 10 kHz and the bias offset adds
    # about 1 mV / 10 kΩ = 0.1 µA.
    design = (CASES / "follower_bias_1meg.yaml").read_text(encoding="utf-8")
    design = design.replace("signals: {IN: {dc: [0, 0], source_resistance: 1M}}",
                            "signals: {IN: {dc: [0, 0], ac_amplitude: 1 V, band: [10 Hz, 10 kHz]}}")
    design = design.replace("loads: {OUT: {resistance: 10k}}", "loads: {OUT: {resistance: 10k, capacitance: 10n}}")
    (tmp_path / "ref_parts.yaml").write_text((CASES / "ref_parts.yaml").read_text(encoding="utf-8"), encoding="utf-8")
    path = tmp_path / "follower.yaml"
    path.write_text(design, encoding="utf-8")
    (stage,) = analyse(load_design(path)).stages
    expected = 1.0 / 10e3 + 2 * math.pi * 10e3 * 10e-9 * 1.0
    assert stage.iout_peak == pytest.approx(expected, rel=1e-3)


@pytest.mark.parametrize(("factor", "severity"), [
    (2.0, None),                      # exactly at the warning limit: passes (the rule flags "below 2x")
    (2.0 * (1 - 1e-9), Severity.WARNING),
    (1.0, Severity.WARNING),          # exactly at the error limit: a warning, not an error ("below 1x")
    (1.0 * (1 - 1e-9), Severity.ERROR),
])
def test_slew_rate_comparison_at_its_exact_boundaries(factor: float, severity: Severity | None) -> None:
    # kills: moving the slew-rate comparison across its exact boundary (< for <=, >= for >). The limits are
    # distortion.slew-rate's defaults: error below 1x and warning below 2x of 2π·f·Vpk (common practice, rule page).
    required = 2 * math.pi * 20e3 * 2.0
    loaded = kit.design(part={"slew_rate": factor * required})
    st = kit.stage(f_max=20e3, vout_ac_peak=2.0, required_slew_rate=required)
    found = kit.run(slew_rate, loaded, [st])
    assert [f.severity for f in found] == ([] if severity is None else [severity])
