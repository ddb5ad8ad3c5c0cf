"""loop_gain's documented edges, by hand: the frequencies it accepts (positive, strictly increasing, at least two),
the no-feedback threshold |T(0)| < 1e-6·A0 at exactly its value, and an open loop (T = 0 exactly: nothing to
extend or refine)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from ngspice_harness import opamp_elements

from afecheck.analysis.loop import NO_FEEDBACK_FRACTION, default_loop_grid, loop_gain
from afecheck.analysis.netlist import Netlist, OpAmpInstance, Resistor, Vcvs, VoltageSource

A = 5e5


def _weak_loop(r1: float) -> Netlist:
    """A gain block A = 5e5 fed back through R1 over a 1 Ω R2: T(0) = A·1/(R1 + 1) (Ohm, hand calculation)."""
    inst = OpAmpInstance("U1", "P", "M", "OUT", "E1", A, 100.0, math.inf, 0.0)
    return Netlist((VoltageSource("VIN", "M", "0"), Vcvs("E1", "OUT", "0", "M", "P", A),
                    Resistor("R1", "OUT", "P", r1), Resistor("R2", "P", "0", 1.0)), {"U1": inst})


@pytest.mark.parametrize("freqs", [[1.0], [1.0, 10.0, 10.0], [10.0, 1.0], [0.0, 1.0], [-1.0, 1.0]])
def test_frequencies_that_are_not_positive_and_strictly_increasing_or_fewer_than_two_are_refused(freqs) -> None:
    with pytest.raises(ValueError, match="strictly increasing"):
        loop_gain(_weak_loop(9.0), "U1", freqs)


def test_two_frequencies_are_enough() -> None:
    lg = loop_gain(_weak_loop(9.0), "U1", [1.0, 10.0])  # β = 1/10: T = A/10 = 5e4, flat
    assert lg.freqs.tolist() == [1.0, 10.0]
    assert np.allclose(lg.t, A / 10.0, rtol=1e-12)


@pytest.mark.parametrize(("r1", "sign"), [
    (999999.0, "negative"),   # T(0) = 5e5/1e6 = 0.5 = 1e-6·A0 exactly: at the threshold, not under it
    (1000001.0, "none"),      # T(0) = 5e5/1000002, just under 0.5
])
def test_the_no_feedback_threshold_at_exactly_its_value(r1: float, sign: str) -> None:
    lg = loop_gain(_weak_loop(r1), "U1", [1.0, 10.0])
    if sign == "negative":
        assert lg.t_dc == 0.5  # exactly: the boundary case must sit on the threshold, not a rounding either side
    assert lg.t_dc == pytest.approx(A / (r1 + 1.0), rel=1e-12)
    assert NO_FEEDBACK_FRACTION * A == 0.5
    assert lg.sign == sign


def test_an_open_loop_has_no_feedback_and_keeps_the_default_grid() -> None:
    # An op-amp with its inverting input on a divider from a source and its output driving only a load: no path
    # from the output back to either input, so the returned signal is exactly zero at every frequency
    els, inst = opamp_elements("U1", "0", "N", "OUT", a0=1e5, gbw=1e6)
    net = Netlist(els + (VoltageSource("VIN", "IN", "0"), Resistor("R1", "IN", "N", 1e3),
                         Resistor("R2", "N", "0", 1e3), Resistor("RL", "OUT", "0", 10e3)), {"U1": inst})
    lg = loop_gain(net, "U1")
    assert lg.t_dc == 0.0 and not np.any(lg.t)
    assert lg.sign == "none"
    assert np.array_equal(lg.freqs, default_loop_grid(inst))  # nothing can cross: no decade added
    assert lg.crossover_hz is None and lg.phase_crossover_hz is None and lg.crossovers_hz == ()
