"""Signal ranges flowing from declared sources through stages in signal order."""

from __future__ import annotations

import pytest

from afecheck.analysis import analyse
from afecheck.analysis.signals import seed_signals
from afecheck.graph.build import build_circuit
from afecheck.model.load import load_design

CHAIN = """afecheck: 1
name: two-stage chain
parts:
  P: {gbw: 10 MHz, open_loop_gain: 120 dB, second_pole: 30 MHz, output_resistance: 20,
      input_resistance_diff: 1T, input_resistance_cm: 1T, input_capacitance_diff: 0, input_capacitance_cm: 0,
      bias_current: 0, offset_current: 0, offset_voltage: 0}
rails:
  VP: {voltage: 5 V, tolerance: 5%}
  VN: {voltage: -5 V, tolerance: 5%}
components:
  U1: {kind: opamp, part: P, pins: {in+: IN, in-: F1, out: OUT1, v+: VP, v-: VN}}
  R1: {kind: resistor, value: 10k, pins: {1: OUT1, 2: F1}}
  R2: {kind: resistor, value: 10k, pins: {1: F1, 2: GND}}
  U2: {kind: opamp, part: P, pins: {in+: GND, in-: S2, out: OUT2, v+: VP, v-: VN}}
  R3: {kind: resistor, value: 10k, pins: {1: OUT1, 2: S2}}
  R4: {kind: resistor, value: 10k, pins: {1: S2, 2: OUT2}}
signals:
  IN: {dc: [0, 1 V], ac_amplitude: 100 mV, band: [10 Hz, 1 kHz], source_resistance: 1k}
loads:
  OUT2: {resistance: 10k}
"""


@pytest.fixture(scope="module")
def chain(tmp_path_factory):
    path = tmp_path_factory.mktemp("chain") / "chain.yaml"
    path.write_text(CHAIN, encoding="utf-8")
    return load_design(path)


def test_ranges_flow_through_two_stages(chain):
    a = analyse(chain)
    # gain +2 then -1 (common practice: 1 + Rf/Rg, -Rf/Ri), A0 = 1e6 leaves errors below 1e-5
    assert (a.nets["OUT1"].dc_min, a.nets["OUT1"].dc_max) == (pytest.approx(0, abs=1e-5), pytest.approx(2, rel=1e-5))
    assert (a.nets["OUT2"].dc_min, a.nets["OUT2"].dc_max) == (pytest.approx(-2, rel=1e-5), pytest.approx(0, abs=1e-5))
    # the inverting stage's virtual ground stays at 0 V, its input resistor carries the range
    assert a.nets["S2"].dc_max == pytest.approx(0, abs=1e-5)
    # AC amplitude 0.1 V · 2 at each output, highest frequency carried along
    assert a.nets["OUT1"].ac_amplitude == pytest.approx(0.2, rel=1e-4)
    assert a.nets["OUT2"].ac_amplitude == pytest.approx(0.2, rel=1e-4)
    assert a.nets["OUT2"].f_max == 1000.0
    u1 = next(s for s in a.stages if s.opamp == "U1")
    # flat gain 2 across a 1 kHz band with a 10 MHz part (closed-loop corner near 5 MHz, [FR] R2)
    assert u1.inputs[0].band_gain == pytest.approx(2.0, rel=1e-4)
    assert a.not_evaluated == ()


def test_upstream_stage_is_a_thevenin_source(chain):
    a = analyse(chain)
    u1 = next(s for s in a.stages if s.opamp == "U1")
    u2 = next(s for s in a.stages if s.opamp == "U2")
    (src,) = [i for i in u2.inputs if i.net == "OUT1"]
    assert src.source.kind == "stage-output"
    assert (src.source.v_min, src.source.v_max) == (u1.vout_min, u1.vout_max)
    assert src.source.r_max == u1.output_resistance
    # closed-loop output resistance Ro/(1 + T) with T = A0/NG = 5e5 [FR] RULES-REFERENCE R2
    assert u1.output_resistance == pytest.approx(20 / (1 + 1e6 / 2), rel=2e-2)
    assert src.source.ac_amplitude == pytest.approx(0.2, rel=1e-4)
    # the 10 kΩ input resistor loads an output of milliohms: the error is Rout/(Rout + Ri) [FR] R1
    assert src.loading_error_max == pytest.approx(u1.output_resistance / (u1.output_resistance + 10e3), rel=1e-2)


def test_seeded_nets_cover_rails_and_declared_signals(chain):
    nets = seed_signals(build_circuit(chain))
    assert (nets["VP"].dc_min, nets["VP"].dc_max) == (pytest.approx(4.75), pytest.approx(5.25))
    assert (nets["VN"].dc_min, nets["VN"].dc_max) == (pytest.approx(-5.25), pytest.approx(-4.75))
    assert nets["IN"].ac_amplitude == 0.1 and nets["IN"].f_max == 1000.0
    assert nets["GND"].dc_min == 0.0 == nets["GND"].dc_max


