"""Loading rules against the divider's closed form: the input-divider rule's source-resistance bound and capacitance
share, the inverting-input rule's Rs/(Rs + Ri) gain error and its intended-gain and nonlinearity wording."""

from __future__ import annotations

import dataclasses
import math

import pytest
from fixtures.rules import kit
from fixtures.rules.kit import design, run, source, stage, stage_input

from afecheck.checks.loading import bias_current_offset, input_divider_error, inverting_source_loading
from afecheck.checks.loading.bias_current_offset import bias_offset
from afecheck.checks.loading.input_divider_error import divider_error, max_source_resistance
from afecheck.engine.finding import Severity


def test_largest_source_resistance_at_dc_is_the_divider_solved_by_hand() -> None:
    # at DC the pin sees Rcm/(Rs + Rcm) (Ohm's law): a loss L allows Rs = Rcm·L/(1 − L);
    # 1 MΩ and 1 %: 1e6·0.01/0.99 = 10.101 kΩ
    assert max_source_resistance(1e6, 0.0, 0.0, 0.01) == pytest.approx(1e6 * 0.01 / 0.99, rel=1e-8)
    # a bound under 1 Ω is still found (the search starts a billion times below Rcm): 1 MΩ and 0.1 ppm gives 0.1 Ω
    assert max_source_resistance(1e6, 0.0, 0.0, 1e-7) == pytest.approx(1e6 * 1e-7 / (1 - 1e-7), rel=1e-6)
    # exactly half the signal lost: Rs = Rcm itself, returned exactly (the search's upper end meets the loss)
    assert divider_error(1e6, 1e6, 0.0, 0.0) == 0.5
    assert max_source_resistance(1e6, 0.0, 0.0, 0.5) == 1e6


def test_input_capacitance_exactly_at_the_capacitors_tolerance_passes() -> None:
    # the rule flags the pin's input capacitance only when it is "more than" the filter capacitor's tolerance:
    # KIT-AMP 3 pF + 3 pF = 6 pF on 47 pF is 12.8 % (hand calculation); tolerance declared as exactly that share
    share = (3e-12 + 3e-12) / 47e-12
    sk = stage(topology="active-filter",
               inputs=(stage_input("in+", source("SIG", 0.0, 0.0, f_max=20e3), ("R1", "R2")),))

    def network(tol: float) -> dict:
        return {"C2": {"kind": "capacitor", "value": 47e-12, "tolerance": tol, "dielectric": "C0G",
                       "pins": {1: "INP", 2: "GND"}},
                "R1": {"kind": "resistor", "value": 10e3, "pins": {1: "SIG", 2: "N1"}},
                "R2": {"kind": "resistor", "value": 10e3, "pins": {1: "N1", 2: "INP"}}}

    assert run(input_divider_error, design(network(share)), [sk]) == []
    (f,) = run(input_divider_error, design(network(math.nextafter(share, 0.0))), [sk])
    assert f.ctx["value"] == share and f.ctx["margin"] == math.nextafter(share, 0.0) - share


def test_a_capacitor_with_no_declared_tolerance_is_judged_at_the_rule_parameter() -> None:
    # no tolerance declared: the rule's capacitor_tolerance (5 %, C0G class, common practice) is the limit
    sk = stage(topology="active-filter",
               inputs=(stage_input("in+", source("SIG", 0.0, 0.0, f_max=20e3), ("R1", "R2")),))
    net = {"C2": {"kind": "capacitor", "value": 47e-12, "dielectric": "C0G", "pins": {1: "INP", 2: "GND"}},
           "R1": {"kind": "resistor", "value": 10e3, "pins": {1: "SIG", 2: "N1"}},
           "R2": {"kind": "resistor", "value": 10e3, "pins": {1: "N1", 2: "INP"}}}
    (f,) = run(input_divider_error, design(net), [sk])
    assert f.ctx["limit"] == 0.05 and f.ctx["value"] == pytest.approx(6 / 47)


