"""The rule catalogue: every rule has a page in the fixed template, and its bad.yaml triggers exactly the
findings it declares (``# expect:``) while its good.yaml triggers nothing. Read through importlib.resources,
as an installed wheel would."""

from __future__ import annotations

import re
from importlib import resources
from pathlib import Path

import pytest
import yaml

from afecheck.engine.registry import BUILTIN_RULES, default_registry, retired_ids
from afecheck.engine.rule import RULE_ID
from afecheck.engine.runner import run_rules
from afecheck.model.load import load_design

CATALOGUE = resources.files("afecheck._catalogue")
SECTIONS = [
    "In the circuit", "On the bench", "Flagged and passing", "Limits and their sources", "Blind spots", "Sources",
]
METAS = default_registry().metas()
WITH_EXAMPLES = [r.meta for r in BUILTIN_RULES]


def page(meta) -> str:
    return CATALOGUE.joinpath(meta.folder, "rule.md").read_text(encoding="utf-8")


@pytest.mark.parametrize("meta", METAS, ids=lambda m: m.id)
def test_rule_page_follows_the_template(meta) -> None:
    text = page(meta)
    assert text.splitlines()[0] == f"# {meta.id}"
    assert f"Name: `{meta.slug}`." in text.splitlines()[2] and f"Family: {meta.family}." in text.splitlines()[2]
    assert re.findall(r"^## (.+)$", text, flags=re.M) == SECTIONS
    example = text.split("## Flagged and passing", 1)[1].split("## Limits and their sources", 1)[0]
    assert example.index("bad.yaml") < example.index("good.yaml")
    params = text.split("## Limits and their sources", 1)[1].split("## Blind spots", 1)[0]
    assert set(re.findall(r"`(\w+)`", params)) == {p.name for p in meta.params}


BORROWED_HEADINGS = ("What it checks", "Why it matters", "Use instead")
SHIPPED_DOCS = {"README.md", "DEVELOPERS.md", "docs/"}


@pytest.mark.parametrize("meta", METAS, ids=lambda m: m.id)
def test_rule_page_uses_no_borrowed_headings_and_cites_only_what_readers_have(meta) -> None:
    """Pages cite published sources by author and title; the internal worksheet is not shipped, so never cited."""
    text = page(meta)
    assert not any(h in text for h in BORROWED_HEADINGS)
    assert "RULES-REFERENCE" not in text and not re.search(r"\[(FR|GHLM|BODE|DER|CP|FM|NUM|SS|HH)\]", text)
    sources = text.split("## Sources", 1)[1].strip()
    assert sources and (re.search(r"\d{4}|common practice|own", sources)), "name a published source or say none"


def test_catalogue_folders_are_exactly_the_registered_rules() -> None:
    folders = {f"{fam.name}/{p.name}" for fam in CATALOGUE.iterdir() if fam.is_dir() and fam.name not in ("sets",)
               and not fam.name.startswith("_") for p in fam.iterdir() if p.is_dir() and not p.name.startswith("_")}
    assert folders == {m.folder for m in METAS}


def test_ids_and_slugs_are_well_formed_unique_and_not_retired() -> None:
    assert all(RULE_ID.fullmatch(m.id) and m.id.split(".")[0] == m.family for m in METAS)
    assert all(re.fullmatch(r"[a-z0-9]+(-[a-z0-9]+)+", m.slug) for m in METAS)
    assert len({m.id for m in METAS}) == len({m.slug for m in METAS}) == len(METAS)
    retired = yaml.safe_load(CATALOGUE.joinpath("retired.yaml").read_text(encoding="utf-8"))
    assert isinstance(retired, list) and not set(retired_ids()) & {m.id for m in METAS}


def expected(path: Path) -> set[str]:
    line = next(ln for ln in path.read_text(encoding="utf-8").splitlines() if ln.startswith("# expect:"))
    return set(line.split(":", 1)[1].split())


@pytest.mark.parametrize("meta", WITH_EXAMPLES, ids=lambda m: m.id)
def test_bad_example_triggers_its_rule(meta) -> None:
    path = Path(str(CATALOGUE.joinpath(meta.folder, "bad.yaml")))
    found = run_rules(load_design(path))
    assert meta.id in expected(path)
    assert {f.rule for f in found} == expected(path)
    assert all(f.location.line for f in found if f.rule == meta.id)  # points at a line of the file


@pytest.mark.parametrize("meta", WITH_EXAMPLES, ids=lambda m: m.id)
def test_good_example_triggers_nothing(meta) -> None:
    path = Path(str(CATALOGUE.joinpath(meta.folder, "good.yaml")))
    assert run_rules(load_design(path)) == ()


def test_rules_name_prints_every_page_by_id_and_by_slug() -> None:
    import io

    from afecheck.cli import main

    for meta in METAS:
        for key in (meta.id, meta.slug):
            out = io.StringIO()
            assert main(["rules", key], stdout=out, stderr=io.StringIO()) == 0
            assert out.getvalue() == page(meta)


def test_findings_cite_published_sources_never_the_internal_worksheet() -> None:
    """Every finding's limit_source names a published work, a part model, a rule parameter or common practice; the
    internal worksheet (not shipped) and its tags never reach a user."""
    paths = [Path(str(CATALOGUE.joinpath(m.folder, "bad.yaml"))) for m in WITH_EXAMPLES]
    paths += sorted(p for p in (Path(__file__).parent.parent / "sample_designs").glob("*.yaml")
                    if not p.name.endswith(".intent.yaml"))
    seen = 0
    for path in paths:
        for f in run_rules(load_design(path)):
            source = str(f.ctx.get("limit_source", ""))
            assert "RULES-REFERENCE" not in source and not re.search(r"\[[A-Z]{2,}\d*\]", source), (f.rule, source)
            seen += bool(source)
    assert seen > 20
