"""Bad input: every problem reported as file:line:column with its key path, all at once, never a traceback.

The structural checks are common practice for netlists (a pin left open, a net with one connection, a
shorted part); the hostile-input cases ("billion laughs", deep nesting, object tags) are the usual ways
a YAML reader is attacked (common practice). Expected lines are the lines written in each test's text.
"""

from __future__ import annotations

import io
import time
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from afecheck.cli import main
from afecheck.errors import InputError
from afecheck.model.load import load_design
from afecheck.model.reader import (
    MAX_ALIAS_NODES,
    MAX_ALIASES,
    MAX_DEPTH,
    MAX_FILE_BYTES,
    _flow_nesting_beyond_limit_on_one_line,
    read_file,
)

HEAD = "afecheck: 1\nrails:\n  VCC: {voltage: 5 V}\ncomponents:\n"  # components start on line 5
FOLLOWER = "  U1: {kind: opamp, part: AFE-GP1, pins: {in+: IN, in-: OUT, out: OUT, v+: VCC, v-: GND}}\n"
TAIL = "signals:\n  IN: {dc: [0, 1 V]}\nloads:\n  OUT: {resistance: 10k}\n"


def write(tmp_path: Path, text: str | bytes, name: str = "design.yaml") -> Path:
    path = tmp_path / name
    if isinstance(text, bytes):
        path.write_bytes(text)
    else:
        path.write_text(text, encoding="utf-8")
    return path


def at(text: str, needle: str, after: int = 1) -> str:
    """``line:column`` (1-based) of the first ``needle`` on or after line ``after`` of ``text``."""
    for number, line in enumerate(text.splitlines(), start=1):
        if number >= after and needle in line:
            return f"{number}:{line.index(needle) + 1}"
    raise AssertionError(needle)


def errors(path: Path) -> list[str]:
    with pytest.raises(InputError) as info:
        load_design(path)
    return [str(p) for p in info.value.problems]


def test_the_baseline_design_loads(tmp_path: Path) -> None:
    load_design(write(tmp_path, HEAD + FOLLOWER + TAIL))


# -- structural checks ------------------------------------------------------------------------------------------


def test_pin_name_not_valid_for_the_kind(tmp_path: Path) -> None:
    text = HEAD + FOLLOWER + "  R1: {kind: resistor, value: 1k, pins: {1: OUT, 3: GND}}\n" + TAIL
    path = write(tmp_path, text)
    assert errors(path) == [
        f"{path}:{at(text, 'pins: {1: OUT, 3', 6)}: components.R1.pins: pin 2 of R1 is not connected; every "
        "resistor pin must name a net",
        f"{path}:{at(text, '3: GND')}: components.R1.pins.3: a resistor has no pin '3'; its pins are 1, 2",
    ]


def test_op_amp_pin_unconnected(tmp_path: Path) -> None:
    text = HEAD + "  U1: {kind: opamp, part: AFE-GP1, pins: {in+: IN, in-: OUT, out: OUT, v+: VCC}}\n" + TAIL
    path = write(tmp_path, text)
    (message,) = errors(path)
    assert message.startswith(f"{path}:{at(text, 'pins:')}: components.U1.pins: pin v- of U1 is not connected; "
                              "every opamp pin")


def test_net_with_a_single_connection(tmp_path: Path) -> None:
    text = HEAD + FOLLOWER + "\n\n  R1: {kind: resistor, value: 1k, pins: {1: OUT, 2: NOWHERE}}\n" + TAIL
    path = write(tmp_path, text)
    (message,) = errors(path)
    assert message.startswith(f"{path}:{at(text, '2: NOWHERE')}: components.R1.pins.2: net 'NOWHERE' connects "
                              "only to R1 pin 2")


def test_rails_ground_signals_and_loads_count_as_connections(tmp_path: Path) -> None:
    # IN is only on U1 but declared under signals, OUT only on U1 but declared under loads, VCC is a rail
    load_design(write(tmp_path, HEAD + "  U1: {kind: opamp, part: AFE-GP1, pins: {in+: IN, in-: FB, out: OUT, "
                                       "v+: VCC, v-: GND}}\n  R1: {kind: resistor, value: 1k, pins: {1: FB, 2: GND}}\n"
                                       + TAIL))


