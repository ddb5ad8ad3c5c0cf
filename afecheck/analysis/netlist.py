"""A flat netlist of primitive elements (R, C, V, I, VCVS, VCCS) and its construction from a loaded design.

Nodes are strings; ground is ``"0"``. Element and internal node names made here contain ``#`` (for
example ``U1#gain``, ``IN#signal``) so they never clash with the design's nets or reference designators.
Sign conventions follow SPICE: a voltage source holds ``v(pos) - v(neg) = value`` and its branch current
flows from ``pos`` through the source to ``neg``; a current source drives its current from ``pos`` through
the source to ``neg`` (it pulls current out of ``pos``); a VCCS does the same with ``gm * (v(cpos) - v(cneg))``.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING, Union

import numpy as np

from afecheck.errors import InputError, Problem
from afecheck.sensors.resistive import SWEPT_KINDS, sweep_range
from afecheck.sensors.resistive import resistance as swept_resistance

if TYPE_CHECKING:
    from afecheck.analysis.macromodel import MacroModel

GROUND = "0"
T25_K = 298.15
ZERO_C_K = 273.15


@dataclass(frozen=True)
class Resistor:
    """Resistor of ``value`` ohms between ``a`` and ``b``."""

    name: str
    a: str
    b: str
    value: float


@dataclass(frozen=True)
class Capacitor:
    """Capacitor of ``value`` farads between ``a`` and ``b`` (open at DC)."""

    name: str
    a: str
    b: str
    value: float


@dataclass(frozen=True)
class Inductor:
    """Inductor of ``value`` henries between ``a`` and ``b`` in series with ``series_resistance`` ohms: a branch
    whose current flows from ``a`` to ``b`` with v(a) − v(b) = (R + jωL)·i (a short at DC when R is 0)."""

    name: str
    a: str
    b: str
    value: float
    series_resistance: float = 0.0


@dataclass(frozen=True)
class VoltageSource:
    """Independent voltage source: ``v(pos) - v(neg) = dc`` at DC and ``ac`` (complex phasor) in AC analysis."""

    name: str
    pos: str
    neg: str
    dc: float = 0.0
    ac: complex = 0.0


@dataclass(frozen=True)
class CurrentSource:
    """Independent current source: ``dc`` / ``ac`` amperes flowing from ``pos`` through the source to ``neg``."""

    name: str
    pos: str
    neg: str
    dc: float = 0.0
    ac: complex = 0.0


@dataclass(frozen=True)
class Vcvs:
    """Voltage-controlled voltage source: ``v(pos) - v(neg) = gain * (v(cpos) - v(cneg))``."""

    name: str
    pos: str
    neg: str
    cpos: str
    cneg: str
    gain: float


@dataclass(frozen=True)
class Vccs:
    """Voltage-controlled current source: ``gm * (v(cpos) - v(cneg))`` from ``pos`` through the source to ``neg``."""

    name: str
    pos: str
    neg: str
    cpos: str
    cneg: str
    gm: float


@dataclass(frozen=True)
class OpAmpCore:
    """Op-amp gain block: ``v(pos) − v(neg) = A(jf)·(v(cpos) − v(cneg) + vos)``, A = a0/((1 + jf/fp1)(1 + jf/fp2)).

    The same thing as Vos in series with the + input, a VCVS of gain a0 and two RC low-passes each buffered by
    a unity VCVS (that chain is what the SPICE export writes); kept as one element so that a stage's nodal
    matrix stays small. ``fp2`` may be ``math.inf`` for a single-pole amplifier.
    """

    name: str
    pos: str
    neg: str
    cpos: str
    cneg: str
    a0: float
    fp1: float
    fp2: float = math.inf
    vos: float = 0.0

    def gain(self, freqs: np.ndarray | Sequence[float]) -> np.ndarray:
        """A(jf) at every frequency (Hz), complex."""
        f = np.asarray(freqs, dtype=float)
        return self.a0 / ((1 + 1j * f / self.fp1) * (1 + 1j * f / self.fp2))


Element = Union[Resistor, Capacitor, VoltageSource, CurrentSource, Vcvs, Vccs, OpAmpCore, Inductor]


@dataclass(frozen=True)
class OpAmpInstance:
    """Where an op-amp's macromodel sits in a netlist: its pins, the element broken for loop gain, its numbers."""

    refdes: str
    in_plus: str
    in_minus: str
    out: str
    loop_element: str
    open_loop_gain: float
    pole1_hz: float
    pole2_hz: float
    output_resistance: float
    assumed: tuple[str, ...] = ()
    part: str = ""
    """Part model name (for the SPICE export's subcircuit)."""
    supplies: tuple[str, str] = (GROUND, GROUND)
    """Nodes of the v+ and v- pins (the linear model draws nothing from them; the SPICE export wires them)."""
    template: tuple[Element, ...] = field(default=(), compare=False, repr=False)
    """The same macromodel on nodes ``in+ in- out`` (ground ``0``): the body of the export's ``.subckt``."""

    def open_loop_response(self, freqs: np.ndarray | Sequence[float]) -> np.ndarray:
        """A(jf) = A0 / ((1 + jf/fp1)(1 + jf/fp2)) as a complex numpy array (no output resistance)."""
        f = np.asarray(freqs, dtype=float)
        return self.open_loop_gain / ((1 + 1j * f / self.pole1_hz) * (1 + 1j * f / self.pole2_hz))

    def gbw_hz(self) -> float:
        """Gain-bandwidth product A0·fp1."""
        return self.open_loop_gain * self.pole1_hz


