"""Loading designs: positions of every key, JSON and YAML alike, intent files, part libraries and their precedence.

Expected line numbers are found by searching the fixture text itself, never taken from the loader.
Values read from codes are IEC 60062 check values (RULES-REFERENCE R5h, [IEC60062]).
"""

from __future__ import annotations

import hashlib
import json
import shutil
from pathlib import Path

import pytest
import yaml

from afecheck.errors import InputError
from afecheck.model.load import load_design

ROOT = Path(__file__).resolve().parent.parent
FIXTURES = Path(__file__).resolve().parent / "fixtures" / "load"
SAMPLES = sorted(p for p in (ROOT / "sample_designs").glob("*.yaml") if not p.name.endswith(".intent.yaml"))


def line_of(text: str, needle: str, start: int = 1) -> int:
    """1-based number of the first line at or after ``start`` that contains ``needle``."""
    for number, line in enumerate(text.splitlines(), start=1):
        if number >= start and needle in line:
            return number
    raise AssertionError(f"{needle!r} not in text")


def write(folder: Path, name: str, text: str) -> Path:
    path = folder / name
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    return path


def problems_of(exc: pytest.ExceptionInfo[InputError]) -> list[str]:
    return [str(p) for p in exc.value.problems]


@pytest.mark.parametrize("sample", SAMPLES, ids=lambda p: p.name)
def test_samples_load_with_every_component_at_its_line(sample: Path) -> None:
    loaded = load_design(sample)
    text = sample.read_text(encoding="utf-8")
    assert loaded.design.components
    for ref in loaded.design.components:
        file, line, column = loaded.position("components", ref)
        assert file == str(sample)
        owner = getattr(loaded.design.components[ref], "bridge", ref)  # a bridge's arms sit on its line
        assert line == line_of(text, f"  {owner}:")
        assert column == 3


def test_fixture_with_intent_file_library_and_inline_part() -> None:
    design = FIXTURES / "soil_logger.yaml"
    intent = FIXTURES / "soil_logger.intent.yaml"
    loaded = load_design(design)
    d = loaded.design
    assert d.components["R2"].value == pytest.approx(4.7e3)  # [IEC60062] 4K7F = 4.7 kΩ
    assert d.components["R2"].tolerance == pytest.approx(0.01)  # [IEC60062] F = ±1 %
    assert d.components["C1"].value == pytest.approx(1e-9)  # [IEC60062] 1n0 = 1.0 nF
    # intent merged, its positions point into the intent file
    assert d.loads["BUF"].adc.bits == 12
    assert d.budgets["BUF"].noise == pytest.approx(1e-3)
    itext = intent.read_text(encoding="utf-8")
    assert loaded.position("loads", "BUF") == (str(intent), line_of(itext, "BUF:"), 3)
    assert loaded.position("budgets", "BUF", "noise")[1] == line_of(itext, "noise:")
    assert loaded.intent_files == (str(intent),)
    # the design's own parts: entry redefines a built-in archetype and wins
    dtext = design.read_text(encoding="utf-8")
    assert loaded.parts["AFE-GP1"].gbw == pytest.approx(1.2e6)
    assert loaded.part_origins["AFE-GP1"] == f"{design}:{line_of(dtext, 'AFE-GP1: {gbw')}"
    # a part from the design's part_libraries: file, origin in that file
    lib = FIXTURES / "libs" / "field_parts.yaml"
    assert loaded.parts["FIELD-AMP"].input_stage == "zero-crossover"
    assert loaded.part_origins["FIELD-AMP"] == f"{lib}:{line_of(lib.read_text(encoding='utf-8'), 'FIELD-AMP:')}"
    assert loaded.part_origins["AFE-PREC1"].startswith("built-in")
    # block-style mapping keys and list items are located too
    assert loaded.position("components", "U2", "pins", "in-")[1] == line_of(dtext, "in-: BUF")
    assert loaded.position("signals", "PROBE", "dc", 1)[1] == line_of(dtext, "PROBE: {dc")


