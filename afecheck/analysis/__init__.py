"""Circuit analysis: modified nodal analysis, stages, sources, signal ranges and loop gain."""

from __future__ import annotations


def analyse(loaded):  # noqa: ANN001, ANN201 - replaced by the analysis layer
    """Analyse a loaded design; returns :class:`afecheck.analysis.results.DesignAnalysis`."""
    from afecheck.analysis.design import analyse_design

    return analyse_design(loaded)
