"""Return-ratio loop gain: crossover, phase and gain margin, DC sign, noise gain, stages tied in a loop."""

from __future__ import annotations

import math

import numpy as np
import pytest
from ngspice_harness import opamp_elements

from afecheck.analysis.loop import loop_gain
from afecheck.analysis.mna import log_grid, solve_dc
from afecheck.analysis.netlist import Capacitor, Netlist, Resistor, VoltageSource


def follower(ro: float = 50.0, f2: float = 30e6, extra=()) -> Netlist:
    els, inst = opamp_elements("U1", "in", "out", "out", a0=1e5, gbw=1e7, f2=f2, ro=ro)
    return Netlist((VoltageSource("V1", "in", "0", ac=1.0),) + els + tuple(extra), {"U1": inst})


def test_follower_matches_ngspice_figure() -> None:
    # REFERENCE-TOOLS (ngspice run): A0 1e5, poles 100 Hz and 30 MHz, Ro 50 Ω: follower PM 72.376° at 9.5306 MHz
    lg = loop_gain(follower(), "U1")
    assert lg.crossover_hz == pytest.approx(9.5306e6, rel=1e-4)
    assert lg.phase_margin_deg == pytest.approx(72.376, abs=1e-3)
    assert lg.sign == "negative"
    assert lg.gain_margin is None  # two poles: the phase never reaches -180°
    assert lg.crossovers_hz == (lg.crossover_hz,) and lg.phase_margins_deg == (lg.phase_margin_deg,)
    assert isinstance(lg.crossover_hz, float) and isinstance(lg.phase_margin_deg, float)


def test_gain_five_matches_ngspice_figure() -> None:
    # REFERENCE-TOOLS (ngspice run): gain-5 non-inverting stage (40k/10k): 86.201° at 1.9936 MHz
    els, inst = opamp_elements("U1", "in", "inm", "out", a0=1e5, gbw=1e7, f2=30e6, ro=50.0)
    nl = Netlist((VoltageSource("V1", "in", "0", ac=1.0), Resistor("Rf", "out", "inm", 40e3),
                  Resistor("Rg", "inm", "0", 10e3)) + els, {"U1": inst})
    lg = loop_gain(nl, "U1")
    assert lg.crossover_hz == pytest.approx(1.9936e6, rel=1e-4)
    assert lg.phase_margin_deg == pytest.approx(86.201, abs=1e-3)
    # resistive NG = 1 + Rf/Rg [FR]; Ro adds (Ro/(Rf+Rg)) to 1/β at DC [DER]
    assert lg.noise_gain_dc == pytest.approx(5.0 * (1 + 50.0 / 50e3), rel=1e-6)


def test_single_pole_closed_form() -> None:
    # [DER] ideal inputs, Ro 0, single pole: T = A0·β/(1 + jf/fp1); |T| = 1 at fp1·sqrt((A0·β)² − 1)
    els, inst = opamp_elements("U1", "in", "inm", "out", a0=1e5, gbw=1e6)
    nl = Netlist((VoltageSource("V1", "in", "0"), Resistor("Rf", "out", "inm", 9e3),
                  Resistor("Rg", "inm", "0", 1e3)) + els, {"U1": inst})
    f = log_grid(1.0, 1e8, 30)
    lg = loop_gain(nl, "U1", f)
    t_ref = 1e4 / (1 + 1j * f / 10.0)
    assert np.allclose(lg.t, t_ref, rtol=1e-9)
    assert lg.t_dc == pytest.approx(1e4, rel=1e-12)
    assert lg.crossover_hz == pytest.approx(10.0 * math.sqrt(1e8 - 1), rel=1e-10)
    assert lg.phase_margin_deg == pytest.approx(180.0 - math.degrees(math.atan(math.sqrt(1e8 - 1))), abs=1e-8)
    ng = lg.noise_gain()
    assert np.allclose(ng, 10.0, rtol=1e-9)  # NG = A/T = 1/β = 10 at every frequency [FR]
    assert lg.noise_gain_at(1e5) == pytest.approx(10.0, rel=1e-9)
    assert lg.magnitude_at(1e3) == pytest.approx(abs(1e4 / (1 + 1j * 100.0)), rel=1e-9)


def test_capacitive_load_gain_margin() -> None:
    # [FR] model T = A(s)/(1 + s·Ro·CL): phase crossover where atan(f/fp1)+atan(f/f2)+atan(f/fpL) = 180°,
    # solved here by bisection on that formula, independently of the nodal solver
    fp1, f2, fpl = 100.0, 30e6, 1 / (2 * math.pi * 100.0 * 1e-9)
    def phase(f):
        return math.degrees(math.atan(f / fp1) + math.atan(f / f2) + math.atan(f / fpl))
    lo, hi = 1e6, 1e9
    for _ in range(200):
        mid = math.sqrt(lo * hi)
        lo, hi = (mid, hi) if phase(mid) < 180 else (lo, mid)
    f180 = math.sqrt(lo * hi)
    t180 = 1e5 / math.sqrt((1 + (f180 / fp1) ** 2) * (1 + (f180 / f2) ** 2) * (1 + (f180 / fpl) ** 2))
    lg = loop_gain(follower(ro=100.0, extra=(Capacitor("CL", "out", "0", 1e-9),)), "U1")
    assert lg.phase_crossover_hz == pytest.approx(f180, rel=1e-7)
    assert lg.gain_margin == pytest.approx(1 / t180, rel=1e-7)
    assert lg.gain_margin_db == pytest.approx(20 * math.log10(1 / t180), abs=1e-6)
    assert lg.phase_margin_deg == pytest.approx(15.38, abs=0.005)  # [NUM] RULES-REFERENCE R2(e)


