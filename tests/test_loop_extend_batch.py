"""The loop-gain sweep's extra decades solved several at a time give the same bits as one decade at a time.

Each frequency's solution of the batched nodal solve depends only on its own matrix, so solving three decades
together and taking them one by one must reproduce the decade-by-decade sweep exactly: every grid point, every
crossing and margin.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from tools.generate import generate_design

from afecheck.analysis import loop
from afecheck.analysis.design import analyse_design
from afecheck.model.load import load_design


def _circuits(tmp_path) -> dict:
    path = tmp_path / "two.json"
    path.write_text(json.dumps(generate_design(2, vary=True)), encoding="utf-8")
    circuits: dict = {}
    analyse_design(load_design(str(path)), circuits)
    return circuits


@pytest.mark.parametrize("batch", [2, 3, 8])
def test_batched_decades_equal_single_decades(tmp_path, monkeypatch, batch):
    circuits = _circuits(tmp_path)
    assert len(circuits) == 4
    extended = 0
    for ref, (netlist, _) in circuits.items():
        monkeypatch.setattr(loop, "EXTEND_BATCH", 1)
        single = loop.loop_gain(netlist, ref)
        monkeypatch.setattr(loop, "EXTEND_BATCH", batch)
        batched = loop.loop_gain(netlist, ref)
        extended += single.freqs.size > loop.default_loop_grid(netlist.opamps[ref]).size
        assert np.array_equal(single.freqs, batched.freqs)
        assert np.array_equal(single.t, batched.t)
        assert (single.crossovers_hz, single.phase_margins_deg, single.gain_margin, single.t_dc) == (
            batched.crossovers_hz, batched.phase_margins_deg, batched.gain_margin, batched.t_dc)
    assert extended  # some sweep really went past the default grid