def test_only_the_non_inverting_input_of_a_voltage_source_is_judged() -> None:
    # the inverting input's source loading is loading.inverting-source's; a current or charge source is not a
    # voltage divider at all (the transimpedance and charge-amplifier topologies)
    def found(pin: str, kind: str = "signal") -> int:
        src = source("SIG", 100e3, 100e3, kind=kind, f_max=100e3)
        return len(run(input_divider_error, design(), [stage(topology="follower", inputs=(stage_input(pin, src),))]))

    assert found("in+") == 1 and found("in-") == 0
    assert found("in+", "current") == 0 and found("in+", "charge") == 0


def test_a_zero_ohm_source_makes_no_divider_with_the_pin_capacitance() -> None:
    # an ideal 0 Ω source holds in+ whatever capacitance sits there: nothing to judge (Ohm's law, no divider)
    sk = stage(topology="active-filter", inputs=(stage_input("in+", source("INP", 0.0, 0.0, f_max=20e3)),))
    net = {"C2": {"kind": "capacitor", "value": 47e-12, "tolerance": 0.01, "pins": {1: "INP", 2: "GND"}}}
    assert run(input_divider_error, design(net), [sk]) == []


def _inverting(r_min: float, r_max: float, ri: float = 10e3, pin: str = "in-", topology: str = "inverting",
               kind: str = "signal", ideal_gain: float = -10.0):
    inp = dataclasses.replace(stage_input(pin, source("SIG", r_min, r_max, kind=kind), ("R1",), input_resistance=ri),
                              ideal_gain=ideal_gain)
    return stage(topology=topology, inputs=(inp,))


def test_inverting_source_loading_is_rs_over_rs_plus_ri() -> None:
    # 100 Ω source into a 10 kΩ input resistor: the gain falls by Rs/(Rs + Ri) = 100/10100 = 0.990 % (Ohm's law),
    # over the 0.1 % warning limit and under the 1 % error limit
    (f,) = run(inverting_source_loading, design(), [_inverting(100.0, 100.0)])
    assert f.severity is Severity.WARNING and f.ctx["value"] == pytest.approx(100 / 10100, rel=1e-12)
    assert f.ctx["limit"] == 1e-3 and f.ctx["margin"] == pytest.approx(1e-3 - 100 / 10100, rel=1e-12)
    assert "cuts the gain by 0.990 % (limit 0.100 %)" in f.message and "varies" not in f.message


def test_inverting_source_loading_against_the_intended_gain() -> None:
    # declared intent −9.901 = −10·(1 − 100/10100) to four figures: the source is counted in the gain, so what is
    # judged is the deviation from it, 1 − 9.90099/9.901 = 1e-6 (hand calculation): passes
    intent = {"U1": {**kit.OPAMP, "intended_gain": -9.901}}
    assert run(inverting_source_loading, design(intent), [_inverting(100.0, 100.0)]) == []
    # a source ranging 100..200 Ω: −9.901..−9.804 against −9.901, 0.98 % off
    (f,) = run(inverting_source_loading, design(intent), [_inverting(100.0, 200.0)])
    ends = [-10 * (1 - 100 / 10100), -10 * (1 - 200 / 10200)]
    assert f.ctx["value"] == pytest.approx(max(abs(g / -9.901 - 1) for g in ends), rel=1e-12)
    assert "against the intended gain -9.901 (computed -9.901..-9.804)" in f.message
    # without the range the computed gain is one number
    intent = {"U1": {**kit.OPAMP, "intended_gain": -10.0}}
    (f,) = run(inverting_source_loading, design(intent), [_inverting(100.0, 100.0)])
    assert "(computed -9.901):" in f.message and f.ctx["intended_gain"] == -10.0


