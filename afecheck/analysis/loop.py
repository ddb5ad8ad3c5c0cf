"""Loop gain as Bode's return ratio at an op-amp's controlled source (RULES-REFERENCE 0.4).

Every independent source is zeroed, the op-amp's controlled source (its core, A(jω) with both poles) is
replaced by a test source vt, and T(jω) = −A(jω)·(v+ − v−)/vt. This is exact for a VCVS and includes Ro,
loads, input capacitance and source impedances; other op-amps in the same netlist keep their gain, so stages
tied in a loop work. From T: crossover (the smallest f where |T| falls through 1, bracketed on the grid then
refined on the exact solve), phase margin 180° + ∠T(fc) with the phase unwrapped from DC, gain margin at the
first −180° crossing, the DC sign of the feedback (|T(0)| < 1e-6·A0 counts as none), and the noise gain A/T.
The grid should start below the dominant pole so that the unwrapped phase starts on the right branch;
:func:`default_loop_grid` does.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, replace
from typing import Literal

import numpy as np

from afecheck.analysis.mna import MnaSystem, check_connectivity, log_grid, system_of
from afecheck.analysis.netlist import GROUND, Netlist, OpAmpCore, OpAmpInstance, Vcvs, VoltageSource
from afecheck.errors import SingularCircuitError

FeedbackSign = Literal["negative", "positive", "none"]
NO_FEEDBACK_FRACTION = 1e-6
MAX_CROSSOVERS = 8
_ROUNDS = 3
_SUBGRID = 24
_FRACTIONS = np.linspace(0.0, 1.0, _SUBGRID)


@dataclass(frozen=True, eq=False)
class LoopGain:
    """Return ratio of one op-amp over a frequency grid, with crossover, margins and feedback sign.

    ``t`` is T(jf) at ``freqs``; ``t_dc`` is T at 0 Hz (None when the circuit has no DC solution);
    ``gain_margin`` is 1/|T| at the first −180° crossing (None if the phase never gets there).
    ``crossovers_hz`` / ``phase_margins_deg`` list every fall of |T| through 1 on the grid (up to eight) with the
    margin at each: a loop whose |T| dips below 1 in a notch and rises again has more than one, and the first
    (``crossover_hz``) is then not the one that decides stability.
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
    crossovers_hz: tuple[float, ...] = ()
    phase_margins_deg: tuple[float, ...] = ()

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
    base = system_of(netlist)
    k = base.branch_index(gain.name)
    g = base.g.copy()
    g[k, :] = 0.0
    for node, v in ((gain.pos, 1.0), (gain.neg, -1.0)):
        if node != GROUND:
            g[k, base.node_index(node)] = v
    b_dc = base.b_dc.copy()
    b_dc[k] = 0.0
    b_ac = np.zeros(base.size, dtype=complex)
    b_ac[k] = 1.0
    grounded = base.grounded
    if (gain.neg == GROUND) != (gain.pos == GROUND):
        node, sign = (gain.pos, 1.0) if gain.neg == GROUND else (gain.neg, -1.0)
        grounded = grounded + ((base.node_index(node), k, sign),)
    system = replace(base, netlist=netlist.replaced(probe), g=g, b_dc=b_dc, b_ac=b_ac,
                     cores=tuple(c for c in base.cores if c[3].name != gain.name), grounded=grounded)
    return LoopProbe(system, gain, system.node_index(gain.cpos), system.node_index(gain.cneg))


def default_loop_grid(op: OpAmpInstance, per_decade: int = 12) -> np.ndarray:
    """A log grid from fp1/30 to 100·max(GBW, f2): wide enough for crossover and phase crossover.

    The grid only brackets the crossings (they are then refined on the exact solve), so 12 points a decade
    suffice as long as the phase moves less than 180° between neighbours.
    """
    gbw = op.open_loop_gain * op.pole1_hz
    f2 = op.pole2_hz if math.isfinite(op.pole2_hz) and op.pole2_hz < 1e3 * gbw else gbw
    return log_grid(op.pole1_hz / 30.0, 100.0 * max(gbw, f2), per_decade)


