"""Solve one stage (or one group of op-amps tied in a loop) locally and fill its StageResult.

The local circuit is the op-amps with their macromodels, the stage's passives, a Thevenin source on every
input (declared signal, signal source, rail, divider, upstream stage output with its closed-loop output
resistance) and the loads on its nets; other op-amps' outputs it reaches hold their nets, other op-amps'
``in-`` nets it reaches are virtual grounds (following their ``in+`` net when the stage reaches it, else held at
its fixed voltage). Cost grows with the stage, not the design.

Every input is a unit column of one DC solve (superposition): its gain, the voltage it leaves at its own net
(so ideal gain = gain / that voltage, loading error = 1 − that voltage, input resistance = voltage / current
drawn), and the range of every node as the sum over inputs of gain × source range. A thermistor divider is
solved at each point of its temperature grid, because its Thevenin resistance moves with temperature.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

from afecheck.analysis import solve_memo, unit_memo
from afecheck.analysis.affine import SweptForm, constant_form
from afecheck.analysis.corners import Corners, UnitGrid
from afecheck.analysis.loop import loop_gain
from afecheck.analysis.mna import MnaSystem
from afecheck.analysis.netlist import (
    GROUND,
    Capacitor,
    CurrentSource,
    Element,
    Inductor,
    Netlist,
    NetlistOptions,
    OpAmpCore,
    Resistor,
    Vccs,
    Vcvs,
    VoltageSource,
    element_nodes,
    netlist_from_design,
)
from afecheck.analysis.ranges import solve_forms
from afecheck.analysis.results import NetSignal, SourceEquivalent, StageInput, StageResult
from afecheck.analysis.solve_memo import numeric_key, shared, unit_system
from afecheck.analysis.sources import Divider, boundary_source, find_dividers, rail_range
from afecheck.errors import AnalysisError, InputError, SingularCircuitError
from afecheck.graph.build import Circuit
from afecheck.graph.queries import MAX_REGION_PARTS
from afecheck.graph.stages import Stage, StagePlan
from afecheck.sensors.resistive import SWEPT_KINDS

MAX_LOCAL_PARTS = MAX_REGION_PARTS
"""Most passives plus held neighbours a unit's local circuit may hold. A stage wired into a network shared by
hundreds of parts is reported "not evaluated" rather than solved densely once per stage (cost n³ a stage)."""
HF_FACTOR = 10.0
CHARGE_PROBE_HZ = 1e3  # a charge source with no declared band has its gain read here (it has none at DC)
# Nets reached only through capacitors (a capacitive divider, a coupling node) get this leak to ground so the
# DC solve exists; an op-amp input among them is reported as having no DC path, never given a DC range.
LEAK_RESISTANCE = 1e15


@dataclass(frozen=True)
class _Input:
    """One input of the local circuit: its equivalent, the branch that drives it, and the op-amp pin it reaches."""

    source: SourceEquivalent
    branch: str
    series: str | None
    pin: str


@dataclass
class _Sources:
    """What the unit's independent sources stand for: a form per source element, the divider legs behind each
    Thevenin source (its form and resistance depend on the grid), and the resistors that move with temperature."""

    forms: dict[str, SweptForm]
    dividers: dict[str, tuple[str, list[tuple[str, str]]]]


@dataclass(frozen=True)
class UnitResult:
    """The results of one solve unit: a StageResult per op-amp, the signal on each net it solved, each net's DC
    value as a form over the design's quantities, and each op-amp's DC output current as a form."""

    stages: tuple[StageResult, ...]
    nets: tuple[NetSignal, ...]
    forms: Mapping[str, SweptForm] = field(default_factory=dict)
    output_currents: Mapping[str, SweptForm] = field(default_factory=dict)


def _node(circuit: Circuit, net: str) -> str:
    return GROUND if net == circuit.ground else net


def _empty_result(stage: Stage, circuit: Circuit, reasons: tuple[str, ...]) -> StageResult:
    part = circuit.loaded.design.components[stage.opamp].part  # type: ignore[union-attr]
    vp, vm, _ = _rails(circuit, stage)
    return StageResult(
        opamp=stage.opamp, part=part, topology=stage.topology, refs=stage.refs, in_plus=stage.in_plus,
        in_minus=stage.in_minus, out=stage.out, group=stage.group, inputs=(), noise_gain_dc=None,
        noise_gain_at_crossover=None, noise_gain_hf=None, output_resistance=None, vcm_min=None, vcm_max=None,
        vout_min=None, vout_max=None, vout_ac_peak=0.0, f_max=0.0, load_resistance=None, load_capacitance=0.0,
        iout_peak=None, feedback="not-evaluated", loop_gain_dc=None, crossover_hz=None, phase_margin_deg=None,
        gain_margin_db=None, loop_gain_at_fmax=None, required_slew_rate=0.0, rail_plus=vp, rail_minus=vm,
        not_evaluated=reasons,
    )


def _rails(circuit: Circuit, stage: Stage) -> tuple[float, float, list[str]]:
    notes = []
    values = []
    for pin, net in (("v+", stage.supply_plus), ("v-", stage.supply_minus)):
        v = circuit.fixed.get(net) if net is not None else None
        if v is None:
            notes.append(f"supply pin {pin} is not on a rail of known voltage")
            v = 0.0
        values.append(float(v))
    return values[0], values[1], notes


def _collect_inputs(
    circuit: Circuit, stages: list[Stage], dividers: Mapping[str, Divider], done: Mapping[str, StageResult],
    corners: Corners, forms: Mapping[str, SweptForm],
) -> tuple[list[_Input], list[Element], list[str], _Sources]:
    """Inputs of the unit, extra elements that realise them, the notes on anything left unknown, and what each
    source element stands for."""
    unit = {s.opamp for s in stages}
    legs = {r for dv in dividers.values() for r in dv.legs}
    side_refs = set().union(*(s.plus_region.refs | s.minus_region.refs for s in stages))
    inputs: list[_Input] = []
    extra: list[Element] = []
    notes: list[str] = []
    seen: set[str] = set()
    sources = _Sources({}, {})
    pin_of: dict[str, str] = {}
    for s in stages:
        for net in s.plus_region.boundary | s.plus_region.nets | {s.in_plus}:
            pin_of.setdefault(net, "in+")
        for net in s.minus_region.boundary | s.minus_region.nets | {s.in_minus}:
            pin_of.setdefault(net, "in-")
    boundary = set().union(*(s.plus_region.boundary | s.minus_region.boundary for s in stages))
    boundary |= {n for s in stages for n in (s.in_plus, s.in_minus) if n in circuit.signal_nets}
    # a current signal inside the walked network is a Norton source solved with the parts beside it
    boundary |= {n for s in stages for r in (s.plus_region, s.minus_region, s.output_region)
                 for n in r.nets & circuit.norton_nets}
    boundary = sorted(boundary)
    for net in sorted(dividers):
        dv = dividers[net]
        inner = f"{net}#thev.s"
        k = dv.nominal_index
        extra += [VoltageSource(f"{net}#thev", inner, GROUND, dc=0.0),
                  Resistor(f"{net}#thev.rs", inner, _node(circuit, net), dv.rth[k])]
        inputs.append(_Input(dv.equivalent(), f"{net}#thev", f"{net}#thev.rs", pin_of.get(net, "in+")))
        sources.dividers[f"{net}#thev"] = (f"{net}#thev.rs", _divider_legs(circuit, net, dv))
        seen.add(net)
    for net in boundary:
        if net in seen or net == circuit.ground or circuit.opamp_outputs.get(net) in unit:
            continue
        touching = any(net in circuit.pins[r].values() for r in side_refs if r not in legs)
        if net in circuit.fixed and not touching and not any(net in (s.in_plus, s.in_minus) for s in stages):
            continue
        owner = circuit.opamp_outputs.get(net)
        src = boundary_source(circuit, net, done.get(owner) if owner else None)
        if src is None:
            notes.append(f"net {net} has no known voltage")
            continue
        if src.kind == "unknown":
            notes.append(f"upstream stage {owner} was not analysed before this one (loop between stages)")
        pin = pin_of.get(net, "in+")
        if src.kind in ("current", "charge"):
            series, branch = None, f"{net}#signal"
        elif src.kind == "signal":
            series = f"{net}#signal.rs" if src.r_max > 0 else None
            branch = f"{net}#signal"
        elif src.kind == "signal-source":
            series = f"{src.refs[0]}#rs" if src.r_max > 0 else None
            branch = src.refs[0]
        elif src.kind in ("rail", "vsource"):
            branch, series = (f"{net}#rail", None) if src.kind == "rail" else (f"{net}#fixed", None)
            if src.kind == "vsource":
                extra.append(VoltageSource(branch, _node(circuit, net), GROUND, dc=0.0))
                fixed = corners.fixed_form(net)
                if fixed is not None:
                    sources.forms[branch] = fixed
        else:
            branch = f"{net}#stage"
            series = f"{net}#stage.rs" if src.r_max > 0 else None
            if series:
                extra += [VoltageSource(branch, f"{net}#stage.s", GROUND, dc=0.0),
                          Resistor(series, f"{net}#stage.s", _node(circuit, net), src.r_max)]
            else:
                extra.append(VoltageSource(branch, _node(circuit, net), GROUND, dc=0.0))
            sources.forms[branch] = forms.get(net, constant_form(0.0))
        inputs.append(_Input(src, branch, series, pin))
        seen.add(net)
    return inputs, extra, notes, sources


def _divider_legs(circuit: Circuit, net: str, dv: Divider) -> list[tuple[str, str]]:
    """(leg, far net) of each leg of a divider node."""
    return [(r, circuit.other_pin_net(r, net) or "") for r in dv.legs]


def _holding_elements(circuit: Circuit, stages: list[Stage], nets: set[str], seen_inputs: set[str],
                      corners: Corners, forms: Mapping[str, SweptForm], sources: _Sources,
                      cache: dict | None = None) -> list[Element]:
    """Sources for other op-amps' outputs and virtual grounds the output walk stopped at; input loads of others."""
    unit = {s.opamp for s in stages}
    extra: list[Element] = []
    out_boundary = set().union(*(s.output_region.boundary for s in stages)) - seen_inputs
    for net in sorted(out_boundary):
        if net in circuit.fixed or net in circuit.signal_nets:
            if (net in circuit.fixed and net != circuit.ground and net not in circuit.loaded.design.rails
                    and circuit.fixed[net] is not None):
                extra.append(VoltageSource(f"{net}#fixed", _node(circuit, net), GROUND, dc=float(circuit.fixed[net])))
                fixed = corners.fixed_form(net)
                if fixed is not None:
                    sources.forms[f"{net}#fixed"] = fixed
            continue
        owner = circuit.opamp_outputs.get(net)
        if owner is not None and owner not in unit:
            extra.append(VoltageSource(f"{net}#held", _node(circuit, net), GROUND, dc=0.0))
            sources.forms[f"{net}#held"] = forms.get(net, constant_form(0.0))
            continue
        for ref, pin in circuit.net_pins.get(net, ()):
            if pin == "in-" and circuit.kinds[ref] == "opamp" and ref not in unit:
                plus = circuit.pins[ref].get("in+", "")
                if plus in nets and plus not in circuit.fixed:
                    extra.append(Vcvs(f"{net}#vg", _node(circuit, net), GROUND, _node(circuit, plus), GROUND, 1.0))
                else:
                    vp = circuit.fixed.get(plus)
                    extra.append(VoltageSource(f"{net}#vg", _node(circuit, net), GROUND, dc=float(vp or 0.0)))
                    fixed = corners.fixed_form(plus) if plus in circuit.fixed else None
                    sources.forms[f"{net}#vg"] = fixed if fixed is not None else constant_form(float(vp or 0.0))
                break
    totals = _input_loads(circuit, cache)
    # the unit's own inputs are in its netlist already: they come out of the sums (in the same order as ever)
    own = [(circuit.pins[ref].get(pin), ref) for ref in unit for pin in ("in+", "in-")]
    loads: dict[str, tuple[int, float, float]] = {}
    for net in sorted(nets - set(circuit.fixed)):
        if net not in totals:
            continue
        count, g, c = totals[net]
        for on, ref in own:
            if on == net:
                if ref not in loads:
                    loads[ref] = _input_load(circuit, ref)
                _, g_own, c_own = loads[ref]
                count, g, c = count - 1, g - g_own, c - c_own
        if count > 0 and g > 0:
            extra.append(Resistor(f"{net}#inputs.r", _node(circuit, net), GROUND, 1.0 / g))
        if count > 0 and c > 0:
            extra.append(Capacitor(f"{net}#inputs.c", _node(circuit, net), GROUND, c))
    return extra


