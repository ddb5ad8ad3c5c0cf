"""Hostile SPICE netlists: each one exits 2 with the file and line of the trouble, quickly, never a traceback."""

from __future__ import annotations

import io
import time
from pathlib import Path

import pytest

from afecheck.cli import main

OPAMP = ".subckt OPX in+ in- out v+ v-\nE1 out 0 in+ in- 1e5\n.ends\n"
BASE = "hostile test\nV1 vcc 0 5\nR1 a 0 1k\nR2 a vcc 1k\n"


def check(path: Path, *extra: str) -> tuple[int, str, float]:
    out, err = io.StringIO(), io.StringIO()
    start = time.process_time()  # CPU time: a loaded machine must not fail a sound refusal
    code = main(["check", str(path), *extra], out, err)
    return code, err.getvalue(), time.process_time() - start


def write(tmp_path: Path, text: str, name: str = "board.cir") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


CASES = {
    "unterminated subckt": (BASE + ".subckt BLOCK a b\nR9 a b 1k\n", 5, ".subckt BLOCK has no .ends"),
    "stray ends": (BASE + ".ends\n", 5, ".ends with no .subckt"),
    "recursive subcircuit": (BASE + ".subckt LOOP a b\nR5 a b 1k\nX1 a b LOOP\n.ends\nX9 a vcc LOOP\n", 7,
                             "contains itself"),
    "mutually recursive": (BASE + ".subckt P a b\nXq a b Q\n.ends\n.subckt Q a b\nXp a b P\n.ends\nX1 a 0 P\n", 9,
                           "contains itself"),
    "parameter loop": (BASE + ".param a={b+1} b={2*a}\nR3 a vcc {a}\n", 5, "depends on itself"),
    "self parameter": (BASE + ".param rr={rr}\nR3 a vcc {rr}\n", 5, "depends on itself"),
    "absurd suffix": (BASE + "R3 a vcc 1e999k\n", 5, "out of range"),
    "digits after a suffix": (BASE + "R3 a vcc 4k7\n", 5, "digits after the scale factor"),
    "not a number": (BASE + "R3 a vcc tenk\n", 5, "not a number"),
    "overflowing expression": (BASE + ".param big={10^400}\nR3 a vcc {big}\n", 5, "out of range"),
    "division by zero": (BASE + "R3 a vcc {1/(2-2)}\n", 5, "division by zero"),
    "deep expression": (BASE + "R3 a vcc {" + "(" * 5000 + "1" + ")" * 5000 + "}\n", 5, "longer than"),
    "nested expression": (BASE + "R3 a vcc {" + "(" * 60 + "1" + ")" * 60 + "}\n", 5, "nested deeper"),
    "unknown parameter": (BASE + "R3 a vcc {RX}\n", 5, "unknown parameter 'rx'"),
    "bare parameter name": (BASE + "R3 a vcc RB\n", 5, "write {RB}"),
    "unbalanced brace": (BASE + "R3 a vcc {2*3\n", 5, "unbalanced"),
    "unknown element": (BASE + "D1 a 0 DMOD\n", 5, "diode"),
    "unknown command": (BASE + ".frobnicate 3\n", 5, "unknown or unsupported command"),
    "continuation first": ("title\n+ R1 a b 1k\n", 2, "continuation line"),
    "unterminated control": (BASE + ".control\nop\n", 5, ".control block with no .endc"),
    "duplicate names": (BASE + "r1 a 0 2k\n", 5, "used twice"),
    "negative resistor": (BASE + "R3 a vcc -1k\n", 5, "greater than 0"),
    "shorted source": (BASE + "V2 a a 1\n", 5, "shorted"),
    "negative inductor": (BASE + "L1 a vcc -1u\n", 5, "greater than 0"),
    "coupled inductors": (BASE + "L1 a vcc 1u\nL2 b 0 1u\nK1 L1 L2 0.9\n", 7, "coupled inductor"),
    "floating current source": (BASE + "I1 a vcc 1m\n", 5, "current sources from or to ground only"),
    "shorted current source": (BASE + "I1 a a 1m\n", 5, "shorted"),
    "two sources on one net": (BASE + "I1 0 a 1m\nI2 0 a 2m\n", 6, "already drives"),
    "wrong port count": (BASE + ".subckt BLK a b\nR7 a b 1k\n.ends\nX1 a BLK\n", 8, "1 nodes given"),
    "binary": (BASE + "R3 a \x00 1k\n", 5, "NUL"),
    "part name, no definition": (BASE + "XU1 a 0 b vcc 0 AFE-GP1\nR5 b 0 1k\n", 5, "no .subckt gives its ports"),
}


@pytest.mark.parametrize("case", sorted(CASES))
def test_hostile_netlist_exits_2_with_file_and_line(case: str, tmp_path: Path) -> None:
    text, line, words = CASES[case]
    path = write(tmp_path, text)
    code, err, seconds = check(path)
    assert code == 2, err
    assert f"{path}:{line}" in err and words in err, err
    assert "Traceback" not in err and seconds < 2.0


def test_include_of_itself(tmp_path: Path) -> None:
    path = write(tmp_path, BASE + ".include board.cir\n")
    code, err, _ = check(path)
    assert code == 2 and f"{path}:5" in err and "includes itself" in err, err


def test_include_loop_through_another_file(tmp_path: Path) -> None:
    write(tmp_path, "R7 a 0 1k\n.include board.cir\n", "other.inc")
    path = write(tmp_path, BASE + ".include other.inc\n")
    code, err, _ = check(path)
    assert code == 2 and "includes itself" in err and f"{tmp_path / 'other.inc'}:2" in err, err