def test_unknown_part_model_with_a_suggestion(tmp_path: Path) -> None:
    text = HEAD + FOLLOWER.replace("AFE-GP1", "AFE-GP2") + TAIL
    path = write(tmp_path, text)
    assert errors(path) == [f"{path}:{at(text, 'part:')}: components.U1.part: unknown part model 'AFE-GP2'; "
                            "did you mean 'AFE-GP1', 'AFE-PREC1'?"]


def test_unknown_part_model_without_a_close_name(tmp_path: Path) -> None:
    path = write(tmp_path, HEAD + FOLLOWER.replace("AFE-GP1", "ZZZ") + TAIL)
    (message,) = errors(path)
    assert message.endswith("unknown part model 'ZZZ'; define it under parts:, in a part_libraries: file, or with "
                            "--parts")


def test_component_with_both_pins_on_one_net(tmp_path: Path) -> None:
    text = HEAD + FOLLOWER + "  C1: {kind: capacitor, value: 100n, pins: {1: OUT, 2: OUT}}\n" + TAIL
    path = write(tmp_path, text)
    assert errors(path) == [f"{path}:{at(text, 'pins:', 6)}: components.C1.pins: both pins of C1 are on net 'OUT': "
                            "the capacitor is shorted"]


def test_rail_with_no_voltage(tmp_path: Path) -> None:
    text = "afecheck: 1\nrails:\n  VCC: {voltage: 5 V}\n  VDD: {tolerance: 5%}\ncomponents:\n" + FOLLOWER + TAIL
    path = write(tmp_path, text)
    assert errors(path) == [f"{path}:4:3: rails.VDD: rail 'VDD' has no voltage"]


@pytest.mark.parametrize(
    ("section", "what"), [("signals", "a signal"), ("loads", "a load"), ("budgets", "a budget")]
)
def test_intent_on_a_net_no_component_uses(tmp_path: Path, section: str, what: str) -> None:
    entry = {"signals": "{dc: [0, 1 V]}", "loads": "{resistance: 1k}", "budgets": "{offset: 1 mV}"}[section]
    body = {"signals": "  IN: {dc: [0, 1 V]}\n", "loads": "  OUT: {resistance: 10k}\n", "budgets": ""}
    body[section] += f"  SPARE: {entry}\n"
    path = write(tmp_path, HEAD + FOLLOWER + "".join(f"{key}:\n{value}" for key, value in body.items() if value))
    text = path.read_text(encoding="utf-8")
    line = next(n for n, t in enumerate(text.splitlines(), 1) if "SPARE" in t)
    assert errors(path) == [f"{path}:{line}:3: {section}.SPARE: {what} is declared on net 'SPARE', which no "
                            "component uses"]


def test_every_problem_is_reported_at_once_in_line_order(tmp_path: Path) -> None:
    text = (HEAD + FOLLOWER.replace("AFE-GP1", "NOPE")
            + "  R1: {kind: resistor, value: 1k, pins: {1: OUT, 2: OUT}}\n"
            + "  R2: {kind: resistor, value: 1k, pins: {1: OUT, 2: LONELY}}\n" + TAIL)
    path = write(tmp_path, text)
    lines = [int(e.split(":")[1]) for e in errors(path)]
    assert lines == [5, 6, 7]


# -- validation errors ------------------------------------------------------------------------------------------


def test_unreadable_value_points_at_the_value(tmp_path: Path) -> None:
    text = HEAD + FOLLOWER + "  R1: {kind: resistor, value: 10m, pins: {1: OUT, 2: GND}}\n" + TAIL
    path = write(tmp_path, text)
    (message,) = errors(path)
    assert message.startswith(f"{path}:{at(text, '10m')}: components.R1.value: read '10m': a bare 'm' on a "
                              "resistance is ambiguous")


def test_unknown_key_suggests_the_spelling(tmp_path: Path) -> None:
    text = HEAD + FOLLOWER + "  R1: {kind: resistor, value: 1k, tolerence: 1%, pins: {1: OUT, 2: GND}}\n" + TAIL
    path = write(tmp_path, text)
    assert errors(path) == [f"{path}:{at(text, 'tolerence')}: components.R1.tolerence: unknown key 'tolerence'; "
                            "did you mean 'tolerance'?"]


