"""Loading rules: the source-resistance bound of the input-divider rule against the divider's closed form."""

from __future__ import annotations

import math

import pytest
from fixtures.rules.kit import design, run, source, stage, stage_input

from afecheck.checks.loading import input_divider_error
from afecheck.checks.loading.input_divider_error import divider_error, max_source_resistance


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
