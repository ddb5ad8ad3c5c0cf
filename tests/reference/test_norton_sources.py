"""A current signal declared on a net that also carries other parts is a Norton source solved with those parts.

The decks are hand-written (tests/reference/cases, the macromodel of opamp.lib), never produced by afecheck's
exporter. Their DC ranges over every corner and their loop margins are compared by test_hand_decks.py; here the
gain in V/A (ngspice tf), the AC response of the stage's own local circuit at a few frequencies (ngspice .ac with
1 A AC on the current source) and the sensor-side numbers. Tolerance 1e-6 relative: both sides solve the same
linear equations (see test_hand_decks.py).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from harness import CASES, _circuit, _run, _values
from ngspice_harness import needs_ngspice, read_raw

from afecheck.analysis.design import analyse_design
from afecheck.analysis.mna import assemble
from afecheck.analysis.stage_analysis import unit_excitation
from afecheck.api import check_design
from afecheck.model.load import load_design
from afecheck.sensors.self_heating import self_heating

FREQS = (10.0, 1e3, 1e5)
CASE_NAMES = ("rtd_current_follower", "shunted_current_noninverting")


def _ngspice_ac(deck: str, work: Path) -> dict[str, np.ndarray]:
    """v(S) and v(OUT) for 1 A AC on IEXC at FREQS (the deck's IEXC line given ``ac 1`` here, not in the file)."""
    lines = [ln + " ac 1" if ln.startswith("IEXC ") else ln for ln in _circuit(deck).splitlines()]
    ctl = ["set filetype=binary", "ac lin 1 10 10", "write f10.raw v(S) v(OUT)", "destroy all",
           "ac lin 1 1e3 1e3", "write f1k.raw v(S) v(OUT)", "destroy all",
           "ac lin 1 1e5 1e5", "write f100k.raw v(S) v(OUT)"]
    _, w = _run("\n".join(lines) + "\n.control\n" + "\n".join(ctl) + "\nquit\n.endc\n.end\n", work)
    raws = [read_raw(w / name) for name in ("f10.raw", "f1k.raw", "f100k.raw")]
    return {net: np.array([r[f"v({net.lower()})"][0] for r in raws]) for net in ("S", "OUT")}


@pytest.mark.ngspice
@pytest.mark.reference
@needs_ngspice
@pytest.mark.parametrize("name", CASE_NAMES)
def test_norton_stage_gain_and_ac_match_hand_deck(name: str, tmp_path: Path) -> None:
    loaded = load_design(CASES / f"{name}.yaml")
    circuits: dict = {}
    result = analyse_design(loaded, circuits)
    (stage,) = result.stages
    (inp,) = [i for i in stage.inputs if i.net == "S"]
    assert inp.source.kind == "current" and inp.gain_unit == "V/A"
    deck = (CASES / f"{name}.cir").read_text(encoding="ascii")
    text, _ = _run(_circuit(deck) + ".control\nset numdgt=15\ntf v(OUT) IEXC\nprint all\nquit\n.endc\n.end\n",
                   tmp_path / "tf")
    assert inp.gain == pytest.approx(_values(text)["transfer_function"], rel=1e-6)
    netlist, branches = circuits["U1"]
    system = assemble(netlist)
    y = system.admittance(np.array(FREQS))
    b = np.broadcast_to(np.asarray(unit_excitation(system, branches["S"]))[..., None], (*y.shape[:-1], 1))
    x = np.linalg.solve(y, b)[..., 0]  # b as a column per frequency: numpy 1.x does not broadcast a 1-D b
    want = _ngspice_ac(deck, tmp_path / "ac")
    for net in ("S", "OUT"):
        got = x[:, system.node_index(net)]
        np.testing.assert_allclose(got, want[net], rtol=1e-6, err_msg=f"{name} v({net})")


def test_current_on_a_sensor_net_is_not_an_ideal_current_into_the_stage() -> None:
    # The bug found at integration: 1 mA declared on the RTD's net with a follower on it printed Vout about 2e8 V
    # (the current into the op-amp's 1 GΩ input alone). Ohm: 1 mA through R(0 °C) = 1000 Ω and R(200 °C) =
    # 1758.56 Ω (Callendar-Van Dusen, IEC 60751 coefficients) is 1.000..1.759 V, within the follower's offsets.
    result = analyse_design(load_design(CASES / "rtd_current_follower.yaml"))
    (stage,) = result.stages
    assert stage.vout_max is not None and stage.vout_max < 2.0, "the 2e8 V symptom: RTD ignored"
    assert stage.vout_min == pytest.approx(1.000, abs=2e-3)
    assert stage.vout_max == pytest.approx(1.75856, abs=2e-3)
    assert stage.inputs[0].input_resistance == pytest.approx(1385.055, rel=1e-3)  # R(100 °C), mid-range


def test_self_heating_and_measurand_of_a_current_excited_rtd() -> None:
    # P = I²R: 1 mA through the Pt1000 at 0 °C is 1.000 mW, ΔT = P/δ = 0.5 K at δ = 2 mW/K; class B at 0 °C is
    # ±0.30 °C (IEC 60751: ±(0.30 + 0.005|t|)), so 0 °C is where the rise takes the largest share (167 %)
    loaded = load_design(CASES / "rtd_current_follower.yaml")
    heat = self_heating(loaded, "RT1")
    # the op-amp's 1 GΩ common-mode input beside the 1 kΩ sensor takes 1e-6 of the current
    assert heat.current_a == pytest.approx(1e-3, rel=2e-6)
    assert heat.temperature_c == pytest.approx(0.0, abs=1e-6)
    assert heat.power_w == pytest.approx(1e-3, rel=5e-6)
    rules = {f.rule: f for f in check_design(loaded).findings}
    assert rules["dc-accuracy.sensor-self-heating"].ctx["value"] == pytest.approx(0.5, rel=1e-5)  # ΔT, K
    # the follower reads 1.0..1.76 V: nothing about its swing, common mode or output current (the 2e8 V reading
    # raised all three)
    assert not [r for r in rules if r.startswith("headroom.")], list(rules)


def test_clipping_restated_in_degrees_through_a_norton_excited_rtd(tmp_path: Path) -> None:
    # 1 mA into the Pt1000's net, gain 3: the net's slope at 200 °C is 3 × 1 mA × dR/dT, with dR/dT =
    # R0·(A + 2B·t) = 1000·(3.9083e-3 − 2·5.775e-7·200) = 3.6773 Ω/°C (Callendar-Van Dusen, IEC 60751), so
    # 11.032 mV/°C; the output must reach 3 × 1.75856 V = 5.2757 V on ±5 V rails and clips.
    (tmp_path / "ref_parts.yaml").write_text((CASES / "ref_parts.yaml").read_text(encoding="utf-8"),
                                             encoding="utf-8")
    design = (CASES / "rtd_current_follower.yaml").read_text(encoding="utf-8")
    design = design.replace("in-: OUT,", "in-: FB,").replace(
        "  U1:", "  RF: {kind: resistor, value: 2k, pins: {1: OUT, 2: FB}}\n"
                 "  RG: {kind: resistor, value: 1k, pins: {1: FB, 2: GND}}\n  U1:")
    (tmp_path / "gain3.yaml").write_text(design, encoding="utf-8")
    loaded = load_design(tmp_path / "gain3.yaml")
    (stage,) = analyse_design(loaded).stages
    assert stage.vout_max == pytest.approx(3 * 1.75856, abs=5e-3)
    (swing,) = [f for f in check_design(loaded).findings if f.rule == "headroom.output-swing"]
    assert swing.ctx["measurand_sensor"] == "RT1" and swing.ctx["measurand_unit"] == "°C"
    assert abs(swing.ctx["measurand_slope_v_per_unit"]) == pytest.approx(3e-3 * 3.6773, rel=1e-3)


def test_current_into_a_rail_biased_node_adds_to_the_divider(tmp_path: Path) -> None:
    # Superposition (Kirchhoff, Norton): 0..100 µA into a node biased by 10 kΩ from a 5 V ± 2 % rail and 10 kΩ to
    # ground is VCC/2 + I·(10k ∥ 10k) = 2.45..2.55 V plus 0..0.5 V: 2.45..3.05 V, rail and current at their ends.
    (tmp_path / "ref_parts.yaml").write_text((CASES / "ref_parts.yaml").read_text(encoding="utf-8"),
                                             encoding="utf-8")
    (tmp_path / "bias.yaml").write_text(
        "afecheck: 1\nname: biased current node\npart_libraries: [ref_parts.yaml]\n"
        "rails: {VCC: {voltage: 5 V, tolerance: 0.02}, VEE: {voltage: -5 V}}\ncomponents:\n"
        "  R1: {kind: resistor, value: 10k, pins: {1: VCC, 2: S}}\n"
        "  R2: {kind: resistor, value: 10k, pins: {1: S, 2: GND}}\n"
        "  U1: {kind: opamp, part: REF-B, pins: {in+: S, in-: OUT, out: OUT, v+: VCC, v-: VEE}}\n"
        "signals: {S: {kind: current, current: [0 A, 100 uA]}}\n", encoding="utf-8")
    result = analyse_design(load_design(tmp_path / "bias.yaml"))
    (stage,) = result.stages
    # the follower with REF-B's A0 = 1e4 passes A0/(1 + A0) of in+ and its ±100 µV offset; its ±5 pA bias through
    # 5 kΩ adds 25 nV
    follow = 1e4 / (1e4 + 1)
    assert stage.vout_min == pytest.approx((2.45 - 100e-6) * follow, abs=1e-7)
    assert stage.vout_max == pytest.approx((3.05 + 100e-6) * follow, abs=1e-7)
    assert result.nets["S"].dc_min == pytest.approx(2.45, abs=1e-6)
    assert result.nets["S"].dc_max == pytest.approx(3.05, abs=1e-6)
    gains = {i.net: i.gain for i in stage.inputs}
    assert gains["S"] == pytest.approx(5000.0, rel=1e-3) and gains["VCC"] == pytest.approx(0.5, rel=1e-3)
