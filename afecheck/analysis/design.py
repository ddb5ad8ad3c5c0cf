"""Analyse a whole design: build the circuit graph, find the stages, solve them in signal order."""

from __future__ import annotations

from afecheck.analysis.results import DesignAnalysis
from afecheck.analysis.signals import propagate
from afecheck.graph.build import circuit_of
from afecheck.graph.stages import find_stages
from afecheck.model.loaded import LoadedDesign


def analyse_design(loaded: LoadedDesign, circuits: dict | None = None) -> DesignAnalysis:
    """Every op-amp stage's StageResult (in file order), the signal on every net, and what was not evaluated.

    ``circuits``, when given, collects each op-amp's local netlist for frequency sweeps (analysis/curves.py)."""
    circuit = circuit_of(loaded)
    plan = find_stages(circuit)
    run = propagate(circuit, plan, circuits)
    results, nets, problems = run.results, run.nets, run.problems
    for r in results.values():
        if r.not_evaluated:
            problems.append(((r.opamp,), "; ".join(r.not_evaluated)))
    stages = tuple(results[r] for r in circuit.opamps if r in results)
    return DesignAnalysis(stages=stages, nets=dict(sorted(nets.items())), not_evaluated=tuple(problems),
                          forms=dict(sorted(run.forms.items())), output_currents=run.output_currents)
