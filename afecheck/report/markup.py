"""Rule pages (rules/*/rule.md) as HTML for the report: the small Markdown subset the pages use (headings,
paragraphs, bullet lists, tables, fenced code, inline code and emphasis). Every piece of text is escaped before
any markup is added, so nothing in a page can become an element."""

from __future__ import annotations

import html
import re

_STRONG = re.compile(r"\*\*(.+?)\*\*")
_EM = re.compile(r"(?<![\w*])\*(?!\s)(.+?)(?<!\s)\*(?![\w*])")


def inline(text: str) -> str:
    """Escaped text with `code`, **strong** and *emphasis* (no emphasis inside code)."""
    out = []
    for k, piece in enumerate(text.split("`")):
        if k % 2:
            out.append(f"<code>{html.escape(piece)}</code>")
        else:
            escaped = html.escape(piece)
            escaped = _STRONG.sub(r"<strong>\1</strong>", escaped)
            out.append(_EM.sub(r"<em>\1</em>", escaped))
    return "".join(out)


def _cells(line: str) -> list[str]:
    return [c.strip() for c in line.strip().strip("|").split("|")]


def to_html(text: str, heading_offset: int = 0, anchor: str = "") -> str:
    """``text`` (our Markdown subset) as HTML; headings shifted down by ``heading_offset`` levels (at most h6);
    ``anchor`` prefixes ids given to the headings."""
    lines = text.splitlines()
    out: list[str] = []
    para: list[str] = []
    i = 0

    def flush() -> None:
        if para:
            out.append(f"<p>{inline(' '.join(para))}</p>")
            para.clear()

    while i < len(lines):
        line = lines[i]
        stripped = line.strip()
        if stripped.startswith("```"):
            flush()
            body = []
            i += 1
            while i < len(lines) and not lines[i].strip().startswith("```"):
                body.append(lines[i])
                i += 1
            out.append(f"<pre><code>{html.escape(chr(10).join(body))}</code></pre>")
        elif m := re.match(r"(#{1,6})\s+(.*)", stripped):
            flush()
            level = min(len(m.group(1)) + heading_offset, 6)
            slug = re.sub(r"[^a-z0-9]+", "-", m.group(2).lower()).strip("-")
            ident = f' id="{html.escape(anchor + "-" + slug)}"' if anchor else ""
            out.append(f"<h{level}{ident}>{inline(m.group(2))}</h{level}>")
        elif stripped.startswith("|") and i + 1 < len(lines) and re.match(r"\s*\|[\s:|-]+\|\s*$", lines[i + 1]):
            flush()
            head = _cells(stripped)
            rows = []
            i += 2
            while i < len(lines) and lines[i].strip().startswith("|"):
                rows.append(_cells(lines[i]))
                i += 1
            i -= 1
            cells = "".join(f"<th scope=\"col\">{inline(c)}</th>" for c in head)
            body = "".join("<tr>" + "".join(f"<td>{inline(c)}</td>" for c in r) + "</tr>" for r in rows)
            out.append(f"<table><thead><tr>{cells}</tr></thead><tbody>{body}</tbody></table>")
        elif re.match(r"[-*]\s+", stripped):
            flush()
            items = []
            while i < len(lines) and re.match(r"\s*[-*]\s+", lines[i]):
                item = re.sub(r"^\s*[-*]\s+", "", lines[i])
                i += 1
                while i < len(lines) and lines[i].startswith("  ") and lines[i].strip() and \
                        not re.match(r"\s*[-*]\s+", lines[i]):
                    item += " " + lines[i].strip()
                    i += 1
                items.append(f"<li>{inline(item)}</li>")
            i -= 1
            out.append("<ul>" + "".join(items) + "</ul>")
        elif not stripped:
            flush()
        else:
            para.append(stripped)
        i += 1
    flush()
    return "\n".join(out)