def _input_load(circuit: Circuit, ref: str) -> tuple[int, float, float]:
    """(1, conductance, capacitance) one op-amp input puts from its net to ground: 1/Rcm and Ccm of its model."""
    model = circuit.loaded.parts.get(circuit.loaded.design.components[ref].part)  # type: ignore[union-attr]
    rcm = model.value("input_resistance_cm") if model is not None else 1e12
    ccm = model.value("input_capacitance_cm") if model is not None else 0.0
    return 1, 1.0 / rcm, max(ccm, 0.0)


def _input_loads(circuit: Circuit, cache: dict | None) -> dict[str, tuple[int, float, float]]:
    """Per net, (count, total conductance, total capacitance) of every op-amp input on it, lumped in parallel.

    Computed once a design (in ``cache``): a stage then holds the other stages' input loads on a shared net as
    one resistor and one capacitor, so a net read by n op-amps costs O(1) per stage instead of O(n).
    """
    if cache is not None and "input_loads" in cache:
        return cache["input_loads"]
    totals: dict[str, tuple[int, float, float]] = {}
    for ref, kind in circuit.kinds.items():
        if kind != "opamp":
            continue
        one = _input_load(circuit, ref)
        for pin in ("in+", "in-"):
            net = circuit.pins[ref].get(pin)
            if net is not None:
                count, g, c = totals.get(net, (0, 0.0, 0.0))
                totals[net] = (count + 1, g + one[1], c + one[2])
    if cache is not None:
        cache["input_loads"] = totals
    return totals