@dataclass(frozen=True)
class Netlist:
    """Elements in a fixed order, plus the op-amps whose macromodels they contain (keyed by refdes)."""

    elements: tuple[Element, ...]
    opamps: Mapping[str, OpAmpInstance] = field(default_factory=dict)

    def __post_init__(self) -> None:
        names = [e.name for e in self.elements]
        if len(set(names)) != len(names):
            dup = sorted({n for n in names if names.count(n) > 1})
            raise ValueError(f"duplicate element names in netlist: {', '.join(dup)}")

    def element(self, name: str) -> Element:
        """The element called ``name`` (KeyError if absent)."""
        for e in self.elements:
            if e.name == name:
                return e
        raise KeyError(name)

    def nodes(self) -> tuple[str, ...]:
        """Every non-ground node in first-seen order."""
        seen: dict[str, None] = {}
        for e in self.elements:
            for n in element_nodes(e):
                if n != GROUND:
                    seen.setdefault(n, None)
        return tuple(seen)

    def with_elements(self, *extra: Element) -> Netlist:
        """A copy with ``extra`` elements appended."""
        return replace(self, elements=self.elements + tuple(extra))

    def without(self, *names: str) -> Netlist:
        """A copy without the named elements."""
        drop = set(names)
        return replace(self, elements=tuple(e for e in self.elements if e.name not in drop))

    def replaced(self, element: Element) -> Netlist:
        """A copy with the element of the same name replaced by ``element``."""
        return replace(self, elements=tuple(element if e.name == element.name else e for e in self.elements))

    def assumed(self) -> dict[str, tuple[str, ...]]:
        """Per op-amp, the macromodel parameters that came from generic defaults."""
        return {ref: op.assumed for ref, op in self.opamps.items() if op.assumed}


def element_nodes(e: Element) -> tuple[str, ...]:
    """The nodes an element touches (controlling nodes included)."""
    if isinstance(e, (Resistor, Capacitor, Inductor)):
        return (e.a, e.b)
    if isinstance(e, (VoltageSource, CurrentSource)):
        return (e.pos, e.neg)
    return (e.pos, e.neg, e.cpos, e.cneg)


