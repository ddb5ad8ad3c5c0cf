"""``afecheck schema``: a valid, deterministic JSON Schema (draft 2020-12) that agrees with the pydantic model.

The outside reference is the ``jsonschema`` package's draft 2020-12 validator: the printed schema must be a
valid schema by the metaschema, accept the DEVELOPERS.md example, the sample designs, the shipped part
libraries and intent files, and reject the same broken documents the pydantic model rejects.
"""

from __future__ import annotations

import copy
import io
import json
from pathlib import Path
from typing import Any

import pytest
import yaml
from jsonschema import Draft202012Validator
from pydantic import ValidationError

from afecheck.cli import main
from afecheck.model.schema import Design, Intent
from afecheck.parts.library import PartLibraryFile

ROOT = Path(__file__).resolve().parent.parent
FIXTURES = Path(__file__).resolve().parent / "fixtures" / "load"


def _schema(*flags: str) -> tuple[dict[str, Any], str]:
    out, err = io.StringIO(), io.StringIO()
    assert main(["schema", *flags], stdout=out, stderr=err) == 0
    return json.loads(out.getvalue()), out.getvalue()


def _as_json(path: Path) -> Any:
    """The file's data as JSON would carry it (YAML integer keys such as pin ``1:`` become strings)."""
    return json.loads(json.dumps(yaml.safe_load(path.read_text(encoding="utf-8"))))


DESIGN_SCHEMA, DESIGN_TEXT = _schema()
VALIDATOR = Draft202012Validator(DESIGN_SCHEMA)


def test_schema_is_valid_by_the_metaschema_and_deterministic() -> None:
    Draft202012Validator.check_schema(DESIGN_SCHEMA)
    assert DESIGN_SCHEMA["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    assert _schema()[1] == DESIGN_TEXT
    assert DESIGN_TEXT == json.dumps(json.loads(DESIGN_TEXT), indent=2, sort_keys=True, ensure_ascii=False) + "\n"


def test_developers_example_is_valid_for_both() -> None:
    data = _as_json(FIXTURES / "developers_example.yaml")
    assert list(VALIDATOR.iter_errors(data)) == []
    design = Design.model_validate(data)
    assert design.components["R1"].value == pytest.approx(4.7e3)  # [IEC60062] 4k7
    assert design.loads["OUT"].adc.bits == 12


@pytest.mark.parametrize("sample", sorted((ROOT / "sample_designs").glob("*.yaml")), ids=lambda p: p.name)
def test_sample_designs_are_valid_by_the_schema(sample: Path) -> None:
    """Designs against the design schema, intent files beside them against the intent schema."""
    if sample.name.endswith(".intent.yaml"):
        schema, _ = _schema("--intent")
        validator = Draft202012Validator(schema)
    else:
        validator = VALIDATOR
    assert list(validator.iter_errors(_as_json(sample))) == []


def _mutations() -> list[tuple[str, Any]]:
    base = _as_json(FIXTURES / "developers_example.yaml")
    cases = []

    def mutate(label: str, fn: Any) -> None:
        data = copy.deepcopy(base)
        fn(data)
        cases.append((label, data))

    mutate("unknown top-level key", lambda d: d.update(extra_section={}))
    mutate("format version 2", lambda d: d.update(afecheck=2))
    mutate("version missing", lambda d: d.pop("afecheck"))
    mutate("kind missing", lambda d: d["components"]["R1"].pop("kind"))
    mutate("unknown kind", lambda d: d["components"]["R1"].update(kind="transformer"))
    mutate("value missing", lambda d: d["components"]["R1"].pop("value"))
    mutate("unknown component key", lambda d: d["components"]["R1"].update(colour="blue"))
    mutate("pins not a mapping", lambda d: d["components"]["R1"].update(pins=["IN", "INM"]))
    mutate("part missing on an op-amp", lambda d: d["components"]["U1"].pop("part"))
    mutate("voltage as a list", lambda d: d["rails"]["VCC"].update(voltage=[5]))
    mutate("tolerance as a boolean", lambda d: d["rails"]["VCC"].update(tolerance=True))
    mutate("ADC bits zero", lambda d: d["loads"]["OUT"]["adc"].update(bits=0))
    mutate("ADC bits missing", lambda d: d["loads"]["OUT"]["adc"].pop("bits"))
    mutate("unknown hazard", lambda d: d.update(hazards=["radioactive"]))
    mutate("band with three ends", lambda d: d["signals"]["IN"].update(band=["10 Hz", "1 kHz", "2 kHz"]))
    mutate("unknown input stage", lambda d: d["parts"]["MY-OPAMP"].update(input_stage="tube"))
    mutate("part without gbw", lambda d: d["parts"]["MY-OPAMP"].pop("gbw"))
    mutate("empty net name", lambda d: d["components"]["R1"]["pins"].update({"1": ""}))
    return cases


@pytest.mark.parametrize(("label", "data"), _mutations(), ids=[label for label, _ in _mutations()])
def test_schema_and_model_reject_the_same_broken_documents(label: str, data: Any) -> None:
    assert list(VALIDATOR.iter_errors(data)), f"schema accepted: {label}"
    with pytest.raises(ValidationError):
        Design.model_validate(data)


def test_intent_schema_accepts_the_intent_fixture_and_agrees_on_a_missing_version() -> None:
    schema, _ = _schema("--intent")
    Draft202012Validator.check_schema(schema)
    validator = Draft202012Validator(schema)
    data = _as_json(FIXTURES / "soil_logger.intent.yaml")
    assert list(validator.iter_errors(data)) == []
    Intent.model_validate(data)
    data.pop("afecheck-intent")
    assert list(validator.iter_errors(data))
    with pytest.raises(ValidationError):
        Intent.model_validate(data)


def test_parts_schema_accepts_the_shipped_libraries() -> None:
    schema, _ = _schema("--parts")
    Draft202012Validator.check_schema(schema)
    validator = Draft202012Validator(schema)
    files = sorted((ROOT / "afecheck" / "parts" / "library").glob("*.yaml"))
    assert len(files) >= 6
    for path in files + [FIXTURES / "libs" / "field_parts.yaml"]:
        data = _as_json(path)
        assert list(validator.iter_errors(data)) == [], path.name
        PartLibraryFile.model_validate(data)


def test_schema_flags_are_exclusive() -> None:
    out, err = io.StringIO(), io.StringIO()
    assert main(["schema", "--intent", "--parts"], stdout=out, stderr=err) == 2