def analyse_unit(circuit: Circuit, plan: StagePlan, unit: tuple[str, ...],
                 done: Mapping[str, StageResult], cache: dict | None = None,
                 forms: Mapping[str, SweptForm] | None = None, corners: Corners | None = None,
                 circuits: dict | None = None) -> UnitResult:
    """Solve the op-amps of ``unit`` together and return their StageResults, net signals and net forms.

    ``cache`` (one dict per design) memoises loop gains of stages whose local circuits are identical;
    ``forms`` holds the forms of nets solved so far (upstream outputs), ``corners`` the design's quantities;
    ``circuits``, when given, receives op-amp -> (local netlist, {input net: its source branch}) for later sweeps.
    """
    corners = corners or Corners(circuit)
    forms = forms or {}
    cache = cache if solve_memo.MEMOISE else None
    stages = [plan.stages[r] for r in unit]
    for s in stages:
        if not s.out or not s.in_plus or not s.in_minus:
            return UnitResult(tuple(_empty_result(x, circuit, ("an op-amp input or output pin is unconnected",))
                                    for x in stages), ())
    passives = frozenset().union(*(frozenset(s.refs) for s in stages))
    held = set().union(*(s.output_region.boundary for s in stages))
    truncated = any(r.truncated for s in stages for r in (s.plus_region, s.minus_region, s.output_region))
    if truncated or len(passives) + len(held) > MAX_LOCAL_PARTS:
        reason = (f"its local circuit holds more than {MAX_LOCAL_PARTS} passives and neighbouring nets: the stage "
                  "shares a network with too many parts to analyse stage by stage; check it by simulation "
                  "(afecheck spice)")
        return UnitResult(tuple(_empty_result(s, circuit, (reason,)) for s in stages), ())
    loop_netlist = LoopCircuit(circuit, plan, stages, done, corners, None, cache)
    ukey = None
    if cache is not None and circuits is None:
        ukey = unit_memo.unit_key(circuit, stages, done, forms, corners, _input_loads(circuit, cache),
                                  loop_netlist.signature, cache)
        hit = None if ukey is None else unit_memo.remembered(cache, "unit", ukey)
        if hit is not None:
            return hit[1].unit(hit[0])
    try:
        netlist, inputs, notes, sources, ntcs = _unit_netlist(circuit, stages, done, corners, forms, cache)
    except InputError as exc:
        return UnitResult(tuple(_empty_result(s, circuit, tuple(p.message for p in exc.problems)) for s in stages), ())
    if circuits is not None:
        circuits.update({r: (netlist, {i.source.net: i.branch for i in inputs}) for r in unit})
    loop_netlist.own = netlist
    try:
        result = _solve_unit(circuit, stages, netlist, inputs, notes, cache, corners, sources, ntcs, loop_netlist)
        names = None if ukey is None else unit_memo.unit_names(result)
        if names is not None:
            unit_memo.keep(cache, "unit", ukey, result, names,  # type: ignore[arg-type]
                           [*result.forms.values(), *result.output_currents.values()])
        return result
    except SingularCircuitError as exc:
        reason = f"singular circuit: {exc}"
    except (AnalysisError, np.linalg.LinAlgError, ValueError, ArithmeticError) as exc:
        reason = f"analysis failed: {exc}"
    return UnitResult(tuple(_empty_result(s, circuit, (reason, *notes)) for s in stages), ())


