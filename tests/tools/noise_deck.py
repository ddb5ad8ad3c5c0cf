"""An ngspice ``.noise`` deck of a channel as afecheck sees it, with the op-amps' noise made of resistor noise.

ngspice has no plain noise-source element for ``.noise``, so each op-amp noise source is the thermal noise of a
1 Ω resistor alone on its own node (an open-circuit density √(4kT·1 Ω)) scaled by a controlled source: a VCVS in
series with the ``+`` input for the voltage noise, a VCCS into each input for the current noise. The
macromodel's own resistors are marked ``noisy=0`` (afecheck gives them no noise; the part's en/in stand for them).

A 1/f corner fc is the same resistor's flicker noise: ngspice 39 gives a resistor with a model card
``R (kf=K af=1 ef=1)`` carrying a DC current I a flicker current density K·I/f beside its 4kT/R (measured here:
exactly en²·(1 + fc/f) across 1 Ω with I = 1 A and K = 4kT·fc). A noiseless 1 A source feeds it, and the
controlled source reads the node against a noiseless 1 V reference so the DC operating point is untouched.
"""

from __future__ import annotations

import math
import re
from dataclasses import replace

import numpy as np

from afecheck.analysis.channel import channel_netlist, find_channels
from afecheck.analysis.netlist import (
    GROUND,
    CurrentSource,
    Netlist,
    OpAmpCore,
    Resistor,
    Vccs,
    Vcvs,
    VoltageSource,
)
from afecheck.analysis.noise import BOLTZMANN
from afecheck.analysis.spice import spice_deck


def noise_deck(loaded, net: str, f_lo: float, f_hi: float, per_decade: int = 40) -> tuple[str, str]:  # noqa: ANN001
    """(deck text, input source) for ``.noise`` at ``net`` from ``f_lo`` to ``f_hi``, op-amp 1/f corners included."""
    from afecheck.analysis.noise import noise_temperature_k

    channel = find_channels(loaded)[net]
    netlist = channel_netlist(loaded, channel)
    t_k = noise_temperature_k(loaded)
    unit = math.sqrt(4 * BOLTZMANN * t_k * 1.0)
    extra: list = [VoltageSource("NZ#ref", "NZ#ref", GROUND, dc=1.0)]
    flicker: dict[str, float] = {}  # noise resistor -> kf

    def noise_node(name: str, fc: float) -> str:
        """A 1 Ω noise resistor on node ``name``; with a corner, fed 1 A and given kf = 4kT·fc. The reference the
        controlled source reads the node against (ground, or the 1 V reference when the resistor carries 1 A)."""
        extra.append(Resistor(f"{name}.r", name, GROUND, 1.0))
        if fc <= 0:
            return GROUND
        extra.append(CurrentSource(f"{name}.i", GROUND, name, dc=1.0))
        flicker[f"{name}.r"] = 4 * BOLTZMANN * t_k * fc
        return "NZ#ref"

    internal = tuple(f"{r}#" for r in netlist.opamps)
    quiet = {e.name for e in netlist.elements if isinstance(e, Resistor) and e.name.startswith(internal)}
    for ref, op in netlist.opamps.items():
        model = loaded.part(ref)
        en, inn = model.value("voltage_noise"), model.value("current_noise")
        fcv, fci = model.value("voltage_noise_corner"), model.value("current_noise_corner")
        core = netlist.element(op.loop_element)
        assert isinstance(core, OpAmpCore)
        netlist = netlist.replaced(replace(core, cpos=f"NZ#{ref}.p"))
        back = noise_node(f"NZ#{ref}.v", fcv)
        extra.append(Vcvs(f"NZ#{ref}.ev", f"NZ#{ref}.p", op.in_plus, f"NZ#{ref}.v", back, en / unit))
        for pin, node in (("p", op.in_plus), ("m", op.in_minus)):
            if node == GROUND:
                continue
            back = noise_node(f"NZ#{ref}.i{pin}", fci)
            extra.append(Vccs(f"NZ#{ref}.gi{pin}", node, GROUND, f"NZ#{ref}.i{pin}", back, inn / unit))
    netlist = netlist.with_elements(*extra)
    # written flat (no op-amp subcircuits), so the macromodel's own resistors can be marked quiet card by card
    netlist = Netlist(netlist.elements, {r: replace(op, template=()) for r, op in netlist.opamps.items()})
    deck = spice_deck(netlist, title=f"noise at {net}")
    quiet_cards = {deck.elements[n] for n in quiet} | {deck.elements[f"{n}#r{i}"] for n in
                                                       (op.loop_element for op in netlist.opamps.values())
                                                       for i in (1, 2) if f"{n}#r{i}" in deck.elements}
    entry = channel.signal_branches[0][1] if channel.signal_branches else next(
        e.name for e in netlist.elements if isinstance(e, VoltageSource) and not e.name.startswith("NZ#"))
    source = deck.elements[entry]
    models = {deck.elements[n]: (f"nzf{i}", kf) for i, (n, kf) in enumerate(flicker.items())}
    lines = []
    for line in deck.text.splitlines():
        if line == ".end":
            break
        head = line.split(" ", 1)[0]
        if head == source and " AC " not in line:
            line += " AC 1"  # .noise refers to its input source's AC value (the result does not depend on it)
        if head in models:
            line += f" {models[head][0]}"
        lines.append(line + " noisy=0" if head in quiet_cards else line)
    lines += [f".model {name} R (kf={kf!r} af=1 ef=1)" for name, kf in models.values()]
    t_c = t_k - 273.15
    lines += [f".options temp={t_c!r} tnom={t_c!r}", ".control", "set numdgt=15",
              f"noise v({deck.nodes[net]}) {source} dec {per_decade} {f_lo!r} {f_hi!r}",
              "setplot noise1", "print frequency onoise_spectrum", "setplot noise2", "print onoise_total",
              "quit", ".endc", ".end"]
    return "\n".join(lines) + "\n", source


_ROW = re.compile(r"^\s*\d+\s+([-+0-9.eE]+)\s+([-+0-9.eE]+)\s*$")
_TOTAL = re.compile(r"onoise_total\s*=\s*([-+0-9.eE]+)")


def parse_noise(text: str) -> tuple[np.ndarray, np.ndarray, float]:
    """(frequencies, output density V/√Hz, integrated output RMS) from the printed noise plots."""
    rows = [tuple(float(x) for x in m.groups()) for m in map(_ROW.match, text.splitlines()) if m]
    total = _TOTAL.search(text)
    assert rows and total, text[-2000:]
    arr = np.array(rows)
    return arr[:, 0], arr[:, 1], float(total.group(1))