def test_unknown_and_missing_kind(tmp_path: Path) -> None:
    text = HEAD + FOLLOWER + "  R1: {kind: resister, value: 1k, pins: {1: OUT, 2: GND}}\n" + \
        "  R2: {value: 1k, pins: {1: OUT, 2: GND}}\n" + TAIL
    path = write(tmp_path, text)
    found = errors(path)
    assert found[0].startswith(f"{path}:{at(text, 'resister')}: components.R1.kind: unknown kind 'resister'; "
                               "expected one of")
    assert found[1] == f"{path}:7:3: components.R2: 'kind' is missing; it says what the entry is"


def test_missing_required_value(tmp_path: Path) -> None:
    path = write(tmp_path, HEAD + FOLLOWER + "  R1:\n    kind: resistor\n    pins: {1: OUT, 2: GND}\n" + TAIL)
    assert errors(path) == [f"{path}:6:3: components.R1: required key 'value' is missing"]


def test_wrong_format_version(tmp_path: Path) -> None:
    path = write(tmp_path, "name: x\nafecheck: 2\n")
    (message,) = errors(path)
    assert message.startswith(f"{path}:2:11: afecheck: Input should be 1")


def test_all_validation_errors_at_once(tmp_path: Path) -> None:
    text = "afecheck: 1\nrails:\n  VCC: {voltage: five}\ncomponents:\n  R1: {kind: resistor, value: -1, pins: {}}\n"
    found = errors(write(tmp_path, text))
    assert [e.split(": ")[1] for e in found] == ["rails.VCC.voltage", "components.R1.value"]


# -- hostile and broken files ----------------------------------------------------------------------------------


def test_duplicate_component_is_refused(tmp_path: Path) -> None:
    text = HEAD + FOLLOWER + "  R1: {kind: resistor, value: 1k, pins: {1: OUT, 2: GND}}\n" \
        "  R1: {kind: resistor, value: 2k, pins: {1: OUT, 2: GND}}\n" + TAIL
    path = write(tmp_path, text)
    assert errors(path) == [f"{path}:7:3: components.R1: duplicate key 'R1' (first at line 6); each name once"]


def test_duplicate_key_inside_a_flow_mapping(tmp_path: Path) -> None:
    text = HEAD + "  R1: {kind: resistor, value: 1k, value: 2k, pins: {1: A, 2: B}}\n"
    path = write(tmp_path, text)
    assert errors(path) == [f"{path}:{at(text, 'value: 2k')}: components.R1.value: duplicate key 'value' (first at "
                            "line 5); each name once"]


def test_non_yaml_text(tmp_path: Path) -> None:
    path = write(tmp_path, "afecheck: 1\ncomponents: {R1: [1, 2\nname: x\n")
    (message,) = errors(path)
    assert message.startswith(f"{path}:3:5: not valid YAML:")


def test_plain_prose_is_not_a_design(tmp_path: Path) -> None:
    path = write(tmp_path, "Dear reviewer, please check the amplifier.\n")
    assert errors(path) == [f"{path}:1:1: the top level must be a mapping that starts with 'afecheck: 1'"]


