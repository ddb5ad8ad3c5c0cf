"""Nothing lost: afecheck never writes to its inputs (hashes and directory listings before and after runs)."""

from __future__ import annotations

import hashlib
import io
import shutil
from pathlib import Path

import pytest

from afecheck.cli import main

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = sorted(p for p in (ROOT / "sample_designs").glob("*.yaml") if not p.name.endswith(".intent.yaml"))


def _snapshot(folder: Path) -> dict[str, tuple[str, int]]:
    """sha256 and modification time (ns) of every file below ``folder``."""
    return {
        str(p.relative_to(folder)): (hashlib.sha256(p.read_bytes()).hexdigest(), p.stat().st_mtime_ns)
        for p in sorted(folder.rglob("*"))
        if p.is_file()
    }


# an intent and a library that every sample accepts (a load on a net a sample already has would clash: exit 2)
INTENT = "afecheck-intent: 1\nbudgets: {}\n"
LIBRARY = "parts:\n  COPY-AMP: {gbw: 2 MHz, open_loop_gain: 110 dB}\n"


@pytest.mark.parametrize("sample", [p.name for p in SAMPLES])
def test_commands_leave_a_copy_of_each_sample_untouched(tmp_path: Path, sample: str) -> None:
    # common practice: a review tool reads its inputs and writes only to its own outputs
    for entry in (ROOT / "sample_designs").glob("*.yaml"):  # the sample and any intent file beside it
        shutil.copy(entry, tmp_path / entry.name)
    (tmp_path / "intent.yaml").write_text(INTENT, encoding="utf-8")
    (tmp_path / "extra_parts.yaml").write_text(LIBRARY, encoding="utf-8")
    before = _snapshot(tmp_path)
    design = str(tmp_path / sample)
    runs = [
        ["check", design],
        ["check", "--fail-on", "never", design],
        ["check", "--intent", str(tmp_path / "intent.yaml"), "--parts", str(tmp_path / "extra_parts.yaml"), design],
        ["stages", design],
        ["spice", design],
    ]
    from afecheck.api import check_file
    from afecheck.engine.finding import Severity

    fails = int(any(f.severity == Severity.ERROR for f in check_file(ROOT / "sample_designs" / sample).findings))
    for argv, expected in zip(runs, (fails, 0, fails, 0, 0), strict=True):
        err = io.StringIO()
        assert main(argv, stdout=io.StringIO(), stderr=err) == expected, (argv, err.getvalue())
    assert _snapshot(tmp_path) == before


def test_samples_in_place_are_untouched() -> None:
    # the shipped samples themselves, checked where they stand
    folder = ROOT / "sample_designs"
    before = _snapshot(folder)
    for sample in SAMPLES:
        main(["check", "--fail-on", "never", str(sample)], stdout=io.StringIO(), stderr=io.StringIO())
    assert _snapshot(folder) == before


def test_bad_input_is_not_rewritten(tmp_path: Path) -> None:
    # an input error must not "repair" or truncate the file it complains about
    bad = tmp_path / "bad.yaml"
    bad.write_bytes(b"afecheck: 1\ncomponents:\n  R1: {kind: resistor, value: -5, pins: {1: A, 2: B}}\n\xff\n")
    before = _snapshot(tmp_path)
    rc = main(["check", str(bad)], stdout=io.StringIO(), stderr=io.StringIO())
    assert rc == 2
    assert _snapshot(tmp_path) == before