def loop_gain(netlist: Netlist, refdes: str, freqs: Sequence[float] | np.ndarray | None = None) -> LoopGain:
    """Return ratio of op-amp ``refdes`` over ``freqs`` (Hz; default :func:`default_loop_grid`) and its margins.

    With the default grid the sweep is extended a decade at a time until the loop can cross nothing more
    (:func:`_extend`). Between grid points, every local extremum of |T| and of the phase is located and added to
    the grid, so a notch that dips through |T| = 1 (or a phase dip through −180°) between two points is found;
    every crossing is then refined on the exact solve to a relative 1e-6 in frequency or better.
    """
    op = netlist.opamps[refdes]
    probe = loop_probe(netlist, op.loop_element)
    f = default_loop_grid(op) if freqs is None else np.atleast_1d(np.asarray(freqs, dtype=float))
    if f.size < 2 or np.any(np.diff(f) <= 0) or f[0] <= 0:
        raise ValueError("loop-gain frequencies must be positive and strictly increasing (at least two)")
    try:
        check_connectivity(netlist, dc=True)
        t_all = probe.t(np.concatenate(([0.0], f)))
        t_dc: float | None = float(t_all[0].real)
        t = t_all[1:]
    except SingularCircuitError:
        check_connectivity(netlist, dc=False)
        t = probe.t(f)
        t_dc = None
    live = bool(np.all(np.abs(t) > 0) and np.all(np.isfinite(t)))
    if freqs is None and live:
        f, t = _extend(probe, f, t)
    ref = t_dc if t_dc is not None else float(t[0].real)
    if abs(ref) < NO_FEEDBACK_FRACTION * op.open_loop_gain:
        sign: FeedbackSign = "none"
    else:
        sign = "negative" if ref > 0 else "positive"
    start = {"negative": 0.0, "positive": 180.0, "none": float(np.degrees(np.angle(t[0])))}[sign]
    fx, tx = _with_extrema(probe, f, t, start) if live else (f, t)
    phase_x = _unwrap_from(np.degrees(np.angle(tx)), start)
    mag = np.abs(tx)
    brackets: list[_Bracket] = []
    for i in np.nonzero((mag[:-1] > 1.0) != (mag[1:] > 1.0))[0][:MAX_CROSSOVERS]:
        brackets.append(_Bracket("magnitude", fx[i], fx[i + 1], tx[i:i + 2], phase_x[i:i + 2]))
    if sign != "positive":
        below = np.nonzero((phase_x[:-1] > -180.0) & (phase_x[1:] <= -180.0))[0]
        if below.size:
            i = int(below[0])
            brackets.append(_Bracket("phase", fx[i], fx[i + 1], tx[i:i + 2], phase_x[i:i + 2]))
    phase = _unwrap_from(np.degrees(np.angle(t)), start)
    found = _refine_brackets(probe, brackets)
    crossings = [(fx, ph) for b, (fx, _, ph) in zip(brackets, found, strict=True) if b.kind == "magnitude"]
    falls = [fx for b, (fx, _, _) in zip(brackets, found, strict=True) if b.kind == "magnitude" and b.falling]
    fc = pm = f180 = gm = None
    margins: tuple[float, ...] = ()
    if crossings:
        fc = falls[0] if falls else crossings[0][0]
        if sign != "positive":
            margins = tuple(float(180.0 + ph) for _, ph in crossings)
            pm = margins[[fx for fx, _ in crossings].index(fc)]
    if brackets and brackets[-1].kind == "phase":
        f180, m180, _ = found[-1]
        gm = 1.0 / m180 if m180 > 0 else None
    return LoopGain(op, f, t, phase, t_dc, sign, fc, pm, f180, gm, probe,
                    tuple(fx for fx, _ in crossings), margins)


SETTLED_MAGNITUDE = 1e-5  # |T| below -100 dB ...
SETTLED_PHASE_DEG = 1.0  # ... and the phase moving less than this over the last decade: nothing more can cross
MAX_EXTRA_DECADES = 8
EXTEND_BATCH = 3  # decades solved together: most loops settle within three extra decades


