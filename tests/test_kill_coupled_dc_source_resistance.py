"""A voltage source with a source resistance does not hold its net: another op-amp's bias current on that net
moves it, and every stage reading the net sees the move (superposition, by hand)."""

from __future__ import annotations

import pytest

from afecheck.analysis import analyse
from afecheck.model.load import load_design

DESIGN = """
afecheck: 1
name: two followers on one source
parts:
  HIZ: {{gbw: 1 MHz, open_loop_gain: 1e5, second_pole: 1e12, output_resistance: 0, input_resistance_diff: 1e15,
        input_resistance_cm: 1e15, input_capacitance_diff: 0, input_capacitance_cm: 0, offset_voltage: 0,
        bias_current: 0, offset_current: 0}}
  LEAKY: {{gbw: 1 MHz, open_loop_gain: 1e5, second_pole: 1e12, output_resistance: 0, input_resistance_diff: 1e15,
          input_resistance_cm: 10k, input_capacitance_diff: 0, input_capacitance_cm: 0, offset_voltage: 0,
          bias_current: 1u, offset_current: 0}}
rails: {{VP: {{voltage: 5 V}}, VN: {{voltage: -5 V}}}}
{source}
components:
  U2: {{kind: opamp, part: HIZ, pins: {{in+: X, in-: O2, out: O2, v+: VP, v-: VN}}}}
  U3: {{kind: opamp, part: LEAKY, pins: {{in+: X, in-: O3, out: O3, v+: VP, v-: VN}}}}
{extra}
loads: {{O2: {{resistance: 1T}}, O3: {{resistance: 1T}}}}
"""

FOLLOWER = 1e5 / (1 + 1e5)  # unity feedback around A0 = 1e5 (Black's formula)


def _nets(tmp_path, source: str, extra: str = "") -> dict:
    path = tmp_path / "d.yaml"
    path.write_text(DESIGN.format(source=source, extra=extra), encoding="utf-8")
    return analyse(load_design(path)).nets


def _expected(rs: float) -> tuple[float, float]:
    # X = 1 V·Rcm/(Rs + Rcm) ∓ Ib·(Rs ∥ Rcm) with U3's Rcm = 10 kΩ and Ib = ±1 µA (superposition; hand
    # calculation; the 1 PΩ of U2's input and U3's differential resistance are left out, 1e-11 relative)
    rcm, ib = 10e3, 1e-6
    x = rcm / (rs + rcm)
    shift = ib * rs * rcm / (rs + rcm)
    return FOLLOWER * (x - shift), FOLLOWER * (x + shift)


def test_a_bias_current_through_the_source_resistance_reaches_the_other_follower(tmp_path):
    # found by this test: the neighbour pass skipped every declared voltage signal's net as if an ideal source
    # held it, so U2 kept 0.499995 V while U3, on the same net, saw 0.495..0.505 V
    nets = _nets(tmp_path, "signals:\n  X: {dc: [1 V, 1 V], source_resistance: 10k}")
    lo, hi = _expected(10e3)
    for out in ("O2", "O3"):
        assert (nets[out].dc_min, nets[out].dc_max) == (pytest.approx(lo, rel=1e-9), pytest.approx(hi, rel=1e-9))


def test_a_signal_source_component_behind_its_resistance_is_moved_too(tmp_path):
    # the same source drawn as a part (p on X, n on ground) with its 10 kΩ: the same figures
    part = "  VS: {kind: signal_source, dc: [1 V, 1 V], source_resistance: 10k, pins: {p: X, n: GND}}"
    nets = _nets(tmp_path, "", part)
    lo, hi = _expected(10e3)
    assert (nets["O2"].dc_min, nets["O2"].dc_max) == (pytest.approx(lo, rel=1e-9), pytest.approx(hi, rel=1e-9))


def test_an_ideal_source_holds_its_net_against_the_bias_current(tmp_path):
    # no source resistance: X is 1 V whatever U3 draws, and U2 follows it exactly (A0/(1 + A0))
    nets = _nets(tmp_path, "signals:\n  X: {dc: [1 V, 1 V]}")
    assert (nets["O2"].dc_min, nets["O2"].dc_max) == (pytest.approx(FOLLOWER, rel=1e-12),
                                                      pytest.approx(FOLLOWER, rel=1e-12))
