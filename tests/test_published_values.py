"""The analysis engine against the check values of RULES-REFERENCE (source tag beside each check)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from ngspice_harness import opamp_elements

from afecheck.analysis.loop import loop_gain
from afecheck.analysis.mna import impedance, log_grid, solve_dc, transfer
from afecheck.analysis.netlist import Capacitor, Netlist, Resistor, VoltageSource, ntc_resistance


def resistive_stage(ng: float, gbw: float, f2: float, a0: float = 1e5) -> Netlist:
    """Non-inverting stage of noise gain ``ng`` (Rg 1k, Rf = (ng−1)·1k; a follower when ng = 1); ideal inputs, Ro 0."""
    if ng == 1.0:
        els, inst = opamp_elements("U1", "in", "out", "out", a0=a0, gbw=gbw, f2=f2)
        return Netlist((VoltageSource("V1", "in", "0", ac=1.0),) + els, {"U1": inst})
    els, inst = opamp_elements("U1", "in", "inm", "out", a0=a0, gbw=gbw, f2=f2)
    return Netlist((VoltageSource("V1", "in", "0", ac=1.0), Resistor("Rg", "inm", "0", 1e3),
                    Resistor("Rf", "out", "inm", (ng - 1.0) * 1e3)) + els, {"U1": inst})


def inverting_stage(rf: float, rg: float, cg: float, cf: float, *, a0: float, gbw: float, f2: float,
                    rx: float | None = None) -> Netlist:
    """Inverting stage: Rg from the source, Rf and Cf across, Cg from in- to ground, Rx between the inputs."""
    els, inst = opamp_elements("U1", "0", "inm", "out", a0=a0, gbw=gbw, f2=f2)
    parts = [VoltageSource("V1", "in", "0", ac=1.0), Resistor("Rg", "in", "inm", rg), Resistor("Rf", "inm", "out", rf)]
    if cg:
        parts.append(Capacitor("Cg", "inm", "0", cg))
    if cf:
        parts.append(Capacitor("Cf", "inm", "out", cf))
    if rx:
        parts.append(Resistor("Rx", "inm", "0", rx))
    return Netlist(tuple(parts) + els, {"U1": inst})


def test_r1_inverting_gain_finite_a0() -> None:
    # [DER][NUM] RULES-REFERENCE R1: Rf 100k, Rg 10k, A0 1e5: G = -9.99890 (Ro 0); -9.998899 (Ro 100 Ω, no load);
    # -9.998789 with RL = 1 kΩ to ground
    def stage(ro: float, load: float | None = None) -> Netlist:
        els, inst = opamp_elements("U1", "0", "inm", "out", a0=1e5, gbw=1e7, ro=ro)
        extra = (Resistor("RL", "out", "0", load),) if load else ()
        return Netlist((VoltageSource("V1", "in", "0", dc=1.0), Resistor("Rg", "in", "inm", 1e4),
                        Resistor("Rf", "inm", "out", 1e5)) + els + extra, {"U1": inst})

    assert solve_dc(stage(0.0)).voltage("out") == pytest.approx(-9.99890, abs=5e-6)
    assert solve_dc(stage(100.0)).voltage("out") == pytest.approx(-9.998899, abs=5e-7)
    assert solve_dc(stage(100.0, 1e3)).voltage("out") == pytest.approx(-9.998789, abs=5e-7)


# [GHLM] formula, [NUM]: RULES-REFERENCE R2(a) two-pole table (GBW, f2, NG) -> (fc, PM, peaking dB)
R2A = [
    (10e6, 10e6, 1.0, 7.862e6, 51.83, 1.249),
    (10e6, 10e6, 2.0, 4.551e6, 65.53, 0.0),
    (10e6, 10e6, 10.0, 0.9951e6, 84.32, 0.0),
    (50e6, 10e6, 1.0, 21.27e6, 25.18, 7.213),
    (50e6, 10e6, 2.0, 14.32e6, 34.94, 4.437),
    (50e6, 10e6, 3.536, 10.00e6, 45.00, 2.350),
    (50e6, 10e6, 5.0, 7.862e6, 51.83, 1.249),
    (50e6, 10e6, 7.5, 5.774e6, 60.00, 0.2803),
]


@pytest.mark.parametrize(("gbw", "f2", "ng", "fc", "pm", "peak_db"), R2A)
def test_r2a_two_pole_table(gbw, f2, ng, fc, pm, peak_db) -> None:
    # [GHLM] two-pole table R2(a), A0 = 1e5
    nl = resistive_stage(ng, gbw, f2)
    lg = loop_gain(nl, "U1")
    assert lg.crossover_hz == pytest.approx(fc, rel=6e-4)
    assert lg.phase_margin_deg == pytest.approx(pm, abs=0.006)
    # [OG] closed-loop peaking of the same second-order model, read from the AC response
    f = log_grid(fc / 100, fc * 10, 400)
    h = np.abs(transfer(nl, "V1", "out", f))
    peaking = 20 * math.log10(max(h.max() / h[0], 1.0))
    assert peaking == pytest.approx(peak_db, abs=0.01)


def test_r2a_closed_form_a0_infinite() -> None:
    # [GHLM] r = GBW/(NG·f2), fc = f2·sqrt((sqrt(1+4r²)−1)/2), PM = 90° − atan(fc/f2): compare a very large A0
    for gbw, f2, ng, *_ in R2A:
        r = gbw / (ng * f2)
        fc = f2 * math.sqrt((math.sqrt(1 + 4 * r * r) - 1) / 2)
        lg = loop_gain(resistive_stage(ng, gbw, f2, a0=1e12), "U1")
        assert lg.crossover_hz == pytest.approx(fc, rel=1e-8)  # refined to about 1e-8
        assert lg.phase_margin_deg == pytest.approx(90 - math.degrees(math.atan(fc / f2)), abs=1e-6)


def test_r2a_rx_between_inputs() -> None:
    # [FR][NUM] R2(a): gain -1 (Rf = Rg = 1k) with Rx = 333.3 Ω between inputs: NG = 5.000, PM = 51.83°
    nl = inverting_stage(1e3, 1e3, 0, 0, a0=1e5, gbw=50e6, f2=10e6, rx=1e3 / 3)
    lg = loop_gain(nl, "U1")
    assert lg.noise_gain_dc == pytest.approx(5.0, rel=1e-9)
    assert lg.phase_margin_deg == pytest.approx(51.83, abs=0.006)
    assert solve_dc(nl.replaced(VoltageSource("V1", "in", "0", dc=1.0))).voltage("out") == pytest.approx(-1, rel=1e-4)


def test_noise_gain_two_for_inverting_unity() -> None:
    # [FR] R2: an inverting gain of -1 has NG = 2 (and a follower NG = 1)
    lg = loop_gain(inverting_stage(10e3, 10e3, 0, 0, a0=1e5, gbw=10e6, f2=30e6), "U1")
    assert lg.noise_gain_dc == pytest.approx(2.0, rel=1e-12)
    assert loop_gain(resistive_stage(1.0, 10e6, 30e6), "U1").noise_gain_dc == pytest.approx(1.0, rel=1e-12)


# [NUM] RULES-REFERENCE R2(b): A0 1e5, GBW 10 MHz, f2 30 MHz, Ro 0; (Rf, Rg, Cg, Cf) -> (fc, PM)
R2B = [
    (10e3, 10e3, 0.0, 0.0, 4.934e6, 80.66),
    (10e3, 10e3, 10e-12, 0.0, 3.397e6, 36.68),
    (100e3, 100e3, 10e-12, 0.0, 1.241e6, 12.02),
    (100e3, 100e3, 10e-12, 10e-12, 4.934e6, 80.66),
    (100e3, 100e3, 10e-12, 2e-12, 1.800e6, 71.10),
]


@pytest.mark.parametrize(("rf", "rg", "cg", "cf", "fc", "pm"), R2B)
def test_r2b_input_capacitance(rf, rg, cg, cf, fc, pm) -> None:
    # [FR][NUM] R2(b) input capacitance with and without Cf
    lg = loop_gain(inverting_stage(rf, rg, cg, cf, a0=1e5, gbw=10e6, f2=30e6), "U1")
    assert lg.crossover_hz == pytest.approx(fc, rel=6e-4)
    assert lg.phase_margin_deg == pytest.approx(pm, abs=0.006)


# [NUM] RULES-REFERENCE R2(c): A0 1e5, GBW 50 MHz, f2 10 MHz; Rf 10k, Rg 1k, Cg 5 pF; Cf -> (fc, PM, NG(∞))
R2C = [
    (0.0, 4.166e6, 60.60, None),
    (1e-12, 4.281e6, 73.54, 6.000),
    (10e-12, 14.75e6, 66.32, 1.500),
    (33e-12, 19.38e6, 39.25, 1.152),
    (100e-12, 20.67e6, 29.99, 1.050),
]


@pytest.mark.parametrize(("cf", "fc", "pm", "ng_hf"), R2C)
def test_r2c_decompensated_with_cf(cf, fc, pm, ng_hf) -> None:
    # [FR][NUM] R2(c) decompensated part with a filter capacitor; NG(∞) = 1 + Cg/Cf [FR]
    lg = loop_gain(inverting_stage(10e3, 1e3, 5e-12, cf, a0=1e5, gbw=50e6, f2=10e6), "U1")
    assert lg.crossover_hz == pytest.approx(fc, rel=6e-4)
    assert lg.phase_margin_deg == pytest.approx(pm, abs=0.006)
    if ng_hf is not None:
        assert lg.noise_gain_at(1e12) == pytest.approx(ng_hf, rel=6e-4)


CF_GR = math.sqrt(100e-12 / (2 * math.pi * 1e6 * 10e6))  # [GR] Cf = sqrt(Cin/(2π·Rf·GBW))


@pytest.mark.parametrize(("cf", "fc", "pm"), [(0.0, 126.2e3, 0.77), (CF_GR, 159.0e3, 52.18),
                                              (2 * CF_GR, 253.6e3, 76.41)])
def test_r2d_transimpedance(cf, fc, pm) -> None:
    # [GR] formula, [NUM] PM: Rf 1 MΩ, Cin 100 pF, single-pole A0 1e5, GBW 10 MHz (Cf 1.262 pF and 2.523 pF)
    els, inst = opamp_elements("U1", "0", "inm", "out", a0=1e5, gbw=10e6)
    parts = [Capacitor("Cin", "inm", "0", 100e-12), Resistor("Rf", "inm", "out", 1e6)]
    if cf:
        parts.append(Capacitor("Cf", "inm", "out", cf))
    lg = loop_gain(Netlist(tuple(parts) + els, {"U1": inst}), "U1")
    assert lg.crossover_hz == pytest.approx(fc, rel=6e-4)
    assert lg.phase_margin_deg == pytest.approx(pm, abs=0.006)
    assert CF_GR == pytest.approx(1.262e-12, rel=4e-4)  # [GR] R2(d)


def cap_load_follower(riso: float = 0.0, cl: float = 1e-9, rl: float | None = None) -> Netlist:
    """Follower (A0 1e5, GBW 10 MHz, f2 30 MHz, Ro 100 Ω), feedback from the op-amp pin, Riso then CL."""
    els, inst = opamp_elements("U1", "in", "out", "out", a0=1e5, gbw=10e6, f2=30e6, ro=100.0)
    parts = [VoltageSource("V1", "in", "0", dc=1.0, ac=1.0)]
    load_node = "out"
    if riso:
        parts.append(Resistor("Riso", "out", "load", riso))
        load_node = "load"
    if cl:
        parts.append(Capacitor("CL", load_node, "0", cl))
    if rl:
        parts.append(Resistor("RL", load_node, "0", rl))
    return Netlist(tuple(parts) + els, {"U1": inst})


def test_r2e_capacitive_load_and_isolation() -> None:
    # [FR] model, [NUM] RULES-REFERENCE R2(e)
    plain = loop_gain(cap_load_follower(cl=0.0), "U1")
    assert plain.crossover_hz == pytest.approx(9.531e6, rel=6e-4)
    assert plain.phase_margin_deg == pytest.approx(72.38, abs=0.006)
    loaded = loop_gain(cap_load_follower(), "U1")
    assert loaded.crossover_hz == pytest.approx(3.817e6, rel=6e-4)
    assert loaded.phase_margin_deg == pytest.approx(15.38, abs=0.006)
    assert 1 / (2 * math.pi * 100.0 * 1e-9) == pytest.approx(1.592e6, rel=4e-4)  # fpL
    for riso, pm in ((20.0, 37.63), (50.0, 58.84), (100.0, 71.89)):
        assert loop_gain(cap_load_follower(riso=riso), "U1").phase_margin_deg == pytest.approx(pm, abs=0.006)


def test_r2e_isolation_dc_error_and_output_impedance() -> None:
    # [DER] R2(e): Riso 50 Ω into RL 10k: DC gain error 0.4975 % (ideal op-amp; A0 1e5 adds about 1e-5)
    sol = solve_dc(cap_load_follower(riso=50.0, cl=0.0, rl=10e3))
    assert 1 - sol.voltage("load") == pytest.approx(0.004975, abs=1.5e-5)
    # [FR] Zout = Ro/(1 + T) at DC: 1.000 mΩ for Ro 100 Ω, T 1e5
    z = impedance(cap_load_follower(cl=0.0), "out", [1e-3])[0]
    assert abs(z) == pytest.approx(1.000e-3, rel=5e-4)


def test_r2e_closed_loop_bandwidth() -> None:
    # [FR] single pole: closed-loop bandwidth ≈ GBW/NG: GBW 1 MHz, gain -10 (NG 11) -> 90.91 kHz
    nl = inverting_stage(100e3, 10e3, 0, 0, a0=1e5, gbw=1e6, f2=math.inf)
    lo, hi = 1e4, 1e6
    h0 = abs(transfer(nl, "V1", "out", [1.0])[0])
    for _ in range(100):
        mid = math.sqrt(lo * hi)
        lo, hi = (mid, hi) if abs(transfer(nl, "V1", "out", [mid])[0]) > h0 / math.sqrt(2) else (lo, mid)
    assert lo == pytest.approx(90.91e3, rel=5e-4)


def test_r3_difference_amp_common_mode() -> None:
    # [DER] RULES-REFERENCE R3: G = 10 (R1 = R3 = 10k, R2 = R4 = 100k), Vref 0, source CM 10 V: Vcm_op = 9.091 V
    els, inst = opamp_elements("U1", "inp", "inm", "out", a0=1e5, gbw=1e6, f2=3e6)
    nl = Netlist((VoltageSource("Vcm", "src", "0", dc=10.0), Resistor("R1", "src", "inm", 10e3),
                  Resistor("R2", "inm", "out", 100e3), Resistor("R3", "src", "inp", 10e3),
                  Resistor("R4", "inp", "0", 100e3)) + els, {"U1": inst})
    sol = solve_dc(nl)
    assert sol.voltage("inp") == pytest.approx(9.091, abs=5e-4)
    assert sol.voltage("inm") == pytest.approx(9.091, abs=5e-4)
    assert abs(sol.voltage("out")) < 1e-3  # matched resistors reject the common mode [SS]


def test_r5m_schmitt_loop_gain() -> None:
    # [DER] RULES-REFERENCE R5m: β+ = 0.09091, T(0) = -9091 for A0 = 1e5
    els, inst = opamp_elements("U1", "inp", "in", "out", a0=1e5, gbw=1e6)
    nl = Netlist((VoltageSource("V1", "in", "0"), Resistor("R1", "inp", "0", 10e3),
                  Resistor("R2", "out", "inp", 100e3)) + els, {"U1": inst})
    lg = loop_gain(nl, "U1")
    assert lg.sign == "positive"
    assert lg.t_dc == pytest.approx(-9091, rel=5e-5)


@pytest.mark.parametrize(("t_c", "ohms", "tol"), [(0.0, 33620.6, 0.1), (25.0, 10000.0, 1e-9), (50.0, 3588.18, 0.01),
                                                   (85.0, 1087.0, 0.5), (-40.0, 401.9e3, 50.0)])
def test_r5o_ntc_beta(t_c, ohms, tol) -> None:
    # [DER] RULES-REFERENCE R5o (Beta model [IEC60539], R25 10k, B 3950 K)
    assert ntc_resistance(10e3, 3950.0, t_c) == pytest.approx(ohms, abs=tol)