def _unit_netlist(circuit: Circuit, stages: list[Stage], done: Mapping[str, StageResult], corners: Corners,
                  forms: Mapping[str, SweptForm], cache: dict | None = None,
                  ) -> tuple[Netlist, list[_Input], list[str], _Sources, tuple[str, ...]]:
    """The local circuit of ``stages``: their op-amps and passives, a source on every input, holding elements
    and loads; with its inputs, notes, what each source stands for, and its thermistors (InputError if it
    cannot be built)."""
    unit = tuple(s.opamp for s in stages)
    passives = frozenset().union(*(frozenset(s.refs) for s in stages))
    input_nets = set().union(*(s.plus_region.nets | s.minus_region.nets for s in stages))
    input_nets -= {s.in_minus for s in stages} | {s.out for s in stages}
    dividers = find_dividers(circuit, input_nets, passives, corners.dividers)
    legs = {r for dv in dividers.values() for r in dv.legs}
    nets = set().union(*(set(s.nets) for s in stages))
    inputs, extra, notes, sources = _collect_inputs(circuit, stages, dividers, done, corners, forms)
    extra += _holding_elements(circuit, stages, nets, {i.source.net for i in inputs}, corners, forms, sources, cache)
    extra += [Resistor(f"{net}#leak", _node(circuit, net), GROUND, LEAK_RESISTANCE)
              for net in sorted(nets) if net not in circuit.fixed and not corners.dc_path(net)]
    d = circuit.loaded.design
    sig_sources = sorted(circuit.signal_nets[n] for n in nets
                         if n in circuit.signal_nets and circuit.signal_nets[n] in circuit.kinds)
    comps = list(unit) + sorted(passives - legs) + sig_sources
    zero = {n: 0.0 for n in nets if n in d.signals} | {r: 0.0 for r in sig_sources}
    netlist = netlist_from_design(circuit.loaded, comps, NetlistOptions(signal_dc=zero)).with_elements(*extra)
    names = {e.name for e in netlist.elements}
    inputs = [i for i in inputs if i.branch in names]
    ntcs = tuple(r for r in comps if circuit.kinds.get(r) in SWEPT_KINDS)
    return netlist, inputs, notes, sources, ntcs


def _neighbours(circuit: Circuit, plan: StagePlan, stages: list[Stage]) -> list[str]:
    """Op-amps next to the unit: those driving its inputs and those whose inputs sit on its nets."""
    unit = {s.opamp for s in stages}
    near: dict[str, None] = {}
    for s in stages:
        for r in s.upstream:
            near.setdefault(r, None)
        for net in s.nets:
            if net in circuit.fixed or (net in circuit.signal_nets and net not in circuit.norton_nets):
                continue  # an ideal voltage source between stages decouples them (a current source does not)
            for ref, pin in circuit.net_pins.get(net, ()):
                if pin in ("in+", "in-") and circuit.kinds[ref] == "opamp":
                    near.setdefault(ref, None)
    out = []
    for r in near:
        x = plan.stages.get(r)
        if r not in unit and x is not None and x.out and x.in_plus and x.in_minus and x.out not in circuit.fixed:
            out.append(r)
    return out


class LoopCircuit:
    """The circuit an op-amp's loop gain is solved on: the unit with its neighbouring op-amps and their networks,
    so each neighbour's output and input impedance follow frequency as its own loop makes them (the unit's own
    netlist when it has no neighbours). Built only when asked for; ``signature`` identifies it without building."""

    def __init__(self, circuit: Circuit | None, plan: StagePlan | None, stages: list[Stage],
                 done: Mapping[str, StageResult], corners: Corners | None, netlist: Netlist | None,
                 cache: dict | None = None) -> None:
        self.unit = tuple(s.opamp for s in stages)
        self.own = netlist
        """The unit's own netlist (may be given after the signature is read, once it is built)."""
        self._built: Netlist | None = None
        self._group: list[Stage] = []
        self.signature: tuple | None = None
        if circuit is not None and plan is not None and corners is not None:
            near = _neighbours(circuit, plan, stages)
            if near:
                self._group = stages + [plan.stages[r] for r in near]
                self._args = (circuit, done, corners, cache)
                self.signature = _coupling_signature(circuit, self._group, done)

    @classmethod
    def plain(cls, netlist: Netlist) -> LoopCircuit:
        """A loop circuit that is just ``netlist``."""
        return cls(None, None, [], {}, None, netlist)

    @property
    def netlist(self) -> Netlist:
        """The coupled netlist (built once), or the unit's own."""
        if not self._group:
            return self.own  # type: ignore[return-value]
        if self._built is None:
            circuit, done, corners, cache = self._args
            try:  # the design cache shares the per-net input-load sums (else each build walks every op-amp)
                self._built = _unit_netlist(circuit, self._group, done, corners, {}, cache)[0]
            except (InputError, ValueError):
                self._built = self.own
        return self._built


def _coupling_signature(circuit: Circuit, group: list[Stage], done: Mapping[str, StageResult]) -> tuple:
    """The coupled group's circuit up to names: every part of its stages with its value and numbered nets, and on
    each net what else touches it (rails, signals, loads, other op-amps, upstream output resistances). Equal
    signatures build equal coupled circuits."""
    d = circuit.loaded.design
    numbers: dict[str, int] = {circuit.ground: -1}
    key: list[tuple] = []
    seen: set[str] = set()
    for s in group:
        for ref in (s.opamp, *s.refs):
            if ref in seen:
                continue
            seen.add(ref)
            comp = d.components[ref]
            nodes = tuple((pin, numbers.setdefault(net, len(numbers))) for pin, net in sorted(comp.pins.items()))
            key.append((comp.kind, nodes, _value_key(comp)))
    for net, number in list(numbers.items()):
        if net in circuit.fixed:
            key.append((number, "fixed"))
            continue
        sig = d.signals.get(net)
        if sig is not None:
            key.append((number, sig.kind, sig.source_resistance, sig.capacitance, sig.shunt_resistance,
                        sig.leakage_resistance))
        load = d.loads.get(net)
        if load is not None:
            key.append((number, "load", load.resistance, load.capacitance, numbers.get(load.reference or "")))
        owner = circuit.opamp_outputs.get(net)
        if owner is not None and owner not in seen:
            res = done.get(owner)
            key.append((number, "driven", None if res is None else res.output_resistance))
        for ref, pin in circuit.net_pins.get(net, ()):
            if ref not in seen:
                comp = d.components[ref]
                key.append((number, comp.kind, pin, _value_key(comp),
                            tuple(numbers.get(n, -2) for _, n in sorted(comp.pins.items()))))
    return tuple(key)