@dataclass(frozen=True)
class NetlistOptions:
    """How a design becomes a netlist.

    ``temperature_c``: temperature of every NTC (None: the middle of each NTC's declared range);
    ``ntc_temperature_c`` overrides it per refdes. ``signal_point`` picks the DC value of each declared
    range (signals and signal sources) as ``lo + signal_point * (hi - lo)``; ``signal_dc`` overrides it per
    net (for ``signals``) or refdes (for ``signal_source`` components). ``signal_ac`` sets the AC magnitude of
    every signal (None: the declared ``ac_amplitude``). ``include_offsets`` adds Vos and the bias currents.
    """

    temperature_c: float | None = None
    ntc_temperature_c: Mapping[str, float] = field(default_factory=dict)
    signal_point: float = 0.5
    signal_dc: Mapping[str, float] = field(default_factory=dict)
    signal_ac: float | None = None
    include_offsets: bool = True
    include_rails: bool = True
    include_signals: bool = True
    include_loads: bool = True


def _sensor_elements(net: str, n: str, sig, dc: float, ac: complex) -> list[Element]:  # noqa: ANN001
    """A current or charge signal's model: a current from ground into the net with the sensor's capacitance and
    shunt resistance beside it; or, for a charge, charge/capacitance volts behind the sensor capacitance (the
    Thevenin form of jωq beside C) with the leakage resistance across the sensor."""
    name = f"{net}#signal"
    els: list[Element] = []
    if sig.kind == "current":
        els.append(CurrentSource(name, GROUND, n, dc=dc, ac=ac))
        if sig.capacitance > 0:
            els.append(Capacitor(f"{name}.c", n, GROUND, float(sig.capacitance)))
        if sig.shunt_resistance is not None:
            els.append(Resistor(f"{name}.rsh", n, GROUND, float(sig.shunt_resistance)))
        return els
    inner = f"{name}.s"
    els += [VoltageSource(name, inner, GROUND, dc=0.0, ac=ac), Capacitor(f"{name}.c", inner, n, float(sig.capacitance))]
    if sig.leakage_resistance is not None:
        els.append(Resistor(f"{name}.rl", n, GROUND, float(sig.leakage_resistance)))
    return els


def ntc_resistance(r25: float, beta: float, temperature_c: float) -> float:
    """Beta model R(T) = R25·exp(B·(1/T − 1/298.15 K)) (IEC 60539 B-value definition)."""
    t_k = temperature_c + ZERO_C_K
    return float(r25 * math.exp(beta * (1.0 / t_k - 1.0 / T25_K)))


class _VoltageTree:
    """Union-find over nodes joined by ideal voltage sources, to refuse sources that would close a loop."""

    def __init__(self) -> None:
        self.parent: dict[str, str] = {}

    def find(self, n: str) -> str:
        self.parent.setdefault(n, n)
        while self.parent[n] != n:
            self.parent[n] = self.parent[self.parent[n]]
            n = self.parent[n]
        return n

    def joined(self, a: str, b: str) -> bool:
        return self.find(a) == self.find(b)

    def join(self, a: str, b: str) -> None:
        self.parent[self.find(a)] = self.find(b)


def placed(template: Sequence[Element], ref: str, pins: Mapping[str, str]) -> list[Element]:
    """An op-amp's macromodel elements made from its part's template (built on nodes ``in+ in- out``, names
    ``#...``): each element renamed ``ref#...`` and put on the op-amp's nodes, values untouched (the numbers a
    fresh build gives, without deriving every parameter again for each of a design's op-amps)."""
    def at(node: str) -> str:
        if node in pins:
            return pins[node]
        return ref + node if node.startswith("#") else node

    out: list[Element] = []
    for e in template:
        t = type(e)
        if t is Resistor or t is Capacitor:
            out.append(t(ref + e.name, at(e.a), at(e.b), e.value))
        elif t is OpAmpCore:
            out.append(OpAmpCore(ref + e.name, at(e.pos), at(e.neg), at(e.cpos), at(e.cneg), e.a0, e.fp1, e.fp2,
                                 e.vos))
        elif t is CurrentSource:
            out.append(CurrentSource(ref + e.name, at(e.pos), at(e.neg), dc=e.dc, ac=e.ac))
        else:
            raise TypeError(f"no placement for a {t.__name__} in a macromodel template")
    return out


