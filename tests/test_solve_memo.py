"""Solves shared between identical units (afecheck/analysis/solve_memo.py) give the same report as solving each.

A generated multi-channel design repeats two channel circuits; some channels are then altered in one value each
(a feedback resistor, an NTC's Beta, a filter capacitor, a signal's range, a part's offset) so that a key which
forgot a value would hand a neighbour's solution to an altered channel. ``stages --json`` and
``check --format json`` are computed with the memo on and off and compared number by number (1e-12 relative,
1e-15 absolute near zero).
"""

from __future__ import annotations

import io
import json
from typing import Any

import pytest
from spice_roundtrip import same
from tools.generate import PART_NAME, generate_design

from afecheck.analysis import solve_memo
from afecheck.cli import main

TOL = 1e-12


def _altered_design() -> dict[str, Any]:
    d = generate_design(8, name="memo-check")
    comps = d["components"]
    comps["R302"]["value"] = "3.09k"  # channel 3 (NTC): a different gain
    comps["RT501"]["beta"] = "3380 K"  # channel 5 (NTC): a different thermistor
    comps["C601"]["value"] = "180n"  # channel 6 (sensor): a different filter
    comps["S401"]["dc"] = ["0.6 V", "1.4 V"]  # channel 4 (sensor): a different signal range
    d["parts"]["ALT-PREC2"] = dict(d["parts"][PART_NAME], offset_voltage="200 uV")
    comps["U701"]["part"] = "ALT-PREC2"  # channel 7 (NTC): the same circuit on a part with a larger offset
    return d


def _run(argv: list[str]) -> Any:
    out, err = io.StringIO(), io.StringIO()
    status = main(argv, stdout=out, stderr=err)
    assert status in (0, 1), err.getvalue()
    return json.loads(out.getvalue())


@pytest.mark.parametrize("command", [["stages", "--json"], ["check", "--format", "json", "--fail-on", "never"]])
def test_memoised_solves_match_solving_each_unit(tmp_path, monkeypatch, command):
    path = tmp_path / "memo.json"
    path.write_text(json.dumps(_altered_design()), encoding="utf-8")
    assembled: list[int] = []
    real = solve_memo.assemble
    monkeypatch.setattr(solve_memo, "assemble", lambda n, *a: assembled.append(1) or real(n, *a))

    monkeypatch.setattr(solve_memo, "MEMOISE", False)
    plain = _run([*command, str(path)])
    plain_count = len(assembled)
    monkeypatch.setattr(solve_memo, "MEMOISE", True)
    assembled.clear()
    shared = _run([*command, str(path)])

    # two op-amps a channel, each its own unit, and each channel's gain stage again with the filter stage it drives
    # (the coupled DC pass): 8 × 3 assemblies when nothing is shared
    assert plain_count == 24
    assert 0 < len(assembled) < plain_count  # the memo did share: repeated channels were not assembled again
    assert same(plain, shared, rel=TOL) == []


def test_the_altered_channels_really_differ(tmp_path):
    """The alterations reach the numbers (else the comparison above would not test the key)."""
    path = tmp_path / "memo.json"
    path.write_text(json.dumps(_altered_design()), encoding="utf-8")
    stages = {s["opamp"]: s for s in _run(["stages", "--json", str(path)])["stages"]}
    for altered, twin in (("U301", "U101"), ("U501", "U101"), ("U401", "U201"), ("U701", "U101")):
        assert stages[altered]["vout_max"] != stages[twin]["vout_max"]
    assert stages["U602"]["loop_gain_at_fmax"] != stages["U202"]["loop_gain_at_fmax"]


def test_a_full_memo_stops_keeping_but_still_answers_the_same(tmp_path, monkeypatch):
    """Past MAX_KEPT results the memo keeps nothing new (a design of all-different units must not hold every
    unit's arrays); what it kept is still shared and every number stays the same."""
    path = tmp_path / "memo.json"
    path.write_text(json.dumps(_altered_design()), encoding="utf-8")
    monkeypatch.setattr(solve_memo, "MEMOISE", False)
    plain = _run(["stages", "--json", str(path)])
    monkeypatch.setattr(solve_memo, "MEMOISE", True)
    monkeypatch.setattr(solve_memo, "MAX_KEPT", 3)
    kept: list[dict] = []
    real = solve_memo._keep
    monkeypatch.setattr(solve_memo, "_keep", lambda cache, key, value: kept.append(cache) or real(cache, key, value))
    assert same(plain, _run(["stages", "--json", str(path)]), rel=TOL) == []
    assert kept and kept[-1][solve_memo._KEPT] == 3
    assert sum(1 for k in kept[-1] if isinstance(k, tuple) and k[0] in ("system", "points", "ac", "rout")) == 3


def test_the_key_holds_an_inductors_values_and_refuses_unknown_kinds():
    """Two circuits that differ only in an inductance or its winding resistance never share a solve."""
    from afecheck.analysis.netlist import Inductor, Netlist, Resistor, VoltageSource

    def net(l_h: float, r: float) -> Netlist:
        return Netlist((VoltageSource("V1", "a", "0", dc=1.0), Inductor("L1", "a", "b", l_h, r),
                        Resistor("R1", "b", "0", 1e3)))

    assert solve_memo.numeric_key(net(1e-3, 0.5)) == solve_memo.numeric_key(net(1e-3, 0.5))
    assert solve_memo.numeric_key(net(1e-3, 0.5)) != solve_memo.numeric_key(net(2e-3, 0.5))
    assert solve_memo.numeric_key(net(1e-3, 0.5)) != solve_memo.numeric_key(net(1e-3, 0.7))

    class Strange(Resistor):
        pass

    assert solve_memo.numeric_key(Netlist((Strange("X1", "a", "0", 1.0),))) is None
