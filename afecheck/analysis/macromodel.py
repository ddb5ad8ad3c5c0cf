"""The linear op-amp macromodel as primitive elements (RULES-REFERENCE 0.3).

Between the input pins: Rdiff and Cdiff; from each input to ground: Rcm and Ccm; Vos in series with in+;
bias currents Ib+ = Ib + Ios/2 and Ib- = Ib - Ios/2 flowing into the pins. The gain A0·(v+ − v−) then two poles
at fp1 = GBW/A0 and f2, then the open-loop output resistance Ro to the output pin. For the nodal solver the
gain, the poles and Vos are one element, the :class:`OpAmpCore` ``<ref>#gain`` (it keeps each stage's matrix
small); :func:`expand_core` writes it as standard elements (Vos source, VCVS A0, two RC low-passes of 1 Ω and
C = 1/(2π·1 Ω·fp) each buffered by a unity VCVS) for SPICE, and the tests check both forms agree.
Supply pins draw nothing here: swing, common-mode range and current limits are checked from the operating
point, not in the linear model.
The return ratio is taken at ``<ref>#gain`` (exact for a VCVS, RULES-REFERENCE 0.4).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from afecheck.analysis.netlist import (
    GROUND,
    Capacitor,
    CurrentSource,
    Element,
    Netlist,
    OpAmpCore,
    OpAmpInstance,
    Resistor,
    Vcvs,
    VoltageSource,
)
from afecheck.parts.model import OpAmpModel

POLE_RESISTANCE = 1.0
NO_POLE_HZ = 1e30  # a "pole" this high changes nothing below light frequencies; the expansion leaves it out


@dataclass(frozen=True)
class MacroModel:
    """The elements of one op-amp's macromodel and where it sits (pins, loop element, assumed parameters)."""

    elements: tuple[Element, ...]
    instance: OpAmpInstance


def opamp_macromodel(
    refdes: str,
    in_plus: str,
    in_minus: str,
    out: str,
    model: OpAmpModel,
    include_offsets: bool = True,
    ground: str = GROUND,
) -> MacroModel:
    """Build the macromodel of op-amp ``refdes`` on the given nodes from its part model.

    Parameters the part model leaves out take their generic defaults and are listed in
    ``instance.assumed`` (the second pole counts as assumed when estimated from the minimum stable gain).
    """
    assumed: list[str] = []

    def get(name: str) -> float:
        value, was_assumed = model.get(name)
        if was_assumed:
            assumed.append(name)
        return float(value)

    gbw = float(model.gbw)
    a0 = get("open_loop_gain")
    fp1 = gbw / a0
    fp2 = get("second_pole")
    ro = get("output_resistance")
    rdiff = get("input_resistance_diff")
    rcm = get("input_resistance_cm")
    cdiff = get("input_capacitance_diff")
    ccm = get("input_capacitance_cm")
    n = f"{refdes}#"
    els: list[Element] = [
        Resistor(n + "rdiff", in_plus, in_minus, rdiff),
        Resistor(n + "rcm+", in_plus, ground, rcm),
        Resistor(n + "rcm-", in_minus, ground, rcm),
    ]
    if cdiff > 0:
        els.append(Capacitor(n + "cdiff", in_plus, in_minus, cdiff))
    if ccm > 0:
        els.append(Capacitor(n + "ccm+", in_plus, ground, ccm))
        els.append(Capacitor(n + "ccm-", in_minus, ground, ccm))
    vos = 0.0
    if include_offsets:
        ib = get("bias_current")
        ios = get("offset_current")
        vos = get("offset_voltage")
        els += [
            CurrentSource(n + "ib+", in_plus, ground, dc=ib + ios / 2),
            CurrentSource(n + "ib-", in_minus, ground, dc=ib - ios / 2),
        ]
    last = n + "o" if ro > 0 else out
    els.append(OpAmpCore(n + "gain", last, ground, in_plus, in_minus, a0, fp1, fp2, vos))
    if ro > 0:
        els.append(Resistor(n + "ro", last, out, ro))
    instance = OpAmpInstance(
        refdes=refdes, in_plus=in_plus, in_minus=in_minus, out=out, loop_element=n + "gain",
        open_loop_gain=a0, pole1_hz=fp1, pole2_hz=fp2, output_resistance=ro, assumed=tuple(assumed),
    )
    return MacroModel(tuple(els), instance)


def expand_core(core: OpAmpCore) -> tuple[Element, ...]:
    """The core as standard elements: Vos in series with the + input, a VCVS of gain A0, then each pole as an
    RC low-pass (1 Ω) buffered by a unity VCVS; the last buffer drives ``core.pos``. Internal nodes are
    ``<core name>#...`` and ``core.neg`` is their reference. A pole at or above 1e30 Hz (a single-pole part) is
    left out."""
    n = core.name + "#"
    ref = core.neg
    els: list[Element] = []
    sense = core.cpos
    if core.vos != 0.0:
        sense = n + "p"
        els.append(VoltageSource(n + "vos", sense, core.cpos, dc=core.vos))
    poles = [p for p in (core.fp1, core.fp2) if p < NO_POLE_HZ]
    node = n + "a" if poles else core.pos
    els.append(Vcvs(n + "a0", node, ref, sense, core.cneg, core.a0))
    for i, fp in enumerate(poles, start=1):
        rc, buf = f"{n}{i}", (core.pos if i == len(poles) else f"{n}b{i}")
        els += [
            Resistor(f"{n}r{i}", node, rc, POLE_RESISTANCE),
            Capacitor(f"{n}c{i}", rc, ref, 1.0 / (2 * math.pi * POLE_RESISTANCE * fp)),
            Vcvs(f"{n}buf{i}", buf, ref, rc, ref, 1.0),
        ]
        node = buf
    return tuple(els)


def expand_netlist(netlist: Netlist) -> Netlist:
    """The netlist with every op-amp core written out as standard elements (for SPICE and cross-checks)."""
    out: list[Element] = []
    for e in netlist.elements:
        out.extend(expand_core(e) if isinstance(e, OpAmpCore) else (e,))
    return Netlist(tuple(out), netlist.opamps)