def _extend(probe: LoopProbe, f: np.ndarray, t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Extend the sweep a decade at a time until |T| is below -100 dB and its phase has settled.

    Past the last pole and zero the phase stops moving and |T| only falls, so neither |T| = 1 nor −180° can be
    crossed above the new top. The decades are solved :data:`EXTEND_BATCH` at a time in one batched solve (each
    frequency's solution does not depend on the others in the batch) and taken one by one, as if solved singly.
    """
    per_decade = max(2, int(round((f.size - 1) / math.log10(f[-1] / f[0]))))
    steps = np.power(10.0, np.arange(1, per_decade + 1) / per_decade)
    ready: list[tuple[np.ndarray, np.ndarray]] = []
    top = f[-1]
    for taken in range(MAX_EXTRA_DECADES):
        tail = t[-per_decade - 1:]
        turn = np.degrees(np.abs(np.angle(tail[-1] / tail[0])))
        if abs(t[-1]) < SETTLED_MAGNITUDE and turn < SETTLED_PHASE_DEG:
            break
        if not ready:
            decades = []
            for _ in range(min(EXTEND_BATCH, MAX_EXTRA_DECADES - taken)):
                decades.append(top * steps)
                top = decades[-1][-1]
            solved = probe.t(np.concatenate(decades))
            ready = [(d, solved[k * per_decade:(k + 1) * per_decade]) for k, d in enumerate(decades)]
        more, t_more = ready.pop(0)
        f = np.concatenate([f, more])
        t = np.concatenate([t, t_more])
    return f, t


def _with_extrema(probe: LoopProbe, f: np.ndarray, t: np.ndarray, start: float) -> tuple[np.ndarray, np.ndarray]:
    """The grid with every local extremum of ln|T| and of the unwrapped phase located and added, so that no
    crossing between two grid points escapes the bracketing (a narrow notch, a phase dip)."""
    phase = _unwrap_from(np.degrees(np.angle(t)), start)
    lm = np.log(np.abs(t))
    spots = []
    for values, kind in ((lm, "magnitude"), (phase, "phase")):
        d = np.diff(values)
        for i in np.nonzero(d[:-1] * d[1:] < 0)[0][:4 * MAX_CROSSOVERS]:
            spots.append((kind, float(f[i]), float(f[i + 2]), bool(d[i] < 0), float(phase[i])))
    if not spots:
        return f, t
    found = _locate_extrema(probe, spots)
    fx = np.concatenate([f, [x for x, _ in found]])
    tx = np.concatenate([t, [y for _, y in found]])
    order = np.argsort(fx, kind="stable")
    fx, tx = fx[order], tx[order]
    keep = np.concatenate([[True], np.diff(fx) > 0])
    return fx[keep], tx[keep]


def _locate_extrema(probe: LoopProbe, spots: list[tuple[str, float, float, bool, float]]
                    ) -> list[tuple[float, complex]]:
    """Narrow each (kind, f_lo, f_hi, is_minimum, phase at f_lo) interval onto its extremum with batched sub-grids."""
    lo = np.array([s[1] for s in spots])
    hi = np.array([s[2] for s in spots])
    best_f = np.sqrt(lo * hi)
    best_t = np.zeros(len(spots), dtype=complex)
    for _ in range(_ROUNDS + 1):
        grids = lo[:, None] * np.exp(np.log(hi / lo)[:, None] * _FRACTIONS[None, :])
        t_all = probe.t(grids.ravel()).reshape(grids.shape)
        for k, (kind, _a, _b, is_min, ph0) in enumerate(spots):
            if kind == "magnitude":
                v = np.log(np.abs(t_all[k]))
            else:
                v = _unwrap_from(np.degrees(np.angle(t_all[k])), ph0)
            j = int(np.argmin(v) if is_min else np.argmax(v))
            best_f[k], best_t[k] = grids[k, j], t_all[k, j]
            lo[k], hi[k] = grids[k, max(j - 1, 0)], grids[k, min(j + 1, _SUBGRID - 1)]
    return list(zip(best_f.tolist(), best_t.tolist(), strict=True))


def _unwrap_from(phase_deg: np.ndarray, start_deg: float) -> np.ndarray:
    """Unwrap the phase along the grid (steps taken as the shortest way round), starting on the branch nearest
    ``start_deg``."""
    step = np.diff(phase_deg)
    step -= 360.0 * np.round(step / 360.0)
    first = float(phase_deg[0]) + 360.0 * round((start_deg - float(phase_deg[0])) / 360.0)
    out = np.empty_like(phase_deg)
    out[0] = first
    np.cumsum(step, out=out[1:])
    out[1:] += first
    return out


@dataclass
class _Bracket:
    """A grid interval holding a root: of ln|T| (``magnitude``) or of the unwrapped phase + 180° (``phase``)."""

    kind: Literal["magnitude", "phase"]
    f_lo: float
    f_hi: float
    t: np.ndarray
    phase: np.ndarray

    @property
    def falling(self) -> bool:
        """True for |T| falling through 1 (a crossover in the usual sense), False for |T| rising back."""
        return bool(abs(self.t[0]) > abs(self.t[1]))

    def h(self, t: np.ndarray, phase: np.ndarray) -> np.ndarray:
        return np.log(np.abs(t)) if self.kind == "magnitude" else phase + 180.0


def _refine_brackets(probe: LoopProbe, brackets: list[_Bracket]) -> list[tuple[float, float, float]]:
    """Narrow every bracket together: each round solves a sub-grid of every bracket in one batched solve.

    After the rounds the root is interpolated linearly in ln f on the last sub-interval (about 1e-4 decade
    wide: relative error in f of order 1e-8, far below the figures' precision).
    Returns (f, |T|, unwrapped phase in degrees) for each bracket, in order.
    """
    if not brackets:
        return []
    for _ in range(_ROUNDS):
        grids = [b.f_lo * np.exp(math.log(b.f_hi / b.f_lo) * _FRACTIONS) for b in brackets]
        t_all = probe.t(np.concatenate(grids))
        for k, b in enumerate(brackets):
            t = t_all[k * _SUBGRID:(k + 1) * _SUBGRID]
            phase = _unwrap_from(np.degrees(np.angle(t)), float(b.phase[0]))
            h = b.h(t, phase)
            changes = np.nonzero(np.sign(h[1:]) != np.sign(h[:-1]))[0]
            j = int(changes[0]) if changes.size else 0
            b.f_lo, b.f_hi = float(grids[k][j]), float(grids[k][j + 1])
            b.t, b.phase = t[j:j + 2], phase[j:j + 2]
    out: list[tuple[float, float, float]] = []
    for b in brackets:
        h = b.h(b.t, b.phase)
        x0, x1 = math.log(b.f_lo), math.log(b.f_hi)
        w = 0.0 if h[1] == h[0] else float(h[0] / (h[0] - h[1]))
        w = min(max(w, 0.0), 1.0)
        lm = np.log(np.abs(b.t))
        out.append((math.exp(x0 + w * (x1 - x0)), float(math.exp(lm[0] + w * (lm[1] - lm[0]))),
                    float(b.phase[0] + w * (b.phase[1] - b.phase[0]))))
    return out