def netlist_from_design(
    loaded,
    components: Iterable[str] | None = None,
    options: NetlistOptions | None = None,
) -> Netlist:
    """Flatten a LoadedDesign (or the listed ``components`` of it) into primitive elements.

    Rails, declared signals and loads are added for the nets the chosen components touch. A rail or
    signal whose ideal source would close a loop of voltage sources (for example a rail net already held
    by a ``vsource`` component) is left out, since the component already defines that net.
    """
    from afecheck.analysis.macromodel import opamp_macromodel

    opts = options or NetlistOptions()
    design = loaded.design
    gnd = design.ground

    def node(net: str) -> str:
        return GROUND if net == gnd else net

    refs = list(design.components) if components is None else list(components)
    missing = [r for r in refs if r not in design.components]
    if missing:
        raise InputError([Problem(loaded.file, None, None, "components", f"no component {r!r} in the design")
                          for r in missing])
    elements: list[Element] = []
    opamps: dict[str, OpAmpInstance] = {}
    vtree = _VoltageTree()
    # the export's subcircuit bodies, one per part: kept on the loaded design, so per-stage netlists share them
    templates: dict[tuple[str, bool], MacroModel] = loaded.__dict__.setdefault("_macromodel_templates", {})
    touched: dict[str, None] = {}
    problems: list[Problem] = []

    def pin(ref: str, name: str) -> str:
        comp = design.components[ref]
        net = comp.pins.get(name)
        if net is None:
            file, line, col = loaded.position("components", ref, "pins")
            problems.append(Problem(file, line, col, f"components.{ref}.pins", f"pin {name!r} is not connected"))
            return f"{ref}#unconnected.{name}"
        touched.setdefault(net, None)
        return node(net)

    def dc_of(key: str, lo: float, hi: float) -> float:
        if key in opts.signal_dc:
            return float(opts.signal_dc[key])
        return float(lo + opts.signal_point * (hi - lo))

    def ac_of(declared: float) -> float:
        return float(declared if opts.signal_ac is None else opts.signal_ac)

    for ref in refs:
        comp = design.components[ref]
        kind = comp.kind
        if kind == "resistor":
            elements.append(Resistor(ref, pin(ref, "1"), pin(ref, "2"), float(comp.value)))
        elif kind == "capacitor":
            elements.append(Capacitor(ref, pin(ref, "1"), pin(ref, "2"), float(comp.value)))
        elif kind == "inductor":
            elements.append(Inductor(ref, pin(ref, "1"), pin(ref, "2"), float(comp.value),
                                     float(comp.series_resistance)))
        elif kind in SWEPT_KINDS:
            t = opts.ntc_temperature_c.get(ref, opts.temperature_c if kind != "bridge_arm" else None)
            if t is None:
                t = 0.5 * sum(sweep_range(comp))
            try:
                r_t = float(swept_resistance(comp, t)[0])
            except (ZeroDivisionError, OverflowError, ValueError):
                r_t = math.nan
            if not (math.isfinite(r_t) and r_t > 0):
                file, line, col = loaded.position("components", ref, "temperature")
                problems.append(Problem(file, line, col, f"components.{ref}.temperature",
                                        f"the Beta model gives no finite resistance at {t:g} °C"))
                continue
            elements.append(Resistor(ref, pin(ref, "1"), pin(ref, "2"), r_t))
        elif kind == "vsource":
            p, n = pin(ref, "p"), pin(ref, "n")
            elements.append(VoltageSource(ref, p, n, dc=float(comp.value)))
            vtree.join(p, n)
        elif kind == "signal_source":
            p, n = pin(ref, "p"), pin(ref, "n")
            dc, ac = dc_of(ref, *comp.dc), ac_of(comp.ac_amplitude)
            if comp.source_resistance > 0:
                inner = f"{ref}#s"
                elements.append(VoltageSource(ref, inner, n, dc=dc, ac=ac))
                elements.append(Resistor(f"{ref}#rs", inner, p, float(comp.source_resistance)))
            else:
                elements.append(VoltageSource(ref, p, n, dc=dc, ac=ac))
                vtree.join(p, n)
        elif kind == "opamp":
            model = loaded.parts.get(comp.part)
            if model is None:
                file, line, col = loaded.position("components", ref, "part")
                problems.append(Problem(file, line, col, f"components.{ref}.part", f"unknown part {comp.part!r}"))
                continue
            key = (comp.part, opts.include_offsets)
            if key not in templates:
                templates[key] = opamp_macromodel("", "in+", "in-", "out", model, opts.include_offsets)
            template = templates[key]
            ip, im, out = pin(ref, "in+"), pin(ref, "in-"), pin(ref, "out")
            elements.extend(placed(template.elements, ref, {"in+": ip, "in-": im, "out": out}))
            supplies = tuple(node(comp.pins[p]) if p in comp.pins else GROUND for p in ("v+", "v-"))
            opamps[ref] = replace(template.instance, refdes=ref, in_plus=ip, in_minus=im, out=out,
                                  loop_element=f"{ref}{template.instance.loop_element}", part=comp.part,
                                  supplies=supplies, template=template.elements)
            for p in ("v+", "v-"):
                if p in comp.pins:
                    touched.setdefault(comp.pins[p], None)
        else:  # pragma: no cover - the schema admits no other kind
            raise InputError([Problem(loaded.file, None, None, f"components.{ref}", f"unsupported kind {kind!r}")])
    if problems:
        raise InputError(problems)

    if components is not None:
        for net in list(touched):
            load = design.loads.get(net)
            if load is not None and load.reference:
                touched.setdefault(load.reference, None)
    chosen = list(touched) if components is not None else None

    def section(entries: Mapping) -> list:
        """The entries of a design section for the chosen nets (all of them for a whole design), in order.

        Looked up per touched net, so a per-stage netlist costs nothing per unrelated net of a large design.
        """
        if chosen is None:
            return list(entries.items())
        return [(net, entries[net]) for net in chosen if net in entries]

    if opts.include_rails:
        for net, rail in section(design.rails):
            if rail.voltage is None or net == gnd or vtree.joined(node(net), GROUND):
                continue
            elements.append(VoltageSource(f"{net}#rail", node(net), GROUND, dc=float(rail.voltage)))
            vtree.join(node(net), GROUND)
    if opts.include_signals:
        for net, sig in section(design.signals):
            if net == gnd or (net in design.rails and vtree.joined(node(net), GROUND)):
                continue
            dc, ac = dc_of(net, *sig.dc_range), ac_of(sig.ac_value)
            if sig.kind != "voltage":
                elements.extend(_sensor_elements(net, node(net), sig, dc, ac))
            elif sig.source_resistance > 0:
                inner = f"{net}#signal.s"
                elements.append(VoltageSource(f"{net}#signal", inner, GROUND, dc=dc, ac=ac))
                elements.append(Resistor(f"{net}#signal.rs", inner, node(net), float(sig.source_resistance)))
            elif not vtree.joined(node(net), GROUND):
                elements.append(VoltageSource(f"{net}#signal", node(net), GROUND, dc=dc, ac=ac))
                vtree.join(node(net), GROUND)
    if opts.include_loads:
        for net, load in section(design.loads):
            if net == gnd:
                continue
            ref_node = node(load.reference) if load.reference else GROUND
            if load.resistance is not None:
                elements.append(Resistor(f"{net}#load.r", node(net), ref_node, float(load.resistance)))
            if load.capacitance:
                elements.append(Capacitor(f"{net}#load.c", node(net), ref_node, float(load.capacitance)))
    return Netlist(tuple(elements), opamps)
