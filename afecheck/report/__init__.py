"""Reporters: pure functions from :class:`afecheck.report.data.Report` to text. They never compute circuits."""

from __future__ import annotations

from collections.abc import Callable

from afecheck.report.data import Report

FORMATS: tuple[str, ...] = ("text", "json", "sarif", "junit", "markdown", "html")


def render(report: Report, fmt: str, color: bool = False) -> str:
    """Render ``report`` in format ``fmt`` (one of :data:`FORMATS`)."""
    from afecheck.report.json_report import render_json
    from afecheck.report.junit import render_junit
    from afecheck.report.markdown import render_markdown
    from afecheck.report.sarif import render_sarif
    from afecheck.report.text import render_text

    table: dict[str, Callable[[Report], str]] = {
        "json": render_json,
        "sarif": render_sarif,
        "junit": render_junit,
        "markdown": render_markdown,
    }
    if fmt == "text":
        return render_text(report, color=color)
    if fmt == "html":
        from afecheck.report.html import render_html

        return render_html(report)
    if fmt not in table:
        raise ValueError(f"unknown report format {fmt!r}; expected one of {', '.join(FORMATS)}")
    return table[fmt](report)
