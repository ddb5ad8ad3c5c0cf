"""Numerical edge cases: each gives a named finding or 'not evaluated' with its reason, never a silent pass.

Singular circuits (floating subnetwork, loop of ideal sources), zero-ohm and open-circuit values, an
op-amp with no feedback, and a part with every optional parameter missing. The circuit facts behind
each expectation are common practice (RULES-REFERENCE R5a, R5m, section 0.3 and section 6 item 5).
"""

from __future__ import annotations

import io
import math
from pathlib import Path

import pytest

from afecheck.cli import main

HEAD = "afecheck: 1\nname: edge\nrails:\n  VCC: {voltage: 5 V}\n  VMID: {voltage: 2.5 V}\n"
PART = "parts:\n  EDGE-AMP: {gbw: 1 MHz, open_loop_gain: 100 dB, output_resistance: 100}\n"


def _write(tmp_path: Path, body: str, parts: str = PART, tail: str = "") -> Path:
    path = tmp_path / "edge.yaml"
    path.write_text(HEAD + parts + "components:\n" + body + tail, encoding="utf-8")
    return path


def _run(path: Path) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    rc = main(["check", "--fail-on", "info", str(path)], stdout=out, stderr=err)
    return rc, out.getvalue(), err.getvalue()


def _findings(path: Path):
    from afecheck.api import check_file

    return check_file(path).findings


def _about(findings, *names: str):
    """Findings that name any of ``names`` as a reference designator or a net."""
    return [f for f in findings if set(names) & (set(f.location.refs) | set(f.location.nets))]


def _numbers(findings) -> list[float]:
    vals: list[float] = []
    for f in findings:
        for v in f.ctx.values():
            if isinstance(v, (int, float)) and not isinstance(v, bool):
                vals.append(float(v))
    return vals


def test_floating_input_behind_a_capacitor_is_named(tmp_path: Path) -> None:
    # R5a [CP]: an op-amp input reached only through a capacitor has no DC path for its bias current
    body = (
        "  S1: {kind: signal_source, ac_amplitude: 10 mV, band: [100 Hz, 1 kHz], pins: {p: SIG, n: GND}}\n"
        "  C1: {kind: capacitor, value: 100n, dielectric: C0G, pins: {1: SIG, 2: INP}}\n"
        "  U1: {kind: opamp, part: EDGE-AMP, pins: {in+: INP, in-: OUT, out: OUT, v+: VCC, v-: GND}}\n"
    )
    path = _write(tmp_path, body)
    rc, out, _ = _run(path)
    assert rc == 1, out
    named = _about(_findings(path), "U1", "INP", "C1")
    assert named, "a floating op-amp input passed silently"
    assert all(math.isfinite(x) for x in _numbers(named))


def test_floating_subnetwork_is_named(tmp_path: Path) -> None:
    # [CP]: two resistors tied only to each other form an island with no DC reference; the stage is fine
    body = (
        "  R1: {kind: resistor, value: 10k, pins: {1: ISLAND_A, 2: ISLAND_B}}\n"
        "  R2: {kind: resistor, value: 10k, pins: {1: ISLAND_B, 2: ISLAND_A}}\n"
        "  U1: {kind: opamp, part: EDGE-AMP, pins: {in+: VMID, in-: OUT, out: OUT, v+: VCC, v-: GND}}\n"
        "  C1: {kind: capacitor, value: 100n, dielectric: X7R, pins: {1: VCC, 2: GND}}\n"
        "  R3: {kind: resistor, value: 1k, pins: {1: ISLAND_A, 2: INX}}\n"
        "  U2: {kind: opamp, part: EDGE-AMP, pins: {in+: INX, in-: OUT2, out: OUT2, v+: VCC, v-: GND}}\n"
    )
    path = _write(tmp_path, body)
    rc, out, err = _run(path)
    assert rc == 1, out + err  # a design, not bad input: the island is reported as a finding
    assert _about(_findings(path), "U2", "INX", "ISLAND_A", "ISLAND_B", "R1", "R2", "R3"), out


def test_loop_of_ideal_sources_is_named(tmp_path: Path) -> None:
    # Kirchhoff's voltage law: two ideal sources of different value across one net pair cannot both hold
    body = (
        "  V1: {kind: vsource, value: 1 V, pins: {p: SRC, n: GND}}\n"
        "  V2: {kind: vsource, value: 2 V, pins: {p: SRC, n: GND}}\n"
        "  U1: {kind: opamp, part: EDGE-AMP, pins: {in+: SRC, in-: OUT, out: OUT, v+: VCC, v-: GND}}\n"
    )
    path = _write(tmp_path, body)
    rc, out, err = _run(path)
    assert rc == 2, out + err
    assert f"{path}:10:" in err and "V2" in err and "'SRC'" in err, err  # V2 stands on line 10


def test_source_fighting_a_rail_is_named(tmp_path: Path) -> None:
    # Kirchhoff's voltage law: a 3.3 V source drawn across the 5 V rail is a loop of ideal sources
    body = (
        "  V1: {kind: vsource, value: 3.3 V, pins: {p: VCC, n: GND}}\n"
        "  U1: {kind: opamp, part: EDGE-AMP, pins: {in+: VMID, in-: OUT, out: OUT, v+: VCC, v-: GND}}\n"
    )
    path = _write(tmp_path, body)
    rc, out, err = _run(path)
    assert rc == 2, out + err
    assert f"{path}:9:" in err and "V1" in err and "'VCC'" in err, err  # V1 stands on line 9