@pytest.mark.parametrize("target", ["../outside.lib", "/etc/hostname", "sub/../../outside.lib"])
def test_include_outside_the_folder_is_refused(tmp_path: Path, target: str) -> None:
    (tmp_path / "outside.lib").write_text("R8 a 0 1k\n", encoding="utf-8")
    folder = tmp_path / "design"
    (folder / "sub").mkdir(parents=True)
    path = write(folder, BASE + f".include {target}\n")
    code, err, _ = check(path)
    assert code == 2 and f"{path}:5" in err and ("outside the netlist's folder" in err or "absolute" in err), err


def test_missing_include_and_missing_section(tmp_path: Path) -> None:
    path = write(tmp_path, BASE + ".include nothere.lib\n")
    code, err, _ = check(path)
    assert code == 2 and f"{path}:5" in err and "no such file" in err
    write(tmp_path, ".lib a\n.endl\n", "parts.lib")
    path = write(tmp_path, BASE + ".lib parts.lib b\n")
    code, err, _ = check(path)
    assert code == 2 and f"{path}:5" in err and "no section 'b'" in err


@pytest.mark.slow
def test_a_million_line_netlist_is_refused_quickly(tmp_path: Path) -> None:
    lines = ["a million resistors"] + [f"R{i} a 0 1" for i in range(1_000_000)]
    path = write(tmp_path, "\n".join(lines) + "\n")
    code, err, seconds = check(path)
    assert code == 2 and f"{path}:100002" in err and "more than 100000 cards" in err, err[:500]
    assert seconds < 20.0  # about 2 s on an idle machine of the project's kind


def test_a_million_comment_lines_read_quickly(tmp_path: Path) -> None:
    path = write(tmp_path, BASE + "* filler\n" * 1_000_000 + "R3 a vcc {\n")
    code, err, seconds = check(path)
    assert code == 2 and f"{path}:1000005" in err, err[:500]
    assert seconds < 10.0


def test_an_instance_tree_that_multiplies_is_stopped(tmp_path: Path) -> None:
    levels = [".subckt L0 a b\nR1 a b 1k\n.ends"]
    for k in range(1, 8):
        body = "\n".join(f"X{j} a b L{k - 1}" for j in range(10))
        levels.append(f".subckt L{k} a b\n{body}\n.ends")
    path = write(tmp_path, BASE + "\n".join(levels) + "\nXtop a vcc L7\n")
    code, err, seconds = check(path)
    assert code == 2 and "more than 100000 elements" in err and seconds < 10.0, err


def test_unmapped_opamp_lists_the_subcircuits_and_prints_a_skeleton(tmp_path: Path) -> None:
    text = BASE + OPAMP + ".subckt VNDR_AMP 1 2 3 4 5\nQ1 1 2 3 QN\n.ends\n" + \
        "XU1 a b b vcc 0 OPX\nXU2 a c c vcc 0 OPX\nXU3 a 0 c vcc 0 VNDR_AMP\nR5 b 0 1k\n"
    path = write(tmp_path, text)
    code, err, _ = check(path)
    assert code == 2, err
    assert f"{path}:11" in err and "'OPX' (used by XU1, XU2)" in err
    assert f"{path}:13" in err and "'VNDR_AMP' (used by XU3)" in err
    assert "afecheck-map: 1\nsubcircuits:\n  OPX:" in err and "pins: [FILL-IN, FILL-IN" in err


def test_map_file_errors_point_into_the_map(tmp_path: Path) -> None:
    path = write(tmp_path, BASE + OPAMP + "XU1 a b b vcc 0 OPX\nR5 b 0 1k\n")
    netmap = write(tmp_path, "afecheck-map: 1\nsubcircuits:\n  OPX: {part: AFE-GP1, pins: [in+, in+, out, v+, v-]}\n",
                   "map.yaml")
    code, err, _ = check(path, "--map", str(netmap))
    assert code == 2 and f"{netmap}:3" in err and "each of in+, in-, out, v+, v- once" in err, err
    netmap.write_text("afecheck-map: 1\nsubcircuits:\n  OPX: {part: NO-SUCH}\ncomponents:\n  R9: {tolerance: 1%}\n",
                      encoding="utf-8")
    code, err, _ = check(path, "--map", str(netmap))
    assert code == 2 and f"{netmap}:5" in err and "no element 'R9'" in err, err
    netmap.write_text("afecheck-map: 1\nsubcircuits:\n  OPX: {part: AFE-GP1}\ncomponents:\n  v1: {tolerance: 1%}\n",
                      encoding="utf-8")
    code, err, _ = check(path, "--map", str(netmap))
    assert code == 2 and f"{netmap}:5" in err and "v1 is read as the rail 'vcc'" in err, err
    netmap.write_text("afecheck-map: 1\nsubcircuits:\n  OPX: {part: NO-SUCH}\n", encoding="utf-8")
    code, err, _ = check(path, "--map", str(netmap))
    assert code == 2 and f"{netmap}:3" in err and "unknown part model 'NO-SUCH'" in err, err


def test_nothing_the_user_gave_is_modified(tmp_path: Path) -> None:
    text = BASE + ".subckt BLOCK a b\n"
    path = write(tmp_path, text)
    before = path.stat().st_mtime_ns
    check(path)
    assert path.read_text(encoding="utf-8") == text and path.stat().st_mtime_ns == before