def test_every_stage_net_gets_a_signal(chain):
    a = analyse(chain)
    assert {"IN", "F1", "OUT1", "S2", "OUT2", "VP", "VN", "GND"} <= set(a.nets)
    for sig in a.nets.values():
        assert type(sig.dc_min) is float and type(sig.dc_max) is float
        assert sig.dc_min <= sig.dc_max


def test_floating_input_is_not_evaluated_not_a_crash(tmp_path):
    path = tmp_path / "float.yaml"
    path.write_text("""afecheck: 1
parts: {P: {gbw: 1 MHz}}
rails: {VP: {voltage: 5 V}}
components:
  C1: {kind: capacitor, value: 1u, pins: {1: IN, 2: X}}
  U1: {kind: opamp, part: P, pins: {in+: X, in-: OUT, out: OUT, v+: VP, v-: GND}}
signals: {IN: {dc: [0, 1 V]}}
loads: {OUT: {resistance: 10k}}
""", encoding="utf-8")
    a = analyse(load_design(path))
    (s,) = a.stages
    # RULES-REFERENCE R5a: an input reached only through a capacitor has no DC path; no DC range is guessed
    assert s.vout_min is None and s.vcm_min is None
    assert any("in+ has no DC path" in r for r in s.not_evaluated)
    assert a.not_evaluated and a.not_evaluated[0][0] == ("U1",)


def test_capacitive_divider_on_the_output_does_not_stop_the_analysis(tmp_path):
    # the node between two series capacitors has no DC path; its DC value is immaterial to the stage
    path = tmp_path / "capdiv.yaml"
    path.write_text("""afecheck: 1
parts: {P: {gbw: 1 MHz, open_loop_gain: 100 dB, second_pole: 3 MHz, output_resistance: 0, offset_voltage: 0,
            bias_current: 0, offset_current: 0}}
rails: {VP: {voltage: 5 V}}
signals: {IN: {dc: [0, 1 V]}}
components:
  U1: {kind: opamp, part: P, pins: {in+: IN, in-: OUT, out: OUT, v+: VP, v-: GND}}
  C1: {kind: capacitor, value: 1n, pins: {1: OUT, 2: X}}
  C2: {kind: capacitor, value: 1n, pins: {1: X, 2: GND}}
  RL: {kind: resistor, value: 10k, pins: {1: OUT, 2: GND}}
""", encoding="utf-8")
    (s,) = analyse(load_design(path)).stages
    assert s.not_evaluated == ()
    assert s.vout_max == pytest.approx(1.0, rel=1e-4)  # follower: Vout = Vin (A0 = 1e5)


def test_divider_outside_every_stage_gets_its_range(tmp_path):
    path = tmp_path / "div.yaml"
    path.write_text("""afecheck: 1
rails: {VP: {voltage: 5 V, tolerance: 2%}}
components:
  R1: {kind: resistor, value: 30k, pins: {1: VP, 2: X}}
  R2: {kind: resistor, value: 10k, pins: {1: X, 2: GND}}
""", encoding="utf-8")
    x = analyse(load_design(path)).nets["X"]
    # 5 V · (1 ± 2 %) · 10k/40k [FR] RULES-REFERENCE R1 divider formula
    assert (x.dc_min, x.dc_max) == (pytest.approx(1.225), pytest.approx(1.275))


def test_loop_gain_memo_gives_the_same_results_and_tells_circuits_apart(tmp_path, monkeypatch):
    import itertools

    import afecheck.analysis.stage_analysis as sa

    channel = """  U{n}: {{kind: opamp, part: P, pins: {{in+: IN{n}, in-: F{n}, out: O{n}, v+: VP, v-: VN}}}}
  RF{n}: {{kind: resistor, value: {rf}, pins: {{1: O{n}, 2: F{n}}}}}
  RG{n}: {{kind: resistor, value: 10k, pins: {{1: F{n}, 2: GND}}}}
"""
    body = CHAIN.split("components:")[0] + "components:\n" + "".join(
        channel.format(n=n, rf=rf) for n, rf in ((1, "10k"), (2, "10k"), (3, "90k")))
    body += "signals:\n" + "".join(f"  IN{n}: {{dc: [0, 0.1 V]}}\n" for n in (1, 2, 3))
    body += "loads:\n" + "".join(f"  O{n}: {{resistance: 10k}}\n" for n in (1, 2, 3))
    path = tmp_path / "channels.yaml"
    path.write_text(body, encoding="utf-8")
    memo = analyse(load_design(path))
    counter = itertools.count()
    monkeypatch.setattr(sa, "_circuit_key", lambda netlist, probed: next(counter))
    fresh = analyse(load_design(path))
    assert memo.stages == fresh.stages
    pm = {s.opamp: s.phase_margin_deg for s in memo.stages}
    assert pm["U1"] == pm["U2"] != pm["U3"]  # NG 2 and NG 10 differ [GHLM] R2(a)