def test_positive_feedback_sign() -> None:
    # [DER] RULES-REFERENCE R5m: R1 10k in+ to 0 V, R2 100k out to in+: T(0) = -9091 for A0 1e5
    els, inst = opamp_elements("U1", "inp", "in", "out", a0=1e5, gbw=1e6)
    nl = Netlist((VoltageSource("V1", "in", "0", dc=1.0), Resistor("R1", "inp", "0", 10e3),
                  Resistor("R2", "out", "inp", 100e3)) + els, {"U1": inst})
    lg = loop_gain(nl, "U1")
    assert lg.sign == "positive"
    assert lg.t_dc == pytest.approx(-9091, abs=0.5)
    assert lg.phase_margin_deg is None


def test_open_loop_has_no_feedback() -> None:
    els, inst = opamp_elements("U1", "inp", "inm", "out", a0=1e5, gbw=1e6, ro=100.0)
    nl = Netlist((VoltageSource("V1", "inp", "0"), VoltageSource("V2", "inm", "0"),
                  Resistor("RL", "out", "0", 1e3)) + els, {"U1": inst})
    lg = loop_gain(nl, "U1")
    assert lg.sign == "none" and lg.crossover_hz is None and lg.noise_gain_dc is None
    assert abs(lg.t_dc) < 1e-6


def test_integrator_without_dc_path() -> None:
    # [DER] ideal inputs, Ro 0: T = A(s)·sRC/(1 + sRC); no feedback at DC, loop crossover where A's
    # single-pole roll-off meets the flat high-frequency β = 1
    els, inst = opamp_elements("U1", "0", "inm", "out", a0=1e5, gbw=1e6)
    nl = Netlist((VoltageSource("V1", "in", "0"), Resistor("R1", "in", "inm", 10e3),
                  Capacitor("C1", "inm", "out", 1e-6)) + els, {"U1": inst})
    f = log_grid(1e-4, 1e8, 20)
    lg = loop_gain(nl, "U1", f)
    tau = 10e3 * 1e-6
    t_ref = (1e5 / (1 + 1j * f / 10.0)) * (1j * 2 * math.pi * f * tau) / (1 + 1j * 2 * math.pi * f * tau)
    assert np.allclose(lg.t, t_ref, rtol=1e-9)
    assert lg.sign == "none"
    assert lg.crossover_hz == pytest.approx(1e6, rel=1e-3)
    assert lg.phase_margin_deg == pytest.approx(90.0, abs=0.05)


def test_integrator_dc_path_output() -> None:
    # [DER] RULES-REFERENCE R5m: R 10k, C 1 µF, 1 MΩ across C, Vos 1 mV: DC output 101.0 mV
    els, inst = opamp_elements("U1", "0", "inm", "out", a0=1e5, gbw=1e6, vos=1e-3)
    nl = Netlist((VoltageSource("V1", "in", "0"), Resistor("R1", "in", "inm", 10e3),
                  Capacitor("C1", "inm", "out", 1e-6), Resistor("Rp", "inm", "out", 1e6)) + els, {"U1": inst})
    assert solve_dc(nl).voltage("out") == pytest.approx(0.101, rel=2e-3)
    lg = loop_gain(nl, "U1")
    assert lg.sign == "negative"
    assert lg.noise_gain_dc == pytest.approx(101.0, rel=1e-9)


def test_two_opamps_in_one_loop() -> None:
    # [DER] U1 inverting, its feedback taken from follower U2: T1 = A1·β·A2/(1 + A2), β = Rg/(Rg + Rf);
    # only U1's source is broken, U2 keeps its gain
    e1, i1 = opamp_elements("U1", "0", "m1", "o1", a0=1e5, gbw=1e6)
    e2, i2 = opamp_elements("U2", "o1", "o2", "o2", a0=1e4, gbw=4e6)
    nl = Netlist((VoltageSource("V1", "in", "0"), Resistor("Rg", "in", "m1", 1e3),
                  Resistor("Rf", "o2", "m1", 3e3)) + e1 + e2, {"U1": i1, "U2": i2})
    f = log_grid(1.0, 1e8, 20)
    a1 = 1e5 / (1 + 1j * f / 10.0)
    a2 = 1e4 / (1 + 1j * f / 400.0)
    assert np.allclose(loop_gain(nl, "U1", f).t, a1 * 0.25 * a2 / (1 + a2), rtol=1e-9)
    # U2's own loop: its output feeds back fully to in-, and through U1 (o1 = -A1·0.25·o2) to in+
    assert np.allclose(loop_gain(nl, "U2", f).t, a2 * (1 + 0.25 * a1), rtol=1e-9)


def test_bad_grid_refused() -> None:
    with pytest.raises(ValueError):
        loop_gain(follower(), "U1", [1e3, 1e2])