def test_locate_gives_a_findings_location() -> None:
    design = FIXTURES / "soil_logger.yaml"
    loaded = load_design(design)
    loc = loaded.locate(refs=("R2",), nets=("OUT",))
    assert (loc.file, loc.line, loc.path) == (str(design), line_of(design.read_text(encoding="utf-8"), "  R2:"),
                                               "components.R2")
    loc = loaded.locate(nets=("BUF",))
    assert loc.file.endswith("soil_logger.intent.yaml")


def test_json_design_is_located_like_yaml(tmp_path: Path) -> None:
    data = yaml.safe_load((FIXTURES / "soil_logger.yaml").read_text(encoding="utf-8"))
    for folder in ("libs",):
        shutil.copytree(FIXTURES / folder, tmp_path / folder)
    shutil.copy(FIXTURES / "soil_logger.intent.yaml", tmp_path)
    text = json.dumps(data, indent=2, default=str)
    path = write(tmp_path, "logger.json", text)
    loaded = load_design(path)
    assert loaded.design.components["R1"].value == 1e4
    assert loaded.position("components", "R1") == (str(path), line_of(text, '"R1": {'), 5)
    assert loaded.position("components", "U2", "pins", "out")[1] == line_of(text, '"out": "BUF"')
    assert loaded.position("signals", "PROBE", "dc", 0)[1] == line_of(text, '"1 V"')


def test_json_duplicate_keys_are_refused(tmp_path: Path) -> None:
    text = '{\n  "afecheck": 1,\n  "components": {\n    "R1": {},\n    "R1": {}\n  }\n}\n'
    path = write(tmp_path, "dup.json", text)
    with pytest.raises(InputError) as info:
        load_design(path)
    assert problems_of(info) == [f"{path}:5:5: components.R1: duplicate key 'R1' (first at line 4); each name once"]


def test_intent_file_from_the_command_line(tmp_path: Path) -> None:
    design = write(tmp_path, "d.yaml", "afecheck: 1\nrails:\n  VCC: {voltage: 3.3 V}\ncomponents:\n"
                   "  R1: {kind: resistor, value: 1k, pins: {1: VCC, 2: OUT}}\n"
                   "  R2: {kind: resistor, value: 1k, pins: {1: OUT, 2: GND}}\n")
    intent = write(tmp_path / "elsewhere", "i.yaml", "afecheck-intent: 1\nloads:\n  OUT: {resistance: 10k}\n")
    loaded = load_design(design, intent=intent)
    assert loaded.design.loads["OUT"].resistance == 1e4
    assert loaded.position("loads", "OUT") == (str(intent), 3, 3)


def test_same_net_in_design_and_intent_is_an_error_naming_both(tmp_path: Path) -> None:
    design = write(tmp_path, "d.yaml", "afecheck: 1\nintent: i.yaml\nrails:\n  VCC: {voltage: 3.3 V}\ncomponents:\n"
                   "  R1: {kind: resistor, value: 1k, pins: {1: VCC, 2: OUT}}\nloads:\n  OUT: {resistance: 1k}\n")
    intent = write(tmp_path, "i.yaml", "afecheck-intent: 1\nloads:\n\n  OUT: {resistance: 10k}\n")
    with pytest.raises(InputError) as info:
        load_design(design)
    assert problems_of(info) == [
        f"{intent}:4:3: loads.OUT: loads for net 'OUT' are declared here and at {design}:8; keep one"]


def test_intent_named_twice_is_read_once(tmp_path: Path) -> None:
    design = write(tmp_path, "d.yaml", "afecheck: 1\nintent: i.yaml\ncomponents:\n"
                   "  R1: {kind: resistor, value: 1k, pins: {1: GND, 2: OUT}}\n")
    intent = write(tmp_path, "i.yaml", "afecheck-intent: 1\nloads:\n  OUT: {resistance: 10k}\n")
    loaded = load_design(design, intent=intent)
    assert list(loaded.design.loads) == ["OUT"]


