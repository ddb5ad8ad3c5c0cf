"""The lean loader: positions are built only when something needs them, and then say exactly what they said
when every key's position was stored up front (the reference below rebuilds that eager table from the file)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from afecheck import api
from afecheck.errors import InputError
from afecheck.model import reader
from afecheck.model.load import load_design
from afecheck.model.reader import MAX_DEPTH, read_file

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_designs"
FIXTURES = Path(__file__).resolve().parent / "fixtures" / "load"
CASES = [(SAMPLES / "vibration_follower.yaml", SAMPLES / "vibration_follower.intent.yaml"),
         (SAMPLES / "hive_scale.cir", SAMPLES / "hive_scale.intent.yaml"),
         (FIXTURES / "soil_logger.yaml", None),
         *[(p, None) for p in sorted(SAMPLES.glob("*.yaml")) if not p.name.endswith(".intent.yaml")]]


def _eager(doc: reader.Document, intents: list[reader.Document]) -> dict:
    """Every key path -> (file, line, column) as the loader once stored it for all keys before any use: the
    design's values, its keys over them, then each intent file's entries (all but the entry's own key where it
    refines a netlist source's default), and its operating temperature's keys."""
    table = {p: (doc.file_of(p), *lc) for p, lc in doc.values.items() if p}
    table.update({p: (doc.file_of(p), *lc) for p, lc in doc.keys.items()})
    for idoc in intents:
        for p, lc in [*idoc.values.items(), *idoc.keys.items()]:
            if len(p) >= 2 and p[0] in ("signals", "loads", "budgets"):
                if p[:2] in doc.defaults:
                    if len(p) > 2:
                        table[p] = (idoc.file, *lc)
                elif p[1] not in (doc.data.get(p[0]) or {}):
                    table[p] = (idoc.file, *lc)
        table.update({p: (idoc.file, *lc) for p, lc in idoc.keys.items() if p[:1] == ("operating_temperature",)})
    return table


@pytest.mark.parametrize(("design", "intent"), CASES, ids=lambda p: p.name if p else "-")
def test_positions_on_demand_equal_the_table_once_built_up_front(design: Path, intent: Path | None) -> None:
    loaded = load_design(design, intent=intent)
    if design.suffix == ".cir":
        from afecheck.model.spice_reader import read_netlist

        doc = read_netlist(design, str(design), intent_files=(intent,))
        intents = [read_file(intent, str(intent))]
    else:
        doc = read_file(design, str(design))
        named = doc.data.get("intent")
        paths = [design.parent / named] if named else ([intent] if intent else [])
        intents = [read_file(p, str(p)) for p in paths]
    eager = _eager(doc, intents)
    assert eager
    for path, place in eager.items():
        if path[:1] == ("components",) and len(path) >= 2 and path[1] not in loaded.design.components:
            continue  # a sensor the loader expanded into arms
        assert loaded.positions.get(path) == place, path
    for ref, comp in loaded.design.components.items():
        if comp.kind == "bridge_arm":
            assert loaded.position("components", ref) == eager[("components", comp.bridge)]


def _spy_on_index(monkeypatch: pytest.MonkeyPatch) -> list[str]:
    built: list[str] = []
    for name in ("_json_index", "_yaml_index"):
        real = getattr(reader, name)

        def spy(text: str, file: str, real=real) -> reader.PositionIndex:
            built.append(file)
            return real(text, file)

        monkeypatch.setattr(reader, name, spy)
    return built


def test_a_clean_check_never_builds_positions(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    import sys

    sys.path.insert(0, str(ROOT / "tests"))
    from tools.generate import write_design

    built = _spy_on_index(monkeypatch)
    design = write_design(tmp_path / "rack.json", 3)
    report = api.review_files([str(design), str(SAMPLES / "vibration_follower.yaml")], fail_on="never",
                              discover=False)
    assert not report.designs[0].entries  # the generated rack is clean ...
    assert str(design) not in built  # ... so its positions were never built
    finding = report.designs[1].entries[0].finding  # the sample has findings, placed at real lines
    assert finding.location.line is not None and str(SAMPLES / "vibration_follower.yaml") in built


def test_the_loaded_design_does_not_keep_the_data_read(monkeypatch: pytest.MonkeyPatch) -> None:
    import gc
    import weakref

    docs: list[weakref.ref] = []
    real = reader._read_yaml

    def keep(text: str, file: str) -> reader.Document:
        doc = real(text, file)
        docs.append(weakref.ref(doc))
        return doc

    monkeypatch.setattr(reader, "_read_yaml", keep)
    loaded = load_design(SAMPLES / "vibration_follower.yaml")
    gc.collect()
    assert docs and all(ref() is None for ref in docs)  # the Documents holding the data are gone ...
    assert loaded.position("components", "U1")[1] is not None  # ... and positions are still found


def test_json_duplicate_key_found_while_parsing_is_placed_exactly(tmp_path: Path) -> None:
    path = tmp_path / "d.json"
    path.write_text('{"afecheck": 1,\n "rails": {"VCC": {"voltage": "5 V",\n   "voltage": "3 V"}}}\n')
    with pytest.raises(InputError) as info:
        read_file(path)
    assert [str(p) for p in info.value.problems] == [
        f"{path}:3:4: rails.VCC.voltage: duplicate key 'voltage' (first at line 2); each name once"]


@pytest.mark.parametrize("depth", [MAX_DEPTH, MAX_DEPTH + 1])
def test_json_nesting_just_past_the_limit_is_refused_and_at_it_read(tmp_path: Path, depth: int) -> None:
    path = tmp_path / "deep.json"
    path.write_text('{"x": ' + "[" * (depth - 1) + "]" * (depth - 1) + "}")  # the top object is one level
    if depth <= MAX_DEPTH:
        assert read_file(path).data["x"] is not None
        return
    with pytest.raises(InputError) as info:
        read_file(path)
    assert [str(p) for p in info.value.problems] == [f"{path}:1:{7 + MAX_DEPTH - 1}: nesting deeper than "
                                                     f"{MAX_DEPTH} levels"]


def test_json_positions_built_later_match_the_text(tmp_path: Path) -> None:
    data = {"afecheck": 1, "rails": {"VCC": {"voltage": "5 V"}}, "hazards": ["a", "b"]}
    path = tmp_path / "d.json"
    path.write_text(json.dumps(data, indent=1))
    doc = read_file(path)
    assert not doc.indexed
    lines = path.read_text().splitlines()
    line, column = doc.keys[("rails", "VCC", "voltage")]
    assert lines[line - 1][column - 1:].startswith('"voltage"')
    line, column = doc.values[("hazards", 1)]
    assert lines[line - 1][column - 1:].startswith('"b"')
    assert doc.indexed
