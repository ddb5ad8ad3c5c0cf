"""Frequency responses behind a stage's plots: loop gain T(jf), noise gain, the op-amp's open-loop gain, and the
closed-loop response from each signal input to the stage output.

Swept on the same local circuit the stage analysis solved (its netlist, with the inputs' Thevenin sources), so
the curves and the stage numbers (crossover, phase margin) come from one model. Only the reports that draw
plots and ``afecheck stages --curves`` ask for them: the check path never sweeps.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from afecheck.analysis.design import analyse_design
from afecheck.analysis.loop import default_loop_grid, loop_gain
from afecheck.analysis.mna import transfer
from afecheck.analysis.netlist import GROUND, Netlist
from afecheck.analysis.results import DesignAnalysis, StageResult
from afecheck.errors import AnalysisError, SingularCircuitError
from afecheck.model.loaded import LoadedDesign

PER_DECADE = 20
BAND_MARGIN = 10.0  # the closed-loop sweep reaches a decade beyond the signal band on each side
CROSSOVER_MARGIN = 3.0  # ...and past the loop crossover, where the closed-loop response rolls off


@dataclass(frozen=True)
class Response:
    """One frequency response on a log grid: |H| in dB and its phase in degrees, unwrapped along the grid."""

    label: str
    freqs_hz: tuple[float, ...]
    magnitude_db: tuple[float, ...]
    phase_deg: tuple[float, ...]


@dataclass(frozen=True)
class StageCurves:
    """The curves of one op-amp stage; ``closed_loop`` has one response per signal input (labelled by its net).

    ``band_hz`` is the signal band the closed-loop plot is judged over: the lowest declared band edge to the
    highest frequency reaching this stage (None when no signal declares a band).
    """

    opamp: str
    loop_gain: Response | None = None
    noise_gain: Response | None = None
    open_loop: Response | None = None
    closed_loop: tuple[Response, ...] = ()
    band_hz: tuple[float, float] | None = None
    not_evaluated: tuple[str, ...] = ()


def design_curves(loaded: LoadedDesign, per_decade: int = PER_DECADE) -> tuple[DesignAnalysis, dict[str, StageCurves]]:
    """Analyse ``loaded`` once and sweep every stage's local circuit: (the analysis, op-amp -> its curves)."""
    circuits: dict[str, tuple[Netlist, dict[str, str]]] = {}
    analysis = analyse_design(loaded, circuits)
    out: dict[str, StageCurves] = {}
    for stage in analysis.stages:
        if stage.opamp not in circuits:
            reason = "; ".join(stage.not_evaluated) or "the stage's local circuit was not built"
            out[stage.opamp] = StageCurves(stage.opamp, not_evaluated=(reason,))
            continue
        netlist, branches = circuits[stage.opamp]
        out[stage.opamp] = stage_curves(stage, netlist, branches, _lowest_band_edge(loaded, stage), per_decade)
    return analysis, out


