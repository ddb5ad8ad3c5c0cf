"""Loop gain as Bode's return ratio at an op-amp's controlled source (RULES-REFERENCE 0.4).

Every independent source is zeroed, the op-amp's gain VCVS is replaced by a test source vt, and
T(jω) = −A0·(v+ − v−)/vt. This is exact for a VCVS and includes Ro, loads, input capacitance and source
impedances; other op-amps in the same netlist keep their gain, so stages tied in a loop work. From T:
crossover (smallest f with |T| = 1, bracketed on the grid then refined on the exact solve), phase margin
180° + ∠T(fc) with the phase unwrapped from DC, gain margin at the first −180° crossing, the DC sign of the
feedback, and the noise gain A/T.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np

from afecheck.analysis.mna import MnaSystem, assemble, check_connectivity, log_grid
from afecheck.analysis.netlist import Netlist, OpAmpCore, OpAmpInstance, Vcvs, VoltageSource
from afecheck.errors import SingularCircuitError

FeedbackSign = Literal["negative", "positive", "none"]
NO_FEEDBACK_FRACTION = 1e-6
_REL_TOL = 1e-12
_MAX_ITER = 80
_ROOT_TOL = 1e-13


@dataclass(frozen=True, eq=False)
class LoopGain:
    """Return ratio of one op-amp over a frequency grid, with crossover, margins and feedback sign.

    ``t`` is T(jf) at ``freqs``; ``t_dc`` is T at 0 Hz (None when the circuit has no DC solution);
    ``gain_margin`` is 1/|T| at the first −180° crossing (None if the phase never gets there).
    """

    opamp: OpAmpInstance
    freqs: np.ndarray
    t: np.ndarray
    phase_deg: np.ndarray
    t_dc: float | None
    sign: FeedbackSign
    crossover_hz: float | None
    phase_margin_deg: float | None
    phase_crossover_hz: float | None
    gain_margin: float | None
    probe: LoopProbe

    @property
    def gain_margin_db(self) -> float | None:
        """Gain margin in dB, 20·log10(1/|T|) at the −180° crossing."""
        return None if self.gain_margin is None else float(20.0 * math.log10(self.gain_margin))

    def at(self, freqs: Sequence[float] | np.ndarray | float) -> np.ndarray:
        """T(jf) solved exactly at any frequencies."""
        return self.probe.t(np.atleast_1d(np.asarray(freqs, dtype=float)))

    def noise_gain(self) -> np.ndarray:
        """NG(jf) = A(jf)/T(jf) on the grid (A: the op-amp's open-loop gain without Ro)."""
        return self.opamp.open_loop_response(self.freqs) / self.t

    def noise_gain_at(self, freq: float) -> float:
        """|NG| at one frequency, as a Python float."""
        a = self.opamp.open_loop_response(np.array([freq]))
        return float(abs(a[0] / self.at(freq)[0]))

    @property
    def noise_gain_dc(self) -> float | None:
        """NG at DC = A0 / T(0); None without feedback or DC solution."""
        if self.t_dc is None or self.sign == "none":
            return None
        return float(self.opamp.open_loop_gain / self.t_dc)

    def magnitude_at(self, freq: float) -> float:
        """|T| at one frequency, as a Python float."""
        return float(abs(self.at(freq)[0]))


@dataclass(frozen=True, eq=False)
class LoopProbe:
    """The assembled loop-gain system: the gain source replaced by a 1 V AC test source, and how to read T."""

    system: MnaSystem
    element: Vcvs | OpAmpCore
    cpos: int
    cneg: int

    def t(self, freqs: np.ndarray, check: bool = False) -> np.ndarray:
        """T(jf) = −A(jf)·(v(cpos) − v(cneg)) per volt of test source, at every frequency."""
        x = self.system.solve_freqs(freqs, check=check)
        vp = x[:, self.cpos] if self.cpos >= 0 else 0.0
        vn = x[:, self.cneg] if self.cneg >= 0 else 0.0
        e = self.element
        gain = e.gain(freqs) if isinstance(e, OpAmpCore) else e.gain
        return -gain * (vp - vn)


def loop_probe(netlist: Netlist, element: str) -> LoopProbe:
    """Replace the controlled source ``element`` (VCVS or op-amp core) by a 1 V AC test source; other sources zeroed."""
    gain = netlist.element(element)
    if not isinstance(gain, (Vcvs, OpAmpCore)):
        raise TypeError(f"{element} is not a voltage-controlled voltage source")
    probe = VoltageSource(gain.name, gain.pos, gain.neg, dc=0.0, ac=1.0)
    system = assemble(netlist.replaced(probe), {gain.name: 1.0})
    return LoopProbe(system, gain, system.node_index(gain.cpos), system.node_index(gain.cneg))


def default_loop_grid(op: OpAmpInstance, per_decade: int = 20) -> np.ndarray:
    """A log grid from fp1/100 to 100·max(GBW, f2): wide enough for crossover and phase crossover."""
    gbw = op.open_loop_gain * op.pole1_hz
    return log_grid(op.pole1_hz / 100.0, 100.0 * max(gbw, op.pole2_hz), per_decade)


def loop_gain(netlist: Netlist, refdes: str, freqs: Sequence[float] | np.ndarray | None = None) -> LoopGain:
    """Return ratio of op-amp ``refdes`` over ``freqs`` (Hz; default :func:`default_loop_grid`) and its margins."""
    op = netlist.opamps[refdes]
    probe = loop_probe(netlist, op.loop_element)
    system = probe.system
    f = default_loop_grid(op) if freqs is None else np.atleast_1d(np.asarray(freqs, dtype=float))
    if f.size < 2 or np.any(np.diff(f) <= 0) or f[0] <= 0:
        raise ValueError("loop-gain frequencies must be positive and strictly increasing (at least two)")
    try:
        check_connectivity(system.netlist, dc=True)
        t_all = probe.t(np.concatenate(([0.0], f)))
        t_dc: float | None = float(t_all[0].real)
        t = t_all[1:]
    except SingularCircuitError:
        check_connectivity(system.netlist, dc=False)
        t = probe.t(f)
        t_dc = None
    ref = t_dc if t_dc is not None else float(t[0].real)
    if abs(ref) < NO_FEEDBACK_FRACTION * op.open_loop_gain:
        sign: FeedbackSign = "none"
    else:
        sign = "negative" if ref > 0 else "positive"
    raw = np.degrees(np.angle(t))
    start = {"negative": 0.0, "positive": 180.0, "none": float(raw[0])}[sign]
    phase = _unwrap_from(raw, start)
    fc = _crossover(probe, f, t)
    pm = None
    if fc is not None and sign != "positive":
        pm = float(180.0 + _phase_near(probe, fc, f, phase))
    f180, gm = _phase_crossover(probe, f, phase) if sign != "positive" else (None, None)
    return LoopGain(op, f, t, phase, t_dc, sign, fc, pm, f180, gm, probe)


def _unwrap_from(phase_deg: np.ndarray, start_deg: float) -> np.ndarray:
    """Unwrap the phase along the grid, starting on the branch nearest ``start_deg``."""
    un = np.degrees(np.unwrap(np.radians(phase_deg)))
    shift = 360.0 * round((start_deg - un[0]) / 360.0)
    return un + shift


def _phase_near(probe: LoopProbe, freq: float, grid: np.ndarray, phase: np.ndarray) -> float:
    """Exact phase of T at ``freq`` on the unwrapped branch interpolated from the grid."""
    raw = math.degrees(float(np.angle(probe.t(np.array([freq]))[0])))
    guess = float(np.interp(math.log(freq), np.log(grid), phase))
    return raw + 360.0 * round((guess - raw) / 360.0)


def _crossover(probe: LoopProbe, f: np.ndarray, t: np.ndarray) -> float | None:
    """Smallest frequency where |T| falls through 1 (the first grid interval where it does, refined).

    An integrator's |T| rises through 1 at low frequency before it falls; that rising edge is not a crossover.
    """
    mag = np.abs(t)
    falls = np.nonzero((mag[:-1] > 1.0) & (mag[1:] <= 1.0))[0]
    if falls.size == 0:
        return None
    i = int(falls[0]) + 1

    def h(u: float) -> float:
        return float(np.log(abs(probe.t(np.array([math.exp(u)]))[0])))

    return _refine(h, math.log(f[i - 1]), math.log(f[i]), float(np.log(mag[i - 1])), float(np.log(mag[i])))


def _phase_crossover(probe: LoopProbe, f: np.ndarray,
                     phase: np.ndarray) -> tuple[float | None, float | None]:
    """First frequency where the unwrapped phase reaches −180°, and 1/|T| there."""
    idx = np.nonzero((phase[:-1] > -180.0) & (phase[1:] <= -180.0))[0]
    if idx.size == 0:
        return None, None
    i = int(idx[0]) + 1

    def h(u: float) -> float:
        return _phase_near(probe, math.exp(u), f, phase) + 180.0

    f180 = _refine(h, math.log(f[i - 1]), math.log(f[i]), float(phase[i - 1] + 180.0), float(phase[i] + 180.0))
    mag = float(abs(probe.t(np.array([f180]))[0]))
    return f180, (1.0 / mag if mag > 0 else None)


def _refine(h, a: float, b: float, ha: float, hb: float) -> float:
    """Root of ``h`` on [a, b] (ln f) by the Illinois variant of regula falsi; returns f = e^root."""
    if ha == 0.0:
        return math.exp(a)
    if hb == 0.0:
        return math.exp(b)
    side = 0
    for _ in range(_MAX_ITER):
        c = b - hb * (b - a) / (hb - ha)
        hc = h(c)
        if abs(hc) < _ROOT_TOL or abs(b - a) < _REL_TOL:
            return math.exp(c)
        if (hc > 0) == (hb > 0):
            b, hb = c, hc
            if side == -1:
                ha /= 2.0
            side = -1
        else:
            a, ha = c, hc
            if side == 1:
                hb /= 2.0
            side = 1
        if abs(b - a) < _REL_TOL:
            break
    return math.exp(0.5 * (a + b))
