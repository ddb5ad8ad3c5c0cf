"""End-point nonlinearity against hand-written ngspice decks (the sensor's resistance written there from its published
equation, not taken from afecheck), a published table and the published bridge formula."""

from __future__ import annotations

import math

import pytest

from afecheck.analysis.dc_error import analyse_dc_error
from afecheck.model.load import load_design
from tests.ngspice_harness import needs_ngspice, parse_print, run_ngspice

A0 = 1e5
PART = f"""
parts:
  P:
    gbw: 1 MHz
    open_loop_gain: {A0:g}
    output_resistance: 0
    input_resistance_diff: 1e15
    input_resistance_cm: 1e15
    offset_voltage: 0
    bias_current: 0
    offset_current: 0
rails: {{VP: {{voltage: 10 V}}, VN: {{voltage: -10 V}}, VREF: {{voltage: 2.5 V}}}}
"""
# a non-inverting gain of 2 on net S: the sensor's curve reaches OUT through a linear stage
GAIN2 = """
  U1: {kind: opamp, part: P, pins: {in+: S, in-: FB, out: OUT, v+: VP, v-: VN}}
  RF: {kind: resistor, value: 10k, pins: {1: OUT, 2: FB}}
  RG: {kind: resistor, value: 10k, pins: {1: FB, 2: GND}}
"""
GAIN2_DECK = "E{k} out{k} 0 s{k} fb{k} {a0}\nRF{k} out{k} fb{k} 10k\nRG{k} fb{k} 0 10k\n"

CASES = {
    # NTC, Beta model (IEC 60539-1 B-value): R = R25·exp(B·(1/T − 1/298.15 K)) below a 10 k top resistor
    "ntc": ("components:\n  RT: {kind: resistor, value: 10k, pins: {1: VREF, 2: S}}\n"
            "  TH: {kind: ntc, r25: 10k, beta: 3950 K, temperature: [-20 °C, 80 °C], pins: {1: S, 2: GND}}\n",
            (-20.0, 80.0), "RT{k} vref s{k} 10k\nRTH{k} s{k} 0 {{10e3*exp(3950*(1/({x}+273.15)-1/298.15))}}\n"),
    # Pt1000, Callendar-Van Dusen above 0 °C with the IEC 60751 A and B, below a 1 k top resistor
    "rtd": ("components:\n  RT: {kind: resistor, value: 1k, pins: {1: VREF, 2: S}}\n"
            "  PT: {kind: rtd, r0: 1000, temperature: [0 °C, 400 °C], pins: {1: S, 2: GND}}\n",
            (0.0, 400.0), "RT{k} vref s{k} 1k\nRPT{k} s{k} 0 {{1000*(1+3.9083e-3*{x}-5.775e-7*{x}*{x})}}\n"),
}


def _loaded(tmp_path, body: str):
    path = tmp_path / "d.yaml"
    path.write_text(f"afecheck: 1\nname: nonlinearity check\n{PART}{body}", encoding="utf-8")
    return load_design(path)


def _ngspice_outputs(cell: str, xs: list[float]) -> list[float]:
    """OUT of one hand-written copy of the circuit per measurand value, from ngspice's operating point."""
    lines = ["nonlinearity reference", "VREF vref 0 DC 2.5"]
    for k, x in enumerate(xs):
        lines.append(cell.format(k=k, x=repr(x)) + GAIN2_DECK.format(k=k, a0=A0))
    names = " ".join(f"v(out{k})" for k in range(len(xs)))
    lines += [".control", "set numdgt=15", "op", f"print {names}", "quit", ".endc", ".end"]
    values = parse_print(run_ngspice("\n".join(lines) + "\n")[0])
    return [values[f"v(out{k})"] for k in range(len(xs))]


def _end_point_worst(xs: list[float], vs: list[float]) -> float:
    lo, hi = xs[0], xs[-1]
    dev = [v - (vs[0] + (x - lo) / (hi - lo) * (vs[-1] - vs[0])) for x, v in zip(xs, vs, strict=True)]
    return max(dev, key=abs)


@needs_ngspice
@pytest.mark.ngspice
@pytest.mark.parametrize("case", sorted(CASES))
def test_sensor_divider_nonlinearity_matches_ngspice(tmp_path, case):
    body, (lo, hi), cell = CASES[case]
    nl = analyse_dc_error(_loaded(tmp_path, body + GAIN2), ["OUT"]).nets["OUT"].nonlinearity
    xs = [lo + p * (hi - lo) for p in nl.points]
    spice = _ngspice_outputs(cell, xs)
    assert nl.outputs == pytest.approx(spice, rel=1e-9, abs=1e-12)
    assert nl.worst == pytest.approx(_end_point_worst(xs, spice), rel=1e-6)
    assert nl.fraction == pytest.approx(abs(nl.worst / (spice[-1] - spice[0])), rel=1e-6)
    # a divider's curve is far from straight: several per cent of the span (a regression guard, common practice)
    assert 0.005 < nl.fraction < 0.2