def test_a_source_range_wider_than_the_variation_parameter_is_a_nonlinearity() -> None:
    # variation 25 %: 100 Ω to exactly 125 Ω is not reported as varying, the next float above is
    params = {"variation": 0.25}
    (f,) = run(inverting_source_loading, design(), [_inverting(100.0, 125.0)], params=params)
    assert f.ctx["varies"] is False
    (f,) = run(inverting_source_loading, design(), [_inverting(100.0, math.nextafter(125.0, 200.0))], params=params)
    assert f.ctx["varies"] is True and "it varies from 0.990 % to 1.23 %" in f.message


def test_which_inputs_the_inverting_rule_judges() -> None:
    d = design()
    # any input of an inverting, summing or difference stage; only in− elsewhere
    assert len(run(inverting_source_loading, d, [_inverting(100.0, 100.0, pin="in+", topology="difference")])) == 1
    assert run(inverting_source_loading, d, [_inverting(100.0, 100.0, pin="in+", topology="non-inverting")]) == []
    assert len(run(inverting_source_loading, d, [_inverting(100.0, 100.0, topology="non-inverting")])) == 1
    # not judged: a sensor into a virtual ground, current/charge/rail/vsource sources, no source or input resistance
    assert run(inverting_source_loading, d, [_inverting(100.0, 100.0, topology="transimpedance")]) == []
    for kind in ("current", "charge", "rail", "vsource"):
        assert run(inverting_source_loading, d, [_inverting(100.0, 100.0, kind=kind)]) == []
    assert run(inverting_source_loading, d, [_inverting(0.0, 0.0)]) == []


def test_bias_offset_formula_with_unmatched_resistances_by_hand() -> None:
    # NG·(|Ib|·|R− − R+| + |Ios|/2·(R− + R+)) (Jung, Op Amp Applications Handbook, 2005, ch. 1): NG 2, Ib 100 nA,
    # Ios 10 nA, R+ 10 kΩ, R− 5 kΩ: 2·(100n·5k + 5n·15k) = 2·(0.5 mV + 0.075 mV) = 1.15 mV
    assert bias_offset(2.0, 100e-9, 10e-9, 10e3, 5e3) == pytest.approx(1.15e-3, rel=1e-12)
    assert bias_offset(2.0, -100e-9, -10e-9, 5e3, 10e3) == pytest.approx(1.15e-3, rel=1e-12)


def _follower(rs: float, via: tuple[str, ...] = (), **changes):
    return stage(**{"topology": "follower", "inputs": (stage_input("in+", source("SIG", rs, rs), via),), **changes})


def test_bias_offset_rule_against_the_parts_own_offset_by_hand() -> None:
    # KIT-AMP: Ib 1 nA, Vos 1 mV; a follower (NG 1) from 2 MΩ: 1 nA·2 MΩ = 2 mV, twice the part's own 1 mV offset:
    # a warning at 1 × 1 mV; from 20 MΩ, 20 mV: an error at 10 × 1 mV
    (f,) = run(bias_current_offset, design(), [_follower(2e6)])
    assert f.severity is Severity.WARNING and f.ctx["value"] == pytest.approx(2e-3, rel=1e-12)
    assert f.ctx["limit"] == pytest.approx(1e-3, rel=1e-12) and f.ctx["margin"] == pytest.approx(-1e-3, rel=1e-9)
    assert "(limit 1.00 mV, 1 × the part's own offset error 1.00 mV = NG × 1.00 mV)" in f.message
    (f,) = run(bias_current_offset, design(), [_follower(20e6)])
    assert f.severity is Severity.ERROR and f.ctx["limit"] == pytest.approx(10e-3, rel=1e-12)
    # exactly the part's own offset (1 MΩ: 1 mV) is not more than it
    assert run(bias_current_offset, design(), [_follower(1e6)]) == []


