"""``afecheck spice FILE``: write the design, or one op-amp stage, as a SPICE netlist for a circuit simulator."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import TextIO

HELP = "write a design (or one stage) as a SPICE netlist"


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("file", metavar="FILE", help="design file (YAML or JSON)")
    p.add_argument("--stage", metavar="REFDES", help="only the stage of this op-amp (with the op-amps tied to it)")
    p.add_argument("--output", "-o", metavar="PATH", help="write the deck here instead of standard output")
    p.add_argument("--ac", action="store_true",
                   help="add a .control block: operating point, then an AC sweep written to a binary raw file")
    p.add_argument("--intent", help="design-intent file (signals, loads, budgets keyed by net)")
    p.add_argument("--parts", action="append", default=[], metavar="LIB", help="extra part library file")


def run(args: argparse.Namespace, stdout: TextIO, stderr: TextIO) -> int:
    from afecheck.analysis.spice import AcSweep, ControlBlock, spice_deck
    from afecheck.io import check_outputs, recording_reads, write_outputs
    from afecheck.model.load import load_design

    with recording_reads() as reads:
        if args.output:
            check_outputs([args.output], [args.file, args.intent, *args.parts])
        loaded = load_design(args.file, intent=args.intent, libraries=tuple(args.parts))
    if args.stage:
        netlist, title = _stage_netlist(loaded, args.stage), f"{loaded.design.name}: stage {args.stage}"
    else:
        from afecheck.analysis.netlist import netlist_from_design

        netlist, title = netlist_from_design(loaded), loaded.design.name
    control = None
    if args.ac:
        raw = (Path(args.output).stem if args.output else "afecheck") + ".raw"
        control = ControlBlock(ac=AcSweep(20, *_sweep_range(netlist)), raw_file=raw)
    deck = spice_deck(netlist, title, control)
    if not args.output:
        stdout.write(deck.text)
        return 0
    write_outputs([(args.output, deck.text)], reads)
    print(f"wrote {args.output}", file=stderr)
    return 0


def _sweep_range(netlist) -> tuple[float, float]:  # noqa: ANN001 - Netlist, imported lazily
    """From a tenth of the lowest dominant pole to a hundred times the highest GBW or second pole (1 Hz..1 GHz
    when there is no op-amp)."""
    ops = list(netlist.opamps.values())
    if not ops:
        return 1.0, 1e9
    lo = min(op.pole1_hz for op in ops) / 10.0
    hi = max(max(op.gbw_hz(), op.pole2_hz if op.pole2_hz < 1e15 else 0.0) for op in ops) * 100.0
    return lo, hi


def _stage_netlist(loaded, refdes: str):  # noqa: ANN001, ANN202 - LoadedDesign -> Netlist, imported lazily
    """The op-amps of ``refdes``'s group with their passives; nets where the stage walk stopped that nothing in
    the stage defines are held by an ideal source at their operating-point voltage (from the whole design)."""
    from afecheck.analysis.mna import solve_dc
    from afecheck.analysis.netlist import GROUND, NetlistOptions, VoltageSource, netlist_from_design
    from afecheck.errors import AnalysisError, InputError, Problem
    from afecheck.graph.build import build_circuit
    from afecheck.graph.stages import find_stages

    design = loaded.design
    comp = design.components.get(refdes)
    if comp is None or comp.kind != "opamp":
        raise InputError([Problem(loaded.file, None, None, "--stage", f"{refdes!r} is not an op-amp of the design")])
    circuit = build_circuit(loaded)
    stages = find_stages(circuit).stages
    group = stages[refdes].group or (refdes,)
    refs: set[str] = set(group)
    boundary: set[str] = set()
    for member in group:
        s = stages[member]
        refs |= set(s.refs)
        for region in (s.plus_region, s.minus_region, s.output_region):
            boundary |= set(region.boundary)
    outputs = {stages[m].out for m in group}
    ordered = [r for r in design.components if r in refs]
    netlist = netlist_from_design(loaded, ordered, NetlistOptions())
    defined = {design.ground, *outputs}
    defined |= {n for n, r in design.rails.items() if r.voltage is not None}
    defined |= set(design.signals)
    to_hold = sorted(n for n in boundary if n not in defined)
    if not to_hold:
        return netlist
    try:
        whole = solve_dc(netlist_from_design(loaded))
        values = {n: whole.voltage(n) for n in to_hold}
    except AnalysisError:
        values = {n: circuit.fixed.get(n) or 0.0 for n in to_hold}
    held = [VoltageSource(f"{n}#held", n, GROUND, dc=float(values[n])) for n in to_hold]
    return netlist.with_elements(*held)