def test_quarter_bridge_nonlinearity_follows_the_published_output(tmp_path):
    # quarter bridge: Vout = V·x/(4 + 2x) with x = ΔR/R (K. Hoffmann, "An Introduction to Measurements using Strain
    # Gages", HBM, 1989); x at full scale from the sensitivity s: s = x/(4 + 2x), so x = 4s/(1 − 2s)
    body = """components:
  B1: {kind: bridge, arrangement: quarter, resistance: 350, sensitivity: 20 mV/V, pins: {exc+: VREF, exc-: GND,
       out+: S, out-: M}}
  RB: {kind: resistor, value: 1e12, pins: {1: M, 2: GND}}
  U1: {kind: opamp, part: P, pins: {in+: S, in-: OUT, out: OUT, v+: VP, v-: VN}}
"""
    nl = analyse_dc_error(_loaded(tmp_path, body), ["OUT"]).nets["OUT"].nonlinearity
    s, v = 0.02, 2.5
    x_fs = 4 * s / (1 - 2 * s)
    # OUT follows out+ (the left mid-point: V·(1+x)/(2+x)); out+ − out− is the published V·x/(4 + 2x)
    expected = [v * (1 + x_fs * m) / (2 + x_fs * m) * A0 / (1 + A0) for m in nl.points]
    assert nl.outputs == pytest.approx(expected, rel=1e-9)
    bridge = [v * x_fs * m / (4 + 2 * x_fs * m) for m in nl.points]
    assert [o - nl.outputs[0] for o in nl.outputs] == pytest.approx(
        [(b - bridge[0]) * A0 / (1 + A0) for b in bridge], rel=1e-6, abs=1e-12)
    assert nl.worst == pytest.approx(_end_point_worst(list(nl.points), expected), rel=1e-9)
    # to first order V·x·m/4·(1 − x·m/2) strays from its chord by V·x²·m(1 − m)/8, x²/32 at mid-scale over a span of
    # x/4: a fraction x/8 ≈ s/2 (worked here from the formula above)
    assert nl.fraction == pytest.approx(x_fs / 8, rel=0.03)
    assert nl.at == pytest.approx(0.5, abs=0.02)


def test_a_linear_chain_has_no_nonlinearity(tmp_path):
    body = "signals: {S: {dc: [-1 V, 1 V]}}\ncomponents:" + GAIN2
    e = analyse_dc_error(_loaded(tmp_path, body), ["OUT"]).nets["OUT"]
    assert e.nonlinearity.worst == 0.0 and e.nonlinearity.fraction == 0.0
    assert set(e.nonlinearity.deviations) == {0.0} and len(e.nonlinearity.points) == 17
    assert e.nonlinearity.span == pytest.approx(4.0 * A0 / (A0 + 2), rel=1e-12)


def test_thermocouple_outputs_follow_the_published_table(tmp_path):
    # type K at 0, 100, ..., 800 °C, reference junction at 0 °C: 0, 4.096, 8.138, 12.209, 16.397, 20.644, 24.905,
    # 29.129, 33.275 mV (NIST Monograph 175, ITS-90 table for type K; from memory, to the table's 1 µV)
    table = [0.0, 4.096, 8.138, 12.209, 16.397, 20.644, 24.905, 29.129, 33.275]
    body = ("components:\n  TC: {kind: thermocouple, type: K, hot: [0 °C, 800 °C], cold: [0 °C, 0 °C], "
            "pins: {p: S, n: GND}}\n" + GAIN2)
    nl = analyse_dc_error(_loaded(tmp_path, body), ["OUT"]).nets["OUT"].nonlinearity
    gain = 2 * A0 / (A0 + 2)
    at = {round(p * 800): o for p, o in zip(nl.points, nl.outputs, strict=True)}
    for i, mv in enumerate(table):
        assert at[100 * i] == pytest.approx(gain * mv / 1000, abs=gain * 1.5e-6)
    table_worst = _end_point_worst([100.0 * i for i in range(9)], [gain * mv / 1000 for mv in table])
    assert abs(nl.worst) >= abs(table_worst) - gain * 2e-6
    assert math.copysign(1, nl.worst) == math.copysign(1, table_worst)
