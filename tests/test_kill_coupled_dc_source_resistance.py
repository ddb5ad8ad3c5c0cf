"""A voltage source with a source resistance does not hold its net: another op-amp's bias current on that net
moves it, and every stage reading the net sees the move (superposition, by hand)."""

from __future__ import annotations

import pytest

from afecheck.analysis import analyse
from afecheck.model.load import load_design
from tests.hand_part import part, template_part

DESIGN = """
afecheck: 1
name: two followers on one source
parts:
""" + template_part("HIZ") + "\n" + template_part("LEAKY", rcm="10k", ib="1u") + """
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
    path = tmp_path / "d.yaml"
    path.write_text(DESIGN.format(source="signals:\n  X: {dc: [1 V, 1 V], source_resistance: 10k}", extra=""),
                    encoding="utf-8")
    a = analyse(load_design(path))
    lo, hi = _expected(10e3)
    for out in ("O2", "O3"):
        assert (a.nets[out].dc_min, a.nets[out].dc_max) == (pytest.approx(lo, rel=1e-9), pytest.approx(hi, rel=1e-9))
    # the stages' own output ranges take the same figures
    for s in a.stages:
        assert (s.vout_min, s.vout_max) == (pytest.approx(lo, rel=1e-9), pytest.approx(hi, rel=1e-9))


def test_an_ideal_source_holds_its_net_against_the_bias_current(tmp_path):
    # no source resistance: X is 1 V whatever U3 draws, and U2 follows it exactly (A0/(1 + A0))
    nets = _nets(tmp_path, "signals:\n  X: {dc: [1 V, 1 V]}")
    assert (nets["O2"].dc_min, nets["O2"].dc_max) == (pytest.approx(FOLLOWER, rel=1e-12),
                                                      pytest.approx(FOLLOWER, rel=1e-12))


@pytest.mark.parametrize(("kind", "rs"), [("part", "10k"), ("signal", "1"), ("part", "1")])
def test_any_source_resistance_lets_the_net_move(tmp_path, kind, rs):
    # the same source drawn as a part (p on X, n on ground) gives the same figures, and the smallest resistance
    # moves the net too: 1 µA through 1 Ω ∥ 10 kΩ is ±0.9999 µV on 0.9999 V
    if kind == "signal":
        nets = _nets(tmp_path, f"signals:\n  X: {{dc: [1 V, 1 V], source_resistance: {rs}}}")
    else:
        part = f"  VS: {{kind: signal_source, dc: [1 V, 1 V], source_resistance: {rs}, pins: {{p: X, n: GND}}}}"
        nets = _nets(tmp_path, "", part)
    lo, hi = _expected(10e3 if rs == "10k" else 1.0)
    assert (nets["O2"].dc_min, nets["O2"].dc_max) == (pytest.approx(lo, rel=1e-10), pytest.approx(hi, rel=1e-10))


def test_a_photodiode_net_takes_every_reader_bias_current(tmp_path):
    # a current signal is no voltage source at all: 1 nA photocurrent into 1 MΩ of shunt, U3's Rcm (10 kΩ) and
    # Ib (±1 µA) on the same net: X = (1 nA ∓ 1 µA)·(1 MΩ ∥ 10 kΩ) (Norton, superposition; hand calculation),
    # and U2 follows it
    nets = _nets(tmp_path, "signals:\n  X: {kind: current, current: [1 nA, 1 nA], shunt_resistance: 1M}")
    r = 1e6 * 10e3 / (1e6 + 10e3)
    lo, hi = FOLLOWER * (1e-9 - 1e-6) * r, FOLLOWER * (1e-9 + 1e-6) * r
    for out in ("O2", "O3"):
        assert (nets[out].dc_min, nets[out].dc_max) == (pytest.approx(lo, rel=1e-9), pytest.approx(hi, rel=1e-9))


def test_stages_sharing_only_ground_do_not_crowd_out_the_neighbour(tmp_path):
    # U2 as a gain-of-2 stage (RG to ground) beside 34 inverting stages fed from a 0.1 V reference, their in+ on
    # ground: ground holds its voltage, so none of them is U2's neighbour (together they would overflow the
    # neighbour pass's part limit), and U3's bias current still reaches U2 through the source resistance:
    # O2 = X·2/(1 + 2/A0) (non-inverting gain 1 + RF/RG with the loop's finite A0, Black), X as in the first test
    crowd = "\n".join(
        f"  RI{k}: {{kind: resistor, value: 10k, pins: {{1: VQ, 2: M{k}}}}}\n"
        f"  RF{k}: {{kind: resistor, value: 10k, pins: {{1: M{k}, 2: Q{k}}}}}\n"
        f"  UI{k}: {{kind: opamp, part: HIZ, pins: {{in+: GND, in-: M{k}, out: Q{k}, v+: VP, v-: VN}}}}"
        for k in range(34))
    text = DESIGN.format(source="signals:\n  X: {dc: [1 V, 1 V], source_resistance: 10k}", extra="")
    text = text.replace("in-: O2, out: O2", "in-: G2, out: O2").replace("VN: {voltage: -5 V}}",
                                                                      "VN: {voltage: -5 V}, VQ: {voltage: 0.1 V}}")
    text = text.replace("\nloads:", "\n  RG: {kind: resistor, value: 10k, pins: {1: G2, 2: GND}}\n"
                                     "  RF: {kind: resistor, value: 10k, pins: {1: G2, 2: O2}}\n" + crowd + "\nloads:")
    path = tmp_path / "d.yaml"
    path.write_text(text, encoding="utf-8")
    nets = analyse(load_design(path)).nets
    lo, hi = _expected(10e3)
    gain = 2 / (1 + 2 / 1e5) / FOLLOWER
    assert (nets["O2"].dc_min, nets["O2"].dc_max) == (pytest.approx(gain * lo, rel=1e-9),
                                                      pytest.approx(gain * hi, rel=1e-9))
    assert nets["Q0"].dc_min == pytest.approx(-0.1 * (1 / (1 + 2 / 1e5)), rel=1e-9)


@pytest.mark.parametrize("kind", ["signal", "part"])
def test_an_ideal_source_shared_by_many_readers_leaves_the_real_neighbour_in(tmp_path, kind):
    # U2 follows an ideal 1 V source that 34 gain-of-2 stages also read, and drives U4's inverting input through
    # 1 kΩ; U4 has ±1 mV of offset. The ideal source holds X, so the 34 readers are no neighbours of U2 (together
    # they would overflow the neighbour pass's part limit) and U4 is: U2's output current then carries U4's
    # offset, I = (O2 − V−)/RI with V− = (O2/RI + A0·Vos/RF)/(1/RI + (1 + A0)/RF) (nodal equation at U4's in−
    # with Vout = A0·(Vos − V−); hand calculation), largest at Vos = −1 mV
    source = ("signals:\n  X: {dc: [1 V, 1 V]}" if kind == "signal" else "")
    extra = ("" if kind == "signal" else
             "  VS: {kind: signal_source, dc: [1 V, 1 V], pins: {p: X, n: GND}}\n")
    extra += "\n".join(
        f"  RG{k}: {{kind: resistor, value: 10k, pins: {{1: G{k}, 2: GND}}}}\n"
        f"  RF{k}: {{kind: resistor, value: 10k, pins: {{1: G{k}, 2: Q{k}}}}}\n"
        f"  UN{k}: {{kind: opamp, part: HIZ, pins: {{in+: X, in-: G{k}, out: Q{k}, v+: VP, v-: VN}}}}"
        for k in range(34))
    extra += ("\n  RI4: {kind: resistor, value: 1k, pins: {1: O2, 2: M4}}\n"
              "  RB4: {kind: resistor, value: 1k, pins: {1: M4, 2: O4}}\n"
              "  U4: {kind: opamp, part: OFFS, pins: {in+: GND, in-: M4, out: O4, v+: VP, v-: VN}}")
    text = DESIGN.format(source=source, extra=extra)
    text = text.replace("  U3: {kind: opamp, part: LEAKY, pins: {in+: X, in-: O3, out: O3, v+: VP, v-: VN}}\n", "")
    text = text.replace("rails:", part("OFFS", vos="1m") + "\nrails:")
    text = text.replace(", O3: {resistance: 1T}", "")
    path = tmp_path / "d.yaml"
    path.write_text(text, encoding="utf-8")
    u2 = {s.opamp: s for s in analyse(load_design(path)).stages}["U2"]
    o2, a0, ri, rf = FOLLOWER, 1e5, 1e3, 1e3
    worst = 0.0
    for vos in (-1e-3, 1e-3):
        vm = (o2 / ri + a0 * vos / rf) / (1 / ri + (1 + a0) / rf)
        worst = max(worst, abs((o2 - vm) / ri))
    assert u2.iout_peak == pytest.approx(worst, rel=1e-6)
