"""afecheck run from the repository root with no installed mapping of ``rules/``: the source folder hides any
installed copy (``python -m afecheck`` puts the current folder first), so the rule catalogue must still be found."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

# The child drops every import finder that is not Python's own (an editable install's, which maps rules/ onto
# afecheck._catalogue) and imports afecheck from the source folder, as a plain checkout or a wheel run from the
# repository root does.
CHILD = """
import sys
sys.meta_path[:] = [f for f in sys.meta_path if getattr(f, "__module__", "").startswith(("_frozen", "importlib"))
                    or f.__class__.__module__.startswith(("_frozen", "importlib"))]
sys.path.insert(0, {root!r})
import importlib.util
assert importlib.util.find_spec("afecheck._catalogue") is None, "the test needs the catalogue package unmapped"
from afecheck.cli import main
sys.exit(main(sys.argv[1:]))
"""


def _run(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-c", CHILD.format(root=str(ROOT)), *args], cwd=ROOT,
                          capture_output=True, text=True, timeout=120)


def test_rule_page_read_from_the_source_rules_folder() -> None:
    proc = _run("rules", "stability.phase-margin")
    assert proc.returncode == 0, proc.stderr
    page = (ROOT / "rules" / "stability" / "phase-margin" / "rule.md").read_text(encoding="utf-8")
    assert page.splitlines()[2] in proc.stdout  # the page's first paragraph, as written in rules/


def test_check_with_a_shipped_rule_set_and_retired_ids_from_the_source_tree() -> None:
    proc = _run("check", "--no-config", "--ruleset", "precision", "--fail-on", "never",
                "sample_designs/soil_probe_reader.yaml")
    assert proc.returncode == 0, proc.stderr
    assert "internal error" not in proc.stderr
    assert "afecheck: 1 design:" in proc.stdout