def test_intent_file_needs_its_version_and_reports_its_own_lines(tmp_path: Path) -> None:
    design = write(tmp_path, "d.yaml", "afecheck: 1\ncomponents:\n"
                   "  R1: {kind: resistor, value: 1k, pins: {1: GND, 2: OUT}}\nloads:\n  OUT: {resistance: 1k}\n")
    intent = write(tmp_path, "i.yaml", "loads:\n  X: {resistanse: 10k}\n")
    with pytest.raises(InputError) as info:
        load_design(design, intent=intent)
    assert problems_of(info) == [
        f"{intent}:1:1: required key 'afecheck-intent' is missing",
        f"{intent}:2:7: loads.X.resistanse: unknown key 'resistanse'; did you mean 'resistance'?",
    ]


LIB_A = "afecheck-parts: 1\nparts:\n  SHARED-AMP: {gbw: 1 MHz}\n"
LIB_B = "parts:\n  OTHER-AMP: {gbw: 2 MHz}\n\n  SHARED-AMP: {gbw: 3 MHz}\n"
USES_SHARED = ("afecheck: 1\n{head}rails:\n  VCC: {{voltage: 5 V}}\ncomponents:\n"
               "  U1: {{kind: opamp, part: SHARED-AMP, pins: {{in+: GND, in-: OUT, out: OUT, v+: VCC, v-: GND}}}}\n")


def test_command_line_library_adds_parts(tmp_path: Path) -> None:
    lib = write(tmp_path / "libs", "a.yaml", LIB_A)
    design = write(tmp_path, "d.yaml", USES_SHARED.format(head=""))
    loaded = load_design(design, libraries=(lib,))
    assert loaded.parts["SHARED-AMP"].gbw == 1e6
    assert loaded.part_origins["SHARED-AMP"] == f"{lib}:3"


def test_part_defined_in_two_libraries_is_an_error_naming_both(tmp_path: Path) -> None:
    write(tmp_path / "libs", "a.yaml", LIB_A)
    lib_b = write(tmp_path, "b.yaml", LIB_B)
    design = write(tmp_path, "d.yaml", USES_SHARED.format(head="part_libraries: [libs/a.yaml]\n"))
    with pytest.raises(InputError) as info:
        load_design(design, libraries=(lib_b,))
    assert problems_of(info) == [
        f"{lib_b}:4:3: parts.SHARED-AMP: part 'SHARED-AMP' is already defined in {tmp_path / 'libs' / 'a.yaml'}:3; "
        "rename one (only a design's own parts: entry may redefine a part)"]


def test_library_may_not_redefine_a_built_in_archetype(tmp_path: Path) -> None:
    lib = write(tmp_path, "gp.yaml", "parts:\n  AFE-GP1: {gbw: 3 MHz}\n")
    design = write(tmp_path, "d.yaml", USES_SHARED.format(head="parts:\n  SHARED-AMP: {gbw: 1 MHz}\n"))
    with pytest.raises(InputError) as info:
        load_design(design, libraries=(lib,))
    (message,) = problems_of(info)
    assert message.startswith(f"{lib}:2:3: parts.AFE-GP1: part 'AFE-GP1' is already defined in built-in (gp1.yaml)")


def test_library_errors_carry_the_library_file_and_line(tmp_path: Path) -> None:
    lib = write(tmp_path, "bad.yaml", "parts:\n  X-AMP:\n    gbw: 1 MHz\n    slew_rate: fast\n")
    design = write(tmp_path, "d.yaml", USES_SHARED.format(head="part_libraries: [bad.yaml]\n"))
    with pytest.raises(InputError) as info:
        load_design(design)
    (message,) = problems_of(info)
    assert message.startswith(f"{lib}:4:16: parts.X-AMP.slew_rate: read 'fast'")


def test_library_listed_in_design_and_on_command_line_is_read_once(tmp_path: Path) -> None:
    lib = write(tmp_path, "a.yaml", LIB_A)
    design = write(tmp_path, "d.yaml", USES_SHARED.format(head="part_libraries: [a.yaml]\n"))
    assert load_design(design, libraries=(lib,)).parts["SHARED-AMP"].gbw == 1e6