@pytest.mark.parametrize("value", ["0", "0 Ω", "-1k"])
def test_zero_or_negative_ohms_is_an_input_error_with_line(tmp_path: Path, value: str) -> None:
    # common practice: a resistor of zero or negative ohms is a wire or a typo, refused with its place
    body = (
        f"  R1: {{kind: resistor, value: {value}, pins: {{1: OUT, 2: INM}}}}\n"
        "  U1: {kind: opamp, part: EDGE-AMP, pins: {in+: VMID, in-: INM, out: OUT, v+: VCC, v-: GND}}\n"
    )
    path = _write(tmp_path, body)
    rc, _, err = _run(path)
    assert rc == 2
    assert f"{path}:9" in err, err  # R1 stands on line 9 of the file
    assert "R1" in err


def test_open_circuit_feedback_resistor_is_not_a_silent_pass(tmp_path: Path) -> None:
    # [CP]: a 1 PΩ feedback resistor is an open circuit; gain 1 + 1e15/1e3 saturates the output
    body = (
        "  S1: {kind: signal_source, dc: [1 V, 1.1 V], pins: {p: IN, n: GND}}\n"
        "  U1: {kind: opamp, part: EDGE-AMP, pins: {in+: IN, in-: INM, out: OUT, v+: VCC, v-: GND}}\n"
        "  R1: {kind: resistor, value: 1e15, pins: {1: OUT, 2: INM}}\n"
        "  R2: {kind: resistor, value: 1k, pins: {1: INM, 2: GND}}\n"
    )
    path = _write(tmp_path, body)
    rc, out, _ = _run(path)
    assert rc == 1, out
    named = _about(_findings(path), "U1", "OUT", "R1")
    assert named, out
    assert all(math.isfinite(x) for x in _numbers(named)), [f.ctx for f in named]


def test_open_loop_op_amp_is_named(tmp_path: Path) -> None:
    # R5m [CP]: no feedback path at all -> open loop -> error unless declared a comparator
    body = (
        "  S1: {kind: signal_source, dc: [1 V, 2 V], pins: {p: IN, n: GND}}\n"
        "  U1: {kind: opamp, part: EDGE-AMP, pins: {in+: IN, in-: VMID, out: OUT, v+: VCC, v-: GND}}\n"
    )
    path = _write(tmp_path, body, tail="loads:\n  OUT: {resistance: 10k}\n")
    rc, out, _ = _run(path)
    assert rc == 1, out
    named = _about(_findings(path), "U1", "OUT")
    assert any(int(f.severity) >= 3 for f in named), out


def test_part_missing_every_optional_parameter_is_flagged_as_assumed(tmp_path: Path) -> None:
    # RULES-REFERENCE 0.3 and section 6 item 5: defaulted part data is reported, never a silent pass
    body = (
        "  S1: {kind: signal_source, dc: [1 V, 2 V], ac_amplitude: 10 mV, band: [10 Hz, 1 kHz],\n"
        "       pins: {p: IN, n: GND}}\n"
        "  U1: {kind: opamp, part: BARE-AMP, pins: {in+: IN, in-: OUT, out: OUT, v+: VCC, v-: GND}}\n"
        "  C1: {kind: capacitor, value: 100n, dielectric: X7R, pins: {1: VCC, 2: GND}}\n"
    )
    path = _write(tmp_path, body, parts="parts:\n  BARE-AMP: {gbw: 1 MHz}\n")
    rc, out, _ = _run(path)
    assert rc == 1, out
    named = _about(_findings(path), "U1", "IN", "OUT")
    assert named, out
    assert any(f.assumed or f.confidence != "computed" for f in named), out


def test_part_missing_gbw_is_an_input_error(tmp_path: Path) -> None:
    # the macromodel needs GBW at the least (RULES-REFERENCE 0.3): an empty part is refused with its place
    body = "  U1: {kind: opamp, part: EMPTY-AMP, pins: {in+: VMID, in-: OUT, out: OUT, v+: VCC, v-: GND}}\n"
    path = _write(tmp_path, body, parts="parts:\n  EMPTY-AMP: {}\n")
    rc, _, err = _run(path)
    assert rc == 2
    assert f"{path}:7" in err, err


def test_unknown_part_name_is_an_input_error(tmp_path: Path) -> None:
    # common practice: an op-amp whose part model is nowhere is named with its line, not skipped
    body = "  U1: {kind: opamp, part: NOT-IN-ANY-LIBRARY, pins: {in+: VMID, in-: OUT, out: OUT, v+: VCC, v-: GND}}\n"
    path = _write(tmp_path, body)
    rc, out, err = _run(path)
    assert rc == 2, out + err
    assert f"{path}:9" in err and "NOT-IN-ANY-LIBRARY" in err, err


@pytest.mark.parametrize("value", ["1e999", ".nan", ".inf", "-.inf", "nan"])
def test_non_finite_values_are_input_errors(tmp_path: Path, value: str) -> None:
    # common practice: infinity and not-a-number are never component values
    body = (
        f"  R1: {{kind: resistor, value: {value}, pins: {{1: OUT, 2: INM}}}}\n"
        "  U1: {kind: opamp, part: EDGE-AMP, pins: {in+: VMID, in-: INM, out: OUT, v+: VCC, v-: GND}}\n"
    )
    path = _write(tmp_path, body)
    rc, _, err = _run(path)
    assert rc == 2
    assert f"{path}:9" in err, err
