"""The clean-design corpus: sound front ends of every topology the analysis knows stay free of warnings and
errors, and each has a defective twin (one planted mistake) that the named rules catch.

Each defective file says what was planted and lists the rules it must raise (``# expect:``) at warning or above.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from afecheck.api import check_file
from afecheck.engine.finding import Severity

CORPUS = Path(__file__).parent / "corpus"
CLEAN = sorted((CORPUS / "clean").glob("*.yaml"))
DEFECTIVE = sorted((CORPUS / "defective").glob("*.yaml"))


def expected(path: Path) -> set[str]:
    line = next(ln for ln in path.read_text(encoding="utf-8").splitlines() if ln.startswith("# expect:"))
    return set(line.split(":", 1)[1].split())


def test_corpus_has_at_least_25_sound_designs_each_with_a_defective_twin() -> None:
    assert len(CLEAN) >= 25
    assert [p.name for p in CLEAN] == [p.name for p in DEFECTIVE]


@pytest.mark.parametrize("path", CLEAN, ids=lambda p: p.stem)
def test_clean_design_raises_no_warning_or_error(path: Path) -> None:
    loud = [f"{f.rule} {f.severity.label}: {f.message}" for f in check_file(path).findings
            if f.severity >= Severity.WARNING]
    assert loud == []


@pytest.mark.parametrize("path", DEFECTIVE, ids=lambda p: p.stem)
def test_defective_twin_raises_its_rule(path: Path) -> None:
    found = {f.rule for f in check_file(path).findings if f.severity >= Severity.WARNING}
    assert expected(path) <= found, sorted(found)