@pytest.mark.parametrize("ref", ["../outside.yaml", "libs/../../outside.yaml", "/etc/hostname", "C:/parts.yaml"])
def test_referenced_paths_must_stay_in_the_design_folder(tmp_path: Path, ref: str) -> None:
    inner = tmp_path / "project"
    write(tmp_path, "outside.yaml", LIB_A)
    design = write(inner, "d.yaml", USES_SHARED.format(head=f"part_libraries:\n  - {ref}\n"))
    with pytest.raises(InputError) as info:
        load_design(design)
    (problem,) = info.value.problems
    assert (problem.file, problem.line, problem.path) == (str(design), 3, "part_libraries.0")
    if ref.startswith(("/", "C:")):
        assert problem.message == f"absolute path {ref!r} refused: give a path relative to the design file's folder"
    else:
        assert problem.message == (f"path {ref!r} leads outside the design file's folder; referenced files must lie "
                                   "in that folder or below it")


def test_intent_path_escaping_the_folder_is_refused(tmp_path: Path) -> None:
    write(tmp_path, "i.yaml", "afecheck-intent: 1\n")
    design = write(tmp_path / "p", "d.yaml", "afecheck: 1\nname: x\nintent: ../i.yaml\n")
    with pytest.raises(InputError) as info:
        load_design(design)
    assert problems_of(info) == [
        f"{design}:3:1: intent: path '../i.yaml' leads outside the design file's folder; referenced files must lie "
        "in that folder or below it"]


def test_missing_referenced_file_is_named(tmp_path: Path) -> None:
    design = write(tmp_path, "d.yaml", "afecheck: 1\nintent: nowhere.yaml\n")
    with pytest.raises(InputError) as info:
        load_design(design)
    assert problems_of(info) == [f"{design}:2:1: intent: no such file '{tmp_path / 'nowhere.yaml'}'"]


def test_missing_command_line_files_are_named(tmp_path: Path) -> None:
    design = write(tmp_path, "d.yaml", "afecheck: 1\n")
    with pytest.raises(InputError) as info:
        load_design(design, intent=tmp_path / "i.yaml", libraries=(tmp_path / "lib.yaml",))
    assert problems_of(info) == [f"{tmp_path / 'i.yaml'}: no such file", f"{tmp_path / 'lib.yaml'}: no such file"]


def test_yaml_1_1_words_stay_net_names(tmp_path: Path) -> None:
    # YAML 1.1 would read ON/NO as booleans and 010 as octal 8; a net called ON must stay a name
    design = write(tmp_path, "d.yaml", "afecheck: 1\nrails:\n  VCC: {voltage: 5 V}\ncomponents:\n"
                   "  R1: {kind: resistor, value: 010, pins: {1: ON, 2: NO}}\n"
                   "  R2: {kind: resistor, value: 1k, pins: {1: NO, 2: GND}}\n"
                   "signals:\n  ON: {dc: [0, 1 V]}\n")
    d = load_design(design).design
    assert d.components["R1"].pins == {"1": "ON", "2": "NO"}
    assert d.components["R1"].value == 10.0


def test_loading_never_modifies_the_inputs(tmp_path: Path) -> None:
    for item in FIXTURES.iterdir():
        (shutil.copytree if item.is_dir() else shutil.copy)(item, tmp_path / item.name)
    files = sorted(p for p in tmp_path.rglob("*") if p.is_file())
    before = {p: (hashlib.sha256(p.read_bytes()).hexdigest(), p.stat().st_mtime_ns) for p in files}
    load_design(tmp_path / "soil_logger.yaml")
    after = {p: (hashlib.sha256(p.read_bytes()).hexdigest(), p.stat().st_mtime_ns) for p in files}
    assert before == after
    assert sorted(p for p in tmp_path.rglob("*") if p.is_file()) == files