@pytest.mark.parametrize(
    ("blob", "line"),
    [(bytes(range(256)), 1), (b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR", 3), (b"PK\x03\x04\x14\x00\x06\x00", 1)],
)
def test_binary_garbage(tmp_path: Path, blob: bytes, line: int) -> None:
    # each blob holds a NUL byte; the first one names the line it stands on (the PNG's after two line breaks)
    path = write(tmp_path, blob)
    assert errors(path) == [f"{path}:{line}: binary content (NUL byte): expected a UTF-8 text file"]


def test_latin1_text_is_not_utf8(tmp_path: Path) -> None:
    path = write(tmp_path, "afecheck: 1\nname: Kühlhaus\n".encode("latin-1"))
    assert errors(path) == [f"{path}:2: not UTF-8 text (byte 0xfc at offset 19)"]


@pytest.mark.parametrize(
    "tagged",
    ["!!python/object/apply:os.system [echo hi]", "!!python/name:os.system", "!!binary aGk=", "!!set {a, b}",
     "!custom {a: 1}"],
)
def test_yaml_object_tags_are_refused(tmp_path: Path, tagged: str) -> None:
    path = write(tmp_path, f"afecheck: 1\nname: {tagged}\n")
    (message,) = errors(path)
    assert message.startswith(f"{path}:2:7: name: tag ")
    assert "is not allowed" in message


@pytest.mark.parametrize("text", ["", "\n\n", "# nothing but a comment\n", "---\n"])
def test_empty_file(tmp_path: Path, text: str) -> None:
    path = write(tmp_path, text)
    assert errors(path) == [f"{path}:1: empty file: expected a mapping with the format version"]


def test_two_documents(tmp_path: Path) -> None:
    path = write(tmp_path, "afecheck: 1\n---\nafecheck: 1\n")
    assert errors(path) == [f"{path}:2:1: more than one YAML document; expected one"]


def test_merge_keys_are_refused(tmp_path: Path) -> None:
    path = write(tmp_path, "afecheck: 1\nrails:\n  A: &r {voltage: 5 V}\n  B:\n    <<: *r\n")
    assert errors(path) == [f"{path}:5:5: merge keys ('<<') are not supported; write the keys out"]


def test_small_aliases_are_read(tmp_path: Path) -> None:
    text = HEAD + "  U1: {kind: opamp, part: AFE-GP1, pins: &p {in+: IN, in-: OUT, out: OUT, v+: VCC, v-: GND}}\n" \
        "  U2: {kind: opamp, part: AFE-GP1, pins: *p}\n" + TAIL
    loaded = load_design(write(tmp_path, text))
    assert loaded.design.components["U2"].pins["out"] == "OUT"
    assert loaded.position("components", "U2", "pins")[1] == 6


def test_alias_bomb_is_refused_quickly(tmp_path: Path) -> None:
    # "billion laughs": nine levels of nine aliases would expand to 9**9 values
    lines = ["afecheck: 1", "a0: &a0 [lol, lol, lol, lol, lol, lol, lol, lol, lol]"]
    for i in range(1, 10):
        lines.append(f"a{i}: &a{i} [" + ", ".join([f"*a{i - 1}"] * 9) + "]")
    path = write(tmp_path, "\n".join(lines) + "\n")
    start = time.process_time()  # CPU time: a loaded machine must not fail a sound refusal
    (message,) = errors(path)
    assert time.process_time() - start < 1.0
    assert f"aliases expand to more than {MAX_ALIAS_NODES} values" in message


def test_too_many_aliases_are_refused(tmp_path: Path) -> None:
    path = write(tmp_path, "afecheck: 1\nx: &x 1\nlist: [" + ", ".join(["*x"] * (MAX_ALIASES + 1)) + "]\n")
    (message,) = errors(path)
    assert message.startswith(f"{path}:3:") and f"more than {MAX_ALIASES} alias uses" in message


@pytest.mark.parametrize("suffix", [".yaml", ".json"])
def test_deep_nesting_is_refused_quickly(tmp_path: Path, suffix: str) -> None:
    depth = 200_000
    text = '{"afecheck": 1, "x": ' + "[" * depth + "]" * depth + "}"
    path = write(tmp_path, text, "deep" + suffix)
    start = time.process_time()  # CPU time: a loaded machine must not fail a sound refusal
    (message,) = errors(path)
    assert time.process_time() - start < 2.0
    # our refusal, never the parser's own nesting limit (libyaml 0.2.5+ stops at 1000 with its own words)
    where = f"{path}:1:{21 + MAX_DEPTH}:" if suffix == ".yaml" else f"{path}:1:"
    assert message == f"{where} nesting deeper than {MAX_DEPTH} levels"


def test_deep_flow_line_inside_a_block_document_is_refused_by_our_limit(tmp_path: Path) -> None:
    path = write(tmp_path, "afecheck: 1\nname: x\nhazards:\n  - " + "[" * 5000 + "]" * 5000 + "\n")
    (message,) = errors(path)
    column = len("  - ") + MAX_DEPTH - 2 + 1  # the top mapping and the list hold two levels already
    assert message == f"{path}:4:{column}: nesting deeper than {MAX_DEPTH} levels"


def test_brackets_inside_quotes_and_comments_are_not_nesting(tmp_path: Path) -> None:
    brackets = "[{" * 600
    text = f"afecheck: 1\nname: '{brackets}'\nnote: \"{brackets}\"  # {brackets}\nlist: [[1], {{a: [2]}}]\n"
    assert _flow_nesting_beyond_limit_on_one_line(text)  # so the limit-free parser reads it: same data
    document = read_file(write(tmp_path, text))
    assert document.data == {"afecheck": 1, "name": brackets, "note": brackets, "list": [[1], {"a": [2]}]}
    assert document.values[("list", 1, "a", 0)] == (4, 18)


def test_nesting_at_the_limit_is_read(tmp_path: Path) -> None:
    inner = "[" * (MAX_DEPTH - 1) + "]" * (MAX_DEPTH - 1)
    path = write(tmp_path, f"afecheck: 1\nname: x\nhazards: {inner}\n")
    with pytest.raises(InputError) as info:  # read fine, then refused by the schema, not by the depth limit
        load_design(path)
    (problem,) = info.value.problems
    assert "nesting" not in problem.message and problem.line == 3


def test_oversized_file_is_refused_before_reading(tmp_path: Path) -> None:
    path = tmp_path / "huge.yaml"
    with path.open("wb") as f:
        f.truncate(MAX_FILE_BYTES + 1)
    assert errors(path) == [f"{path}:1: file is {MAX_FILE_BYTES + 1} bytes; the limit is {MAX_FILE_BYTES}"]


def test_json_nan_is_refused(tmp_path: Path) -> None:
    path = write(tmp_path, '{"afecheck": 1,\n "rails": {"V": {"voltage": NaN}}}', "d.json")
    assert errors(path) == [f"{path}:2:29: not valid JSON: NaN is not a JSON number"]


def test_broken_json(tmp_path: Path) -> None:
    path = write(tmp_path, '{"afecheck": 1,\n "rails": {,}}', "d.json")
    assert errors(path) == [f"{path}:2:12: not valid JSON: Expecting property name enclosed in double quotes"]


def test_missing_file_and_folder(tmp_path: Path) -> None:
    assert errors(tmp_path / "absent.yaml") == [f"{tmp_path / 'absent.yaml'}: no such file"]
    assert errors(tmp_path) == [f"{tmp_path}: a folder, not a regular file: only regular files are read"]


# -- through the command line -----------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "line"),
    [(HEAD + FOLLOWER + "  R1: {kind: resistor, value: 4k7x, pins: {1: OUT, 2: GND}}\n" + TAIL, 6),
     (HEAD + FOLLOWER + FOLLOWER + TAIL, 6),
     ("afecheck: 1\nname: !!python/object:os.system x\n", 2)],
)
def test_cli_exits_2_and_names_file_and_line(tmp_path: Path, text: str, line: int) -> None:
    path = write(tmp_path, text)
    out, err = io.StringIO(), io.StringIO()
    rc = main(["check", str(path)], stdout=out, stderr=err)
    assert rc == 2
    assert f"{path}:{line}:" in err.getvalue()
    assert "Traceback" not in err.getvalue()


# -- anything at all -------------------------------------------------------------------------------------------

_FRAGMENTS = ["afecheck: 1\n", "components:\n", "  R1: {kind: resistor, value: 4k7, pins: {1: A, 2: B}}\n",
              "rails: {VCC: {voltage: 5 V}}\n", "&a ", "*a ", "!!python/object ", "[", "]", "{", "}", ": ", "- ",
              "\t", "\x00", "\ufeff", "'", '"', "#", "---\n", "<<: ", "1e999", ".nan", "ON", "\\u0000"]


@settings(max_examples=100, deadline=None)
@given(st.lists(st.sampled_from(_FRAGMENTS) | st.text(max_size=8), max_size=25), st.sampled_from([".yaml", ".json"]))
def test_any_text_loads_or_gives_input_errors_with_lines(tmp_path_factory: pytest.TempPathFactory, parts: list[str],
                                                         suffix: str) -> None:
    # property (common practice for input readers): no input ever escapes as anything but InputError
    path = tmp_path_factory.mktemp("any") / f"d{suffix}"
    path.write_bytes("".join(parts).encode("utf-8", "surrogatepass"))
    try:
        load_design(path)
    except InputError as exc:
        assert exc.problems
        assert all(p.file == str(path) and p.line is not None and p.line >= 1 for p in exc.problems)
