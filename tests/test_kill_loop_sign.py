"""The feedback sign of a loop, against the hand product T(0) = A·β of an ideal gain block and a resistive divider:
a gain block whose output terminals are written the other way round (its + terminal at ground), and a loop too
weak to count as feedback (|T(0)| under 1e-6·A0, the documented threshold of loop.py)."""

from __future__ import annotations

import math

import pytest

from afecheck.analysis.loop import NO_FEEDBACK_FRACTION, loop_gain
from afecheck.analysis.netlist import Netlist, OpAmpInstance, Resistor, Vcvs, VoltageSource

A = 1e5


def _amplifier(r1: float, r2: float, grounded_plus: bool) -> Netlist:
    """An ideal gain block A driving OUT, fed back through R1 (OUT to P) over R2 (P to ground) into its
    non-inverting control input P; the input M is held at 0 V. Either v(OUT) − v(0) = A·(v(M) − v(P)) or the
    same thing written as v(0) − v(OUT) = A·(v(P) − v(M)): one circuit, two ways to write it."""
    if grounded_plus:
        gain = Vcvs("E1", "0", "OUT", "P", "M", A)
    else:
        gain = Vcvs("E1", "OUT", "0", "M", "P", A)
    inst = OpAmpInstance("U1", "P", "M", "OUT", "E1", A, 100.0, math.inf, 0.0)
    return Netlist((VoltageSource("VIN", "M", "0"), gain, Resistor("R1", "OUT", "P", r1),
                    Resistor("R2", "P", "0", r2)), {"U1": inst})


@pytest.mark.parametrize("grounded_plus", [True, False])
def test_a_gain_block_with_its_plus_terminal_at_ground_has_the_same_negative_loop(grounded_plus: bool) -> None:
    # Breaking the loop at the gain block (Bode's return ratio): a test volt at OUT comes back as
    # −A·β with β = R2/(R1 + R2) = 0.1 (Ohm), so T(0) = A·β = 1e4 and the feedback is negative
    # (H. W. Bode, "Network Analysis and Feedback Amplifier Design", 1945, ch. 4; hand calculation)
    lg = loop_gain(_amplifier(9e3, 1e3, grounded_plus), "U1", [1.0, 10.0])
    assert lg.sign == "negative"
    assert lg.t_dc == pytest.approx(A * 0.1, rel=1e-12)
    assert lg.at(10.0)[0] == pytest.approx(A * 0.1, rel=1e-12)  # no reactance: T is flat


@pytest.mark.parametrize(("r1", "sign"), [
    (1e10, "none"),        # β = 1e3/(1e10 + 1e3) ≈ 1e-7: T(0) = 0.01, under 1e-6·A0 = 0.1
    (1e8, "negative"),     # β ≈ 1e-5: T(0) = 0.99999, above it
])
def test_a_loop_weaker_than_the_no_feedback_fraction_counts_as_none(r1: float, sign: str) -> None:
    # T(0) = A·R2/(R1 + R2) by hand; loop.py documents |T(0)| < 1e-6·A0 as "no feedback"
    lg = loop_gain(_amplifier(r1, 1e3, True), "U1", [1.0, 10.0])
    t0 = A * 1e3 / (r1 + 1e3)
    assert lg.t_dc == pytest.approx(t0, rel=1e-9)
    assert (abs(t0) < NO_FEEDBACK_FRACTION * A) == (sign == "none")
    assert lg.sign == sign
    assert (lg.noise_gain_dc is None) == (sign == "none")
