"""Reporters: pure functions from :class:`afecheck.report.data.Report` to text. They never compute circuits."""

from __future__ import annotations

import importlib
from collections.abc import Callable

from afecheck.report.data import Report

FORMATS: tuple[str, ...] = ("text", "json", "sarif", "junit", "markdown", "html")


_RENDERERS: dict[str, tuple[str, str]] = {
    "json": ("afecheck.report.json_report", "render_json"),
    "sarif": ("afecheck.report.sarif", "render_sarif"),
    "junit": ("afecheck.report.junit", "render_junit"),
    "markdown": ("afecheck.report.markdown", "render_markdown"),
    "html": ("afecheck.report.html", "render_html"),
}


def render(report: Report, fmt: str, color: bool = False) -> str:
    """Render ``report`` in format ``fmt`` (one of :data:`FORMATS`); only that format's module is imported."""
    if fmt == "text":
        from afecheck.report.text import render_text

        return render_text(report, color=color)
    if fmt not in _RENDERERS:
        raise ValueError(f"unknown report format {fmt!r}; expected one of {', '.join(FORMATS)}")
    module, function = _RENDERERS[fmt]
    renderer: Callable[[Report], str] = getattr(importlib.import_module(module), function)
    return renderer(report)