def test_bias_offset_counts_the_in_minus_resistance() -> None:
    # Rf = Rg = 20 kΩ at in−: R− = 10 kΩ; with R+ = 1 MΩ the Ib term is 1 nA·990 kΩ at NG 2: 1.98 mV vs 2 mV own
    net = {"RF": {"kind": "resistor", "value": 20e3, "pins": {"1": "INM", "2": "OUT"}},
           "RG": {"kind": "resistor", "value": 20e3, "pins": {"1": "INM", "2": "GND"}}}
    st = stage(topology="non-inverting", noise_gain_dc=2.0,
               inputs=(stage_input("in+", source("SIG", 2e6, 2e6)),))
    (f,) = run(bias_current_offset, design(net), [st])
    assert f.ctx["r_minus"] == pytest.approx(10e3) and f.ctx["value"] == pytest.approx(2 * 1e-9 * 1.99e6, rel=1e-9)


def test_which_inputs_the_bias_rule_judges() -> None:
    d = design({"C1": {"kind": "capacitor", "value": 1e-6, "pins": {"1": "SIG", "2": "INP"}},
                "R5": {"kind": "resistor", "value": 1e6, "pins": {"1": "SIG", "2": "INP"}}})
    # a series resistor adds to the source (sources.py: Thevenin Rs plus the series parts): 1 MΩ + 1 MΩ = 2 mV
    (f,) = run(bias_current_offset, d, [_follower(1e6, ("R5",))])
    assert f.ctx["r_plus"] == 2e6
    assert run(bias_current_offset, d, [_follower(20e6, ("C1",))]) == []  # AC-coupled: no DC path from the source
    assert run(bias_current_offset, d, [_follower(0.0)]) == []
    assert run(bias_current_offset, d, [_follower(math.inf)]) == []
    assert run(bias_current_offset, d, [_follower(20e6, topology="inverting")]) == []
    assert run(bias_current_offset, d, [_follower(20e6, noise_gain_dc=None)]) == []
    minus = stage(topology="follower", inputs=(stage_input("in-", source("SIG", 20e6, 20e6)),))
    assert run(bias_current_offset, d, [minus]) == []
    assert run(bias_current_offset, design(part={"offset_voltage": 0.0}), [_follower(20e6)]) == []


def test_input_divider_quotes_the_limit_of_the_grade_it_gives() -> None:
    # The loss 1 − |H| of the divider Rs against the input's Rcm ∥ Cin is graded against warn_fraction (1e-3) and
    # error_fraction (1e-2) and the finding quotes the limit of the grade it gives (the rule page's table). A source
    # five times the rule's own largest resistance for 1 % loses more than 1 % (an error quoting 1e-2); one at 1.5x
    # its bound for 0.1 % but under the 1 % bound loses between the two (a warning quoting 1e-3).
    def found(rs: float) -> list:
        src = source("SIG", rs, rs, f_max=100e3)
        return run(input_divider_error, design(), [stage(topology="follower", inputs=(stage_input("in+", src),))])

    (probe,) = found(10e6)
    r_cm, c_in = probe.ctx["input_resistance_cm"], probe.ctx["input_capacitance"]
    r_err, r_warn = (max_source_resistance(r_cm, c_in, 100e3, x) for x in (1e-2, 1e-3))
    assert r_warn < 1.5 * r_warn < r_err
    assert [(f.severity, f.ctx["limit"]) for f in found(5 * r_err)] == [(Severity.ERROR, 1e-2)]
    assert [(f.severity, f.ctx["limit"]) for f in found(1.5 * r_warn)] == [(Severity.WARNING, 1e-3)]


def test_a_zero_ohm_input_resistor_is_no_divider_for_the_source() -> None:
    # With Ri = 0 the source drives the virtual ground itself: the stage is then a transimpedance connection, which
    # this rule leaves alone as it does the transimpedance topology (Rs/(Rs + Ri) = 100 % would be a false error);
    # the smallest positive Ri is judged as usual: 100 Ω into 1 Ω loses 100/101 (Ohm's law).
    assert run(inverting_source_loading, design(), [_inverting(100.0, 100.0, ri=0.0)]) == []
    (f,) = run(inverting_source_loading, design(), [_inverting(100.0, 100.0, ri=1.0)])
    assert f.ctx["value"] == pytest.approx(100 / 101, rel=1e-12)