def _value_key(comp) -> tuple:  # noqa: ANN001 - any component model
    kind = comp.kind
    if kind in ("resistor", "capacitor", "vsource"):
        return (comp.value,)
    if kind == "inductor":
        return (comp.value, comp.series_resistance)
    if kind == "ntc":
        return (comp.r25, comp.beta, comp.steinhart_hart, comp.points, tuple(comp.temperature))
    if kind in ("rtd", "bridge_arm"):
        return tuple(v for k, v in comp.model_dump().items() if k not in ("pins", "description", "waive"))
    if kind == "opamp":
        return (comp.part,)
    if kind == "signal_source":
        return (comp.source_resistance,)
    return ()


def _solve_unit(circuit: Circuit, stages: list[Stage], netlist: Netlist, inputs: list[_Input],
                notes: list[str], cache: dict | None, corners: Corners, sources: _Sources,
                ntcs: tuple[str, ...], loop_netlist: LoopCircuit) -> UnitResult:
    key = numeric_key(netlist) if cache is not None else None
    system = unit_system(netlist, key, cache)
    forms, varying, grid = _unit_sources(circuit, netlist, system, corners, sources, ntcs)
    dc = solve_forms(system, forms, varying, grid, memo=None if key is None else (cache, key))
    col = {name: j for j, name in enumerate(dc.sources)}
    mid = dc.x.shape[0] // 2
    x_unit = dc.x[mid][:, [col[i.branch] for i in inputs]] if inputs else np.zeros((system.size, 0))
    per_input = [dc.x[:, :, col[i.branch]] for i in inputs]
    wanted = {system.branch_index(netlist.opamps[s.opamp].loop_element) for s in stages}
    wanted |= {system.index[_node(circuit, n)] for s in stages for n in s.nets if _node(circuit, n) in system.index}
    lo, hi = dc.bounds(np.array(sorted(wanted), dtype=int))

    ac = shared(cache, key and ("ac", key, *((_excitation_key(system, i.branch), i.source.ac_amplitude,
                                              i.source.f_max, i.source.kind) for i in inputs)),
                lambda: _ac_amplitudes(system, inputs, system.size))
    ac_amp, fmax = ac[0], ac[1]
    idx = system.node_index
    results = []
    currents: dict[str, SweptForm] = {}
    for s in stages:
        results.append(_stage_result(circuit, s, netlist, system, inputs, x_unit, per_input, lo, hi,
                                     ac, notes, cache, loop_netlist, corners, key))
        currents[s.opamp] = dc.form(system.branch_index(netlist.opamps[s.opamp].loop_element), -1.0)
    fixed = set(circuit.fixed)
    net_signals = []
    net_forms: dict[str, SweptForm] = {}
    for net in sorted(set().union(*(set(s.nets) for s in stages)) - fixed):
        node = _node(circuit, net)
        if node not in system.index:
            continue
        i = idx(node)
        net_forms[net] = dc.form(i)
        net_signals.append(NetSignal(net=net, dc_min=float(lo[i]), dc_max=float(hi[i]),
                                     ac_amplitude=float(ac_amp[i]), f_max=float(fmax[i])))
    return UnitResult(tuple(results), tuple(net_signals), net_forms, currents)


def _unit_sources(circuit: Circuit, netlist: Netlist, system: MnaSystem, corners: Corners, sources: _Sources,
                  ntcs: tuple[str, ...]) -> tuple[dict[str, SweptForm], dict[str, np.ndarray], UnitGrid]:
    """The form of every independent source in the unit's netlist, the resistors that move over the unit's
    temperature grid (thermistors and divider Thevenin resistances), and that grid."""
    forms: dict[str, SweptForm] = dict(sources.forms)
    for e in netlist.elements:
        name = e.name
        if name in forms or name in sources.dividers:
            continue
        if isinstance(e, OpAmpCore):
            ref = name.split("#", 1)[0]
            op = netlist.opamps.get(ref)
            forms.update(_offsets(circuit, corners, ref) if op is not None else {})
        elif isinstance(e, (VoltageSource, CurrentSource)):
            forms[name] = _element_form(circuit, corners, e)
    present = {e.name for e in netlist.elements}
    for name in [n for n in forms if n not in present]:
        del forms[name]
    swept = {t for f in forms.values() for t in f.swept}
    swept |= {corners.key(t) for t in ntcs if corners.key(t) in corners.thermistors}
    swept |= {corners.key(r) for _, legs in sources.dividers.values() for r, _ in legs
              if corners.key(r) in corners.thermistors}
    grid = corners.grid(swept)
    varying: dict[str, np.ndarray] = {}
    for ref in ntcs:
        if corners.key(ref) in corners.thermistors:
            varying[ref] = corners.ntc_resistances(ref, grid)
    for branch, (series, legs) in sources.dividers.items():
        rth, form = corners.divider_form(legs, grid)
        varying[series] = rth
        forms[branch] = form if form is not None else constant_form(0.0)
    return forms, varying, grid


def _offsets(circuit: Circuit, corners: Corners, ref: str) -> dict[str, SweptForm]:
    model = circuit.loaded.parts.get(circuit.loaded.design.components[ref].part)  # type: ignore[union-attr]
    if model is None:
        return {}
    return corners.offset_forms(ref, model.value("offset_voltage"), model.value("bias_current"),
                                model.value("offset_current"))


def _element_form(circuit: Circuit, corners: Corners, e: VoltageSource | CurrentSource) -> SweptForm:
    """The form of a source the netlist made from the design: a rail, a declared signal or a signal source."""
    name = e.name
    d = circuit.loaded.design
    if name.endswith("#rail"):
        form = corners.fixed_form(name[:-5])
        if form is not None:
            return form
    elif name.endswith("#signal") and name[:-7] in d.signals:
        return corners.signal_form(name[:-7])
    elif name in d.components and d.components[name].kind == "signal_source":
        return corners.source_form(name)
    return constant_form(float(e.dc))


AcResult = tuple[np.ndarray, np.ndarray, dict[int, np.ndarray], dict[int, np.ndarray]]


