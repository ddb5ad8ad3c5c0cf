"""An op-amp output whose stage has not been analysed yet is a source of unknown range, held at 0 V."""

from __future__ import annotations

from test_kill_sources import DESIGN

from afecheck.analysis.sources import boundary_source
from afecheck.graph.build import circuit_of
from afecheck.model.load import load_design


def test_an_upstream_output_with_no_result_is_reported_at_the_zero_volts_it_is_solved_at(tmp_path) -> None:
    # With no upstream result the unit is solved with that net held at 0 V (stage_analysis gives the stage-output
    # branch a constant 0 V form when the net has none), so its Thevenin equivalent must read 0..0 V through 0 Ω:
    # `afecheck stages` prints that range beside the input, and a range the solve never used would mislead.
    path = tmp_path / "d.yaml"
    path.write_text(DESIGN, encoding="utf-8")
    out = boundary_source(circuit_of(load_design(path)), "O1")
    assert (out.kind, out.refs) == ("unknown", ("U1",))
    assert (out.v_min, out.v_max, out.r_min, out.r_max, out.ac_amplitude) == (0.0, 0.0, 0.0, 0.0, 0.0)
