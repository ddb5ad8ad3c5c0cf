"""Reporters only render: nothing under afecheck/report/ may import the analysis package (STYLE: three things)."""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

REPORT = Path(__file__).parents[1] / "afecheck" / "report"


def test_report_modules_do_not_import_analysis():
    offenders = []
    for path in sorted(REPORT.rglob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            names = []
            if isinstance(node, ast.Import):
                names = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom) and node.module:
                names = [node.module] + [f"{node.module}.{a.name}" for a in node.names]
            offenders += [f"{path.name}: {n}" for n in names if n.startswith(("afecheck.analysis", "afecheck.graph"))]
    assert offenders == []


def test_importing_every_reporter_loads_no_analysis():
    code = ("import sys, afecheck.report as r\n"
            "import afecheck.report.text, afecheck.report.json_report, afecheck.report.sarif, "
            "afecheck.report.junit, afecheck.report.markdown, afecheck.report.html, afecheck.report.plots, "
            "afecheck.report.markup, afecheck.report.stage_lines\n"
            "bad = [m for m in sys.modules if m.startswith(('afecheck.analysis', 'afecheck.graph', 'numpy', "
            "'matplotlib', 'jinja2'))]\n"
            "print(bad)\n")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"