def stage_curves(stage: StageResult, netlist: Netlist, branches: dict[str, str], band_low: float | None = None,
                 per_decade: int = PER_DECADE) -> StageCurves:
    """Sweep one stage: T, A/T and A over the loop grid; each signal input's transfer to the output over its band."""
    band = None
    if stage.f_max > 0:
        lo = band_low if band_low is not None and band_low < stage.f_max else stage.f_max / 100.0
        band = (float(lo), float(stage.f_max))
    op = netlist.opamps[stage.opamp]
    span = default_loop_grid(op, 2)
    grid = decade_grid(float(span[0]), float(span[-1]), per_decade)
    notes: list[str] = []
    loop = noise = None
    try:
        lg = loop_gain(netlist, stage.opamp, grid)
        loop = _response("loop gain T", grid, lg.t, lg.phase_deg)
        if lg.sign != "none":
            noise = _response("noise gain A/T", grid, lg.noise_gain())
    except (SingularCircuitError, AnalysisError, np.linalg.LinAlgError) as exc:
        notes.append(f"loop gain not swept: {exc}")
    open_loop = _response("open-loop gain A", grid, op.open_loop_response(grid))
    closed: list[Response] = []
    f_cl = _closed_loop_grid(stage, band, float(grid[0]), float(grid[-1]), per_decade)
    out_node = stage.out if stage.out in netlist.nodes() else GROUND
    for inp in stage.inputs:
        branch = branches.get(inp.net)
        if inp.source.kind in ("rail", "vsource") or branch is None or out_node == GROUND:
            continue
        try:
            h = transfer(netlist, branch, out_node, f_cl)
        except (SingularCircuitError, AnalysisError, np.linalg.LinAlgError) as exc:
            notes.append(f"closed-loop response from {inp.net} not swept: {exc}")
            continue
        closed.append(_response(inp.net, f_cl, h))
    return StageCurves(stage.opamp, loop, noise, open_loop, tuple(closed), band, tuple(notes))


def _closed_loop_grid(stage: StageResult, band: tuple[float, float] | None, f_lo: float, f_hi: float,
                      per_decade: int) -> np.ndarray:
    """A decade either side of the signal band, and past the crossover so the roll-off shows."""
    lo, hi = f_lo, f_hi
    if band is not None:
        lo = band[0] / BAND_MARGIN
        hi = band[1] * BAND_MARGIN
    if stage.crossover_hz is not None:
        hi = max(hi, CROSSOVER_MARGIN * stage.crossover_hz)
    if not (0 < lo < hi):
        lo, hi = f_lo, f_hi
    return decade_grid(lo, hi, per_decade)


def decade_grid(f_lo: float, f_hi: float, per_decade: int = PER_DECADE) -> np.ndarray:
    """Frequencies 10^(k/per_decade) covering [f_lo, f_hi]: round decades fall on the grid, and it is the grid of
    a SPICE ``ac dec per_decade`` sweep started at its first point."""
    k0 = math.floor(math.log10(f_lo) * per_decade + 1e-9)
    k1 = math.ceil(math.log10(f_hi) * per_decade - 1e-9)
    return 10.0 ** (np.arange(k0, max(k1, k0 + 1) + 1) / per_decade)


def _response(label: str, freqs: np.ndarray, h: np.ndarray, phase_deg: np.ndarray | None = None) -> Response:
    """A Response from complex samples (the phase unwrapped along the grid unless given)."""
    mag = np.abs(h)
    db = np.where(mag > 0, 20.0 * np.log10(np.where(mag > 0, mag, 1.0)), -math.inf)
    phase = np.degrees(np.unwrap(np.angle(h))) if phase_deg is None else np.asarray(phase_deg, dtype=float)
    return Response(label, tuple(float(f) for f in freqs), tuple(float(x) for x in db),
                    tuple(float(p) for p in phase))


def _lowest_band_edge(loaded: LoadedDesign, stage: StageResult) -> float | None:
    """The lowest lower band edge declared by the signals driving ``stage`` directly, else by any signal of the
    design (a stage fed by another stage inherits the design's band); None when no signal declares one."""
    d = loaded.design

    def band_of(kind: str, net: str, refs: tuple[str, ...]) -> tuple[float, float] | None:
        if kind == "signal" and net in d.signals:
            return d.signals[net].band
        if kind == "signal-source" and refs and refs[0] in d.components:
            return getattr(d.components[refs[0]], "band", None)
        return None

    own = [band_of(i.source.kind, i.net, i.source.refs) for i in stage.inputs]
    bands = [b for b in own if b]
    if not bands:
        bands = [s.band for s in d.signals.values() if s.band]
        bands += [c.band for c in d.components.values() if getattr(c, "kind", "") == "signal_source" and c.band]
    edges = [float(b[0]) for b in bands if float(b[0]) > 0]
    return min(edges) if edges else None
