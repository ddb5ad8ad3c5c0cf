"""Signal ranges through the design: from declared sources through the stages in signal order.

Rails and declared signals seed the table; each solve unit (one op-amp, or a group tied in a loop) then
takes its upstream stages' output ranges and closed-loop output resistances as Thevenin sources, and adds the
DC range, AC amplitude and highest frequency of every net it solves. A loop of stages too large to group is
reported as not evaluated, never a crash. A divider node outside every stage (nothing on it but its legs)
gets its Thevenin voltage range.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

from afecheck.analysis.affine import SweptForm
from afecheck.analysis.corners import Corners
from afecheck.analysis.coupled_dc import CoupledDc, solve_with_neighbours
from afecheck.analysis.results import NetSignal, StageResult
from afecheck.analysis.sources import find_dividers, rail_range
from afecheck.analysis.stage_analysis import analyse_unit
from afecheck.graph.build import Circuit
from afecheck.graph.stages import StagePlan


def seed_signals(circuit: Circuit) -> dict[str, NetSignal]:
    """NetSignals of fixed nets (over rail tolerance), declared signals and signal sources."""
    d = circuit.loaded.design
    nets: dict[str, NetSignal] = {}
    for net in circuit.fixed:
        rng = rail_range(circuit, net)
        if rng is not None:
            nets[net] = NetSignal(net=net, dc_min=rng[0], dc_max=rng[1])
    for net, ref in circuit.signal_nets.items():
        if net in d.signals and d.signals[net].kind != "voltage":
            continue  # a current or charge sensor's net takes the voltage the stage solve gives it
        src = d.signals[net] if net in d.signals else d.components[ref]
        nets[net] = NetSignal(net=net, dc_min=float(min(src.dc)), dc_max=float(max(src.dc)),
                              ac_amplitude=float(src.ac_amplitude), f_max=float(src.band[1]) if src.band else 0.0)
    return nets


@dataclass(frozen=True)
class Propagated:
    """Stage results, net signals, what was not evaluated, and the forms behind the DC ranges."""

    results: dict[str, StageResult]
    nets: dict[str, NetSignal]
    problems: list[tuple[tuple[str, ...], str]]
    forms: dict[str, SweptForm]
    output_currents: dict[str, SweptForm]


def seed_forms(circuit: Circuit, corners: Corners) -> dict[str, SweptForm]:
    """Forms of the fixed nets and declared signals."""
    forms: dict[str, SweptForm] = {}
    for net in circuit.fixed:
        f = corners.fixed_form(net)
        if f is not None:
            forms[net] = f
    d = circuit.loaded.design
    for net, ref in circuit.signal_nets.items():
        if net in d.signals and d.signals[net].kind != "voltage":
            continue
        forms[net] = corners.signal_form(net) if net in d.signals else corners.source_form(ref)
    return forms


def propagate(circuit: Circuit, plan: StagePlan, circuits: dict | None = None) -> Propagated:
    """Analyse every solve unit in signal order; return stage results, net signals and what was not evaluated.

    ``circuits``, when given, collects each op-amp's local netlist (see :func:`analyse_unit`)."""
    results: dict[str, StageResult] = {}
    nets = seed_signals(circuit)
    corners = Corners(circuit)
    forms = seed_forms(circuit, corners)
    currents: dict[str, SweptForm] = {}
    problems: list[tuple[tuple[str, ...], str]] = [
        (loop, f"stages {', '.join(loop)} form a feedback loop larger than can be solved as one group")
        for loop in plan.unsolved_loops
    ]
    cache: dict = {}
    for unit in plan.units:
        res = analyse_unit(circuit, plan, unit, results, cache, forms, corners, circuits)
        for r in res.stages:
            results[r.opamp] = r
        for ns in res.nets:
            if ns.net not in circuit.fixed and (ns.net not in circuit.signal_nets or ns.net not in nets):
                nets[ns.net] = ns
                forms[ns.net] = res.forms[ns.net]
        currents.update(res.output_currents)
    seeded = set(seed_signals(circuit))
    for unit in plan.units:
        coupled = solve_with_neighbours(circuit, plan, unit, results, forms, corners, cache)
        if coupled is not None:
            _take_coupled(coupled, unit, results, nets, forms, currents, seeded)
    _restate_upstream(results)
    rest = [n for n in circuit.net_pins if n not in nets]
    for net, dv in find_dividers(circuit, rest, frozenset(circuit.kinds)).items():
        if len(circuit.net_pins[net]) == len(dv.legs):
            legs = [(r, circuit.other_pin_net(r, net) or "") for r in dv.legs]
            grid = corners.grid({corners.key(r) for r in dv.legs} & corners.thermistors.keys())
            _rth, form = corners.divider_form(legs, grid)
            if form is None:
                eq = dv.equivalent()
                nets[net] = NetSignal(net=net, dc_min=eq.v_min, dc_max=eq.v_max)
                continue
            lo, hi = form.extremes()
            nets[net] = NetSignal(net=net, dc_min=lo, dc_max=hi)
            forms[net] = form
    return Propagated(results, nets, problems, forms, currents)


def _take_coupled(coupled: CoupledDc, unit: tuple[str, ...], results: dict[str, StageResult],
                  nets: dict[str, NetSignal], forms: dict[str, SweptForm], currents: dict[str, SweptForm],
                  seeded: set[str]) -> None:
    """Replace a unit's DC ranges, forms and output currents by those solved with its neighbours (a declared
    signal's or a rail's net keeps its declared range)."""
    for net, (form, lo, hi) in coupled.nets.items():
        if net in seeded or net not in nets:
            continue
        nets[net] = replace(nets[net], dc_min=lo, dc_max=hi)
        forms[net] = form
    for ref in unit:
        r = results[ref]
        new = coupled.currents[ref]
        old_lo, old_hi = currents[ref].extremes()
        new_lo, new_hi = new.extremes()
        currents[ref] = new
        changes: dict = {}
        if r.iout_peak is not None:
            ac_part = r.iout_peak - max(abs(old_lo), abs(old_hi))
            changes["iout_peak"] = max(abs(new_lo), abs(new_hi)) + ac_part
        if r.out in coupled.nets and r.vout_min is not None:
            changes["vout_min"], changes["vout_max"] = coupled.nets[r.out][1:]
        if r.in_plus in coupled.nets and r.vcm_min is not None:
            changes["vcm_min"], changes["vcm_max"] = coupled.nets[r.in_plus][1:]
        results[ref] = replace(r, **changes)


def _restate_upstream(results: dict[str, StageResult]) -> None:
    """Give each stage input driven by another stage's output that stage's final output range."""
    for ref, r in list(results.items()):
        inputs = []
        for inp in r.inputs:
            up = results.get(inp.source.refs[0]) if inp.source.kind == "stage-output" else None
            if up is not None and up.vout_min is not None and up.vout_max is not None:
                inp = replace(inp, source=replace(inp.source, v_min=up.vout_min, v_max=up.vout_max))
            inputs.append(inp)
        if any(a is not b for a, b in zip(inputs, r.inputs, strict=True)):
            results[ref] = replace(r, inputs=tuple(inputs))
