"""Signal ranges through the design: from declared sources through the stages in signal order.

Rails and declared signals seed the table; each solve unit (one op-amp, or a group tied in a loop) then
takes its upstream stages' output ranges and closed-loop output resistances as Thevenin sources, and adds the
DC range, AC amplitude and highest frequency of every net it solves. A loop of stages too large to group is
reported as not evaluated, never a crash. A divider node outside every stage (nothing on it but its legs)
gets its Thevenin voltage range.
"""

from __future__ import annotations

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
        src = d.signals[net] if net in d.signals else d.components[ref]
        nets[net] = NetSignal(net=net, dc_min=float(min(src.dc)), dc_max=float(max(src.dc)),
                              ac_amplitude=float(src.ac_amplitude), f_max=float(src.band[1]) if src.band else 0.0)
    return nets


def propagate(circuit: Circuit, plan: StagePlan, circuits: dict | None = None
              ) -> tuple[dict[str, StageResult], dict[str, NetSignal], list[tuple[tuple[str, ...], str]]]:
    """Analyse every solve unit in signal order; return stage results, net signals and what was not evaluated.

    ``circuits``, when given, collects each op-amp's local netlist (see :func:`analyse_unit`)."""
    results: dict[str, StageResult] = {}
    nets = seed_signals(circuit)
    problems: list[tuple[tuple[str, ...], str]] = [
        (loop, f"stages {', '.join(loop)} form a feedback loop larger than can be solved as one group")
        for loop in plan.unsolved_loops
    ]
    cache: dict = {}
    for unit in plan.units:
        res = analyse_unit(circuit, plan, unit, results, cache, circuits)
        for r in res.stages:
            results[r.opamp] = r
        for ns in res.nets:
            if ns.net not in circuit.fixed and ns.net not in circuit.signal_nets:
                nets[ns.net] = ns
    rest = [n for n in circuit.net_pins if n not in nets]
    for net, dv in find_dividers(circuit, rest, frozenset(circuit.kinds)).items():
        if len(circuit.net_pins[net]) == len(dv.legs):
            eq = dv.equivalent()
            nets[net] = NetSignal(net=net, dc_min=eq.v_min, dc_max=eq.v_max)
    return results, nets, problems
