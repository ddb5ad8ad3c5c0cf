"""Tests written to kill surviving mutants of the mutation run (docs/MUTATION.md): each pins a documented behaviour
the rest of the suite did not look at."""

from __future__ import annotations

from pathlib import Path

from afecheck.analysis import analyse
from afecheck.model.load import load_design

CASES = Path(__file__).parent / "reference" / "cases"


def test_band_gain_is_absent_when_the_source_declares_no_band() -> None:
    # StageInput.band_gain: "None when the source declares no band" (analysis/results.py); a source with neither
    # an AC amplitude nor a band must not be swept at all
    (stage,) = analyse(load_design(CASES / "inverting_signal_rs.yaml")).stages
    assert [i.band_gain for i in stage.inputs] == [None]
    assert stage.vout_ac_peak == 0.0 and stage.f_max == 0.0