def _ac_amplitudes(system: MnaSystem, inputs: list[_Input], n: int) -> AcResult:
    """AC amplitude (sum over inputs of amplitude × largest |H| over the input's band), highest frequency,
    each AC input's complex unit solution in the middle of its band, and each band-limited input's largest |H|."""
    amp = np.zeros(n)
    fmax = np.zeros(n)
    mid: dict[int, np.ndarray] = {}
    peak: dict[int, np.ndarray] = {}
    active = [(j, i) for j, i in enumerate(inputs) if i.source.ac_amplitude > 0 or i.source.f_max > 0]
    if not active:
        return amp, fmax, mid, peak
    freqs, owners = [], []
    for j, inp in active:
        band = _band(inp)
        for f in band:
            freqs.append(f)
            owners.append(j)
    f = np.asarray(freqs)
    y = system.admittance(f)
    rhs = np.zeros((f.size, n, 1), dtype=complex)
    for row, j in enumerate(owners):
        rhs[row, :, 0] = unit_excitation(system, inputs[j].branch)
    solved = np.linalg.solve(y, rhs)[..., 0]
    xs = np.abs(solved)
    for j, inp in active:
        rows = [r for r, o in enumerate(owners) if o == j]
        if inp.source.ac_amplitude > 0 or inp.source.kind == "charge":  # a charge amplifier's sign comes from it
            mid[j] = solved[rows[len(rows) // 2]]
        h = xs[rows].max(axis=0)
        peak[j] = h
        amp += inp.source.ac_amplitude * h
        fmax = np.where(h > 1e-12, np.maximum(fmax, inp.source.f_max), fmax)
    return amp, fmax, mid, peak


def unit_excitation(system: MnaSystem, name: str) -> np.ndarray:
    """Right-hand side of one unit of an independent source: 1 V of a voltage source, 1 A of a current source."""
    e = system.netlist.element(name)
    b = np.zeros(system.size)
    if isinstance(e, CurrentSource):
        for node, sign in ((e.pos, -1.0), (e.neg, 1.0)):
            i = system.node_index(node)
            if i >= 0:
                b[i] += sign
    else:
        b[system.branch_index(name)] = 1.0
    return b


def _band(inp: _Input) -> list[float]:
    fhi = inp.source.f_max
    if fhi <= 0:
        return [CHARGE_PROBE_HZ] if inp.source.kind == "charge" else [0.0]
    flo = fhi / 100.0
    return [flo, math.sqrt(flo * fhi), fhi]


def _stage_result(circuit: Circuit, s: Stage, netlist: Netlist, system: MnaSystem, inputs: list[_Input],
                  x_unit: np.ndarray, per_input: list[np.ndarray], lo: np.ndarray,
                  hi: np.ndarray, ac: AcResult, notes: list[str], cache: dict | None = None,
                  loop_netlist: LoopCircuit | None = None, corners: Corners | None = None,
                  key: tuple | None = None) -> StageResult:
    """Fill one op-amp's StageResult from the unit's DC solutions, AC amplitudes and its own loop gain."""
    ac_amp, fmax, ac_mid, ac_peak = ac
    corners = corners or Corners(circuit)
    idx = system.node_index
    out = idx(_node(circuit, s.out))
    inp_i = idx(_node(circuit, s.in_plus))
    op = netlist.opamps[s.opamp]
    reasons = list(notes)
    vp, vm, rail_notes = _rails(circuit, s)
    reasons += rail_notes
    buf = system.branch_index(op.loop_element)

    stage_inputs = []
    best = None
    for j, inp in enumerate(inputs):
        xs = per_input[j]
        src_node = _node(circuit, inp.source.net)
        a = idx(src_node)
        vatt = xs[:, a] if a >= 0 else np.ones(len(xs))
        g_nom = float(x_unit[out, j]) if out >= 0 else 0.0
        v_nom = float(x_unit[a, j]) if a >= 0 else 1.0
        unit = {"current": "V/A", "charge": "V/C"}.get(inp.source.kind, "V/V")
        if inp.source.kind == "current":
            # the impedance the sensor sees, and the share of its current its own shunt keeps from the stage
            rin = abs(v_nom)
            err = np.abs(vatt) / inp.source.r_max if math.isfinite(inp.source.r_max) else np.zeros(len(xs))
            ideal = g_nom
        else:
            err = 1.0 - vatt
            ideal = g_nom / v_nom if v_nom != 0 else g_nom
            i_nom = float(-x_unit[system.branch_index(inp.branch), j])
            rin = abs(v_nom / i_nom) if i_nom != 0 else math.inf
        band = float(ac_peak[j][out]) if j in ac_peak and out >= 0 else None
        if inp.source.kind == "charge":
            c_sensor = float(circuit.loaded.design.signals[inp.source.net].capacitance)
            # signed by the response mid-band: a charge amplifier's −1/Cf is an inversion
            sign = -1.0 if j in ac_mid and out >= 0 and ac_mid[j][out].real < 0 else 1.0
            g_nom = sign * band / c_sensor if band is not None and c_sensor else 0.0
            band, ideal, err = (abs(g_nom) if inp.source.f_max > 0 else None), g_nom, np.zeros(len(xs))
        via = _series_path(circuit, inp.source.net, s.in_plus if inp.pin == "in+" else s.in_minus,
                           frozenset(s.refs) - frozenset(inp.source.refs), s.out)
        stage_inputs.append(StageInput(
            net=inp.source.net, pin=inp.pin, source=inp.source, via=via, gain=g_nom + 0.0,
            ideal_gain=float(ideal) + 0.0, band_gain=band, gain_unit=unit,
            input_resistance=float(rin), loading_error_min=float(err.min()), loading_error_max=float(err.max()),
        ))
        if inp.source.kind not in ("rail", "vsource") and (best is None or abs(g_nom) > best[0]):
            best = (abs(g_nom), j)

    iout_lo, iout_hi = -hi[buf], -lo[buf]
    vout_min, vout_max = float(lo[out]), float(hi[out])
    vac = float(ac_amp[out])
    f_max = float(fmax[out])
    load_r = None
    if best is not None and best[0] > 1e-9 and abs(x_unit[buf, best[1]]) > 0:
        load_r = float(abs(x_unit[out, best[1]] / x_unit[buf, best[1]]))
    elif ac_mid:
        j = max(ac_mid, key=lambda k: abs(ac_mid[k][out]))
        if abs(ac_mid[j][buf]) > 0:
            load_r = float(abs(ac_mid[j][out] / ac_mid[j][buf]))
    load_c = _load_capacitance(circuit, s)
    iout_peak = float(max(abs(iout_lo), abs(iout_hi)))
    if vac > 0:
        iout_peak += vac / load_r if load_r else 0.0
        iout_peak += 2 * math.pi * f_max * load_c * vac

    loop = _loop_numbers(loop_netlist or LoopCircuit.plain(netlist), s.opamp, f_max, cache)
    fb, t_dc, fc, pm, gm, ng_dc, ng_fc, ng_hf, t_fmax = loop.numbers
    reasons += loop.reasons

    rout = None
    if out >= 0 and fb == "negative":
        try:
            rout = shared(cache, key and ("rout", key, out), lambda: _output_resistance(system, out))
        except np.linalg.LinAlgError:
            reasons.append("closed-loop output resistance: singular circuit")

    floating = [pin for pin, net in (("in+", s.in_plus), ("in-", s.in_minus)) if not corners.dc_path(net)]
    for pin in floating:
        reasons.append(f"{pin} has no DC path to a defined voltage with capacitors open (DC ranges not evaluated)")
    vpk = vac if vac > 0 else 0.5 * (vout_max - vout_min)
    open_loop = fb != "negative" or bool(floating)
    if open_loop:
        vpk = vac
    vcm = _common_mode(circuit, s, inp_i, lo, hi, bool(floating))
    part = circuit.loaded.design.components[s.opamp].part  # type: ignore[union-attr]
    cf = None
    if s.topology == "transimpedance" and fb == "negative" and pm is not None and pm < TIA_TARGET_PM_DEG - 5.0:
        cf = _capacitor_for_margin(loop_netlist.netlist if loop_netlist else netlist, s, _node(circuit, s.out),
                                   _node(circuit, s.in_minus))
    return StageResult(
        opamp=s.opamp, part=part, topology=s.topology, refs=s.refs, in_plus=s.in_plus, in_minus=s.in_minus,
        out=s.out, group=s.group, inputs=tuple(stage_inputs), feedback_capacitance_for_margin=cf,
        noise_gain_dc=ng_dc, noise_gain_at_crossover=ng_fc, noise_gain_hf=ng_hf,
        output_resistance=rout, vcm_min=vcm[0], vcm_max=vcm[1], vout_min=None if open_loop else vout_min,
        vout_max=None if open_loop else vout_max, iout_peak=None if open_loop else iout_peak,
        vout_ac_peak=vac, f_max=f_max, load_resistance=load_r, load_capacitance=load_c,
        feedback=fb, loop_gain_dc=t_dc, crossover_hz=fc, phase_margin_deg=pm, gain_margin_db=gm,
        loop_gain_at_fmax=t_fmax, required_slew_rate=float(2 * math.pi * f_max * vpk),
        rail_plus=vp, rail_minus=vm, assumed=tuple(op.assumed), estimated="second_pole" in op.assumed,
        not_evaluated=tuple(reasons),
    )


def _output_resistance(system: MnaSystem, out: int) -> float:
    """|v(out)| for 1 A into the output node with every source zeroed: the closed-loop output resistance."""
    rhs = np.zeros(system.size)
    rhs[out] = 1.0
    return float(abs(np.linalg.solve(system.g, rhs)[out]))


def _excitation_key(system: MnaSystem, name: str) -> tuple[int, ...]:
    """Where :func:`unit_excitation` puts a source's unit, by row: its branch, or a current source's two nodes."""
    e = system.netlist.element(name)
    if isinstance(e, CurrentSource):
        return (system.node_index(e.pos), system.node_index(e.neg))
    return (system.branch_index(name),)


def _common_mode(circuit: Circuit, s: Stage, inp_i: int, lo: np.ndarray, hi: np.ndarray,
                 floating: bool) -> tuple[float | None, float | None]:
    """(lowest, highest) voltage on in+: the solved node range, or the fixed net's own range when in+ sits on ground
    or a rail (it is no node of the solve then)."""
    if floating:
        return None, None
    if inp_i >= 0:
        return float(lo[inp_i]), float(hi[inp_i])
    rng = rail_range(circuit, s.in_plus)
    return (float(rng[0]), float(rng[1])) if rng is not None else (None, None)


TIA_TARGET_PM_DEG = 65.0


def _capacitor_for_margin(netlist: Netlist, s: Stage, out: str, in_minus: str) -> float | None:
    """The least capacitance across the feedback (output to in-) that gives a transimpedance stage 65° of phase
    margin: a sweep of 1 fF..1 µF at three points a decade finds the first value that does (the margin falls again
    for large values), then bisection in log C on the exact loop gain (None when no value does)."""
    def margin(c: float) -> float:
        try:
            lg = loop_gain(netlist.with_elements(Capacitor(f"{s.opamp}#cf", out, in_minus, c)), s.opamp)
        except (SingularCircuitError, ValueError):
            return -math.inf
        pms = lg.phase_margins_deg
        return min(pms) if pms else (180.0 if lg.sign == "negative" else -math.inf)

    steps = np.log(np.logspace(-15, -6, 28))
    above = next((k for k, x in enumerate(steps) if margin(math.exp(x)) >= TIA_TARGET_PM_DEG), None)
    if above is None:
        return None
    if above == 0:
        return float(math.exp(steps[0]))
    lo, hi = float(steps[above - 1]), float(steps[above])
    for _ in range(25):
        mid = 0.5 * (lo + hi)
        if margin(math.exp(mid)) >= TIA_TARGET_PM_DEG:
            hi = mid
        else:
            lo = mid
    return float(math.exp(hi))


def _series_path(circuit: Circuit, start: str, goal: str, refs: frozenset[str], out: str) -> tuple[str, ...]:
    """Parts along the shortest path of stage parts from a source net to an op-amp pin, in order from the source.

    The path does not pass through fixed nets, signal nets or the op-amp's output; empty when the source is on
    the pin's own net or no such path exists.
    """
    if start == goal:
        return ()
    around: dict[str, list[str]] = {}
    for ref in sorted(refs):
        for net in circuit.pins[ref].values():
            around.setdefault(net, []).append(ref)
    prev: dict[str, tuple[str, str] | None] = {start: None}
    queue = [start]
    for net in queue:
        if net != start and (net in circuit.fixed or net in circuit.signal_nets or net == out):
            continue
        for ref in around.get(net, ()):
            for nxt in circuit.pins[ref].values():
                if nxt not in prev:
                    prev[nxt] = (net, ref)
                    if nxt == goal:
                        path = []
                        step = prev[nxt]
                        while step is not None:
                            path.append(step[1])
                            step = prev[step[0]]
                        return tuple(reversed(path))
                    queue.append(nxt)
    return ()


@dataclass(frozen=True)
class _Loop:
    """Loop-gain numbers of one op-amp: sign, T(0), fc, PM, GM, NG at DC/fc/HF, |T(f_max)|; and the notes."""

    numbers: tuple
    reasons: tuple[str, ...]


def _loop_numbers(loop_circuit: LoopCircuit, ref: str, f_max: float, cache: dict | None) -> _Loop:
    """Return-ratio numbers of op-amp ``ref``, memoised on the local circuit's shape and values.

    Stages repeated channel after channel have the same local circuit up to names; the loop gain depends only on
    the elements (sources zeroed), so one solve serves them all. A unit coupled to its neighbours is first looked
    up by its design-level signature, so a repeated channel does not even build its coupled circuit.
    """
    key = sig_key = None
    if cache is not None:
        sig = loop_circuit.signature
        if sig is not None:
            sig_key = ("coupled", sig, ref in loop_circuit.unit and loop_circuit.unit.index(ref), f_max)
            if sig_key in cache:
                return cache[sig_key]
    netlist = loop_circuit.netlist
    if cache is not None:
        key = (_circuit_key(netlist, netlist.opamps[ref].loop_element), f_max)
        if key in cache:
            if sig_key is not None:
                cache[sig_key] = cache[key]
            return cache[key]
    op = netlist.opamps[ref]
    fb: str = "not-evaluated"  # until the loop gain is solved: a failed solve says nothing about the feedback
    t_dc = fc = pm = gm = t_fmax = ng_dc = ng_fc = ng_hf = None
    reasons: list[str] = []
    try:
        lg = loop_gain(netlist, ref)
        fb = lg.sign
        t_dc = lg.t_dc
        if fb == "none":
            reasons.append("no DC feedback: the loop gain at DC is negligible (output range not evaluated)")
        else:
            fc, pm, gm = lg.crossover_hz, lg.phase_margin_deg, lg.gain_margin_db
            if lg.phase_margins_deg:
                # several crossings (a notch, a filter's feedback): the stage is only as stable as the worst one
                worst = min(range(len(lg.phase_margins_deg)), key=lg.phase_margins_deg.__getitem__)
                fc, pm = lg.crossovers_hz[worst], lg.phase_margins_deg[worst]
            ng_dc = lg.noise_gain_dc
            ng_dc = abs(ng_dc) if ng_dc is not None else None
            f_hf = HF_FACTOR * max(op.open_loop_gain * op.pole1_hz, op.pole2_hz)
            probe = np.array([f_hf, fc or f_hf, f_max if f_max > 0 else f_hf])
            t_probe = lg.at(probe)
            ng = np.abs(op.open_loop_response(probe) / t_probe)
            ng_hf = float(ng[0])
            ng_fc = float(ng[1]) if fc else None
            if f_max > 0:
                t_fmax = float(abs(t_probe[2]))
            if fc is None:
                reasons.append("no crossover: |T| never falls through 1 on the grid")
    except SingularCircuitError as exc:
        reasons.append(f"loop gain: singular circuit: {exc}")
    result = _Loop((fb, _f(t_dc), _f(fc), _f(pm), _f(gm), _f(ng_dc), _f(ng_fc), _f(ng_hf), _f(t_fmax)),
                   tuple(reasons))
    if key is not None:
        cache[key] = result
    if sig_key is not None:
        cache[sig_key] = result
    return result


def _circuit_key(netlist: Netlist, probed: str) -> tuple:
    """The netlist with names replaced by first-seen node numbers, source values dropped, and the probed element
    marked: equal keys mean the same circuit, so the same loop gain."""
    numbers: dict[str, int] = {GROUND: -1}
    key: list[tuple] = []
    for e in netlist.elements:
        nodes = tuple(numbers.setdefault(n, len(numbers)) for n in element_nodes(e))
        if isinstance(e, (Resistor, Capacitor)):
            key.append((type(e).__name__, nodes, e.value))
        elif isinstance(e, Inductor):
            key.append(("inductor", nodes, e.value, e.series_resistance))
        elif isinstance(e, OpAmpCore):
            key.append(("core", nodes, e.a0, e.fp1, e.fp2, e.name == probed))
        elif isinstance(e, Vcvs):
            key.append(("vcvs", nodes, e.gain, e.name == probed))
        elif isinstance(e, Vccs):
            key.append(("vccs", nodes, e.gm))
        else:
            key.append((type(e).__name__, nodes))
    return tuple(key)


def _f(v: float | None) -> float | None:
    return None if v is None or not math.isfinite(v) else float(v)


def _load_capacitance(circuit: Circuit, s: Stage) -> float:
    """Capacitance from the output net to fixed nets, plus the declared load capacitance and other op-amp inputs."""
    total = 0.0
    d = circuit.loaded.design
    for ref, _pin in circuit.net_pins.get(s.out, ()):
        kind = circuit.kinds[ref]
        if kind == "capacitor":
            far = circuit.other_pin_net(ref, s.out)
            if far is not None and far in circuit.fixed:
                total += float(d.components[ref].value)
        elif kind == "opamp" and ref != s.opamp:
            model = circuit.loaded.parts.get(d.components[ref].part)
            if model is not None:
                total += model.value("input_capacitance_cm")
    load = d.loads.get(s.out)
    if load is not None and load.capacitance:
        total += float(load.capacitance)
    return float(total)
