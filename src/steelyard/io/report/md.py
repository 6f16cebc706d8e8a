"""The report as Markdown; charts are SVG files beside it, with the text chart as a fallback.

User text is escaped so that it shows literally: Markdown punctuation gets
a backslash and `<`, `>`, `&` become entities (many viewers pass raw HTML
through), and table cells lose their line breaks.
"""

from __future__ import annotations

import re

from steelyard.io.report.build import Report
from steelyard.io.report.blocks import Block, report_blocks
from steelyard.io.report.text import clean

_SPECIAL = re.compile(r"([\\`*_\[\]|~])")
_LINE_START = re.compile(r"^([#+=-])")
_ORDERED = re.compile(r"^(\d+)([.)])")


def md_escape(text: str, *, cell: bool = False) -> str:
    """Text that shows literally in Markdown; `cell`: inside a table cell (no line-start rules)."""
    text = " ".join(clean(text).split())
    text = text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
    text = _SPECIAL.sub(r"\\\1", text)
    return text if cell else _ORDERED.sub(r"\1\\\2", _LINE_START.sub(r"\\\1", text))


def _table(b: Block) -> list[str]:
    out = ["| " + " | ".join(md_escape(h, cell=True) for h in b.headers) + " |",
           "|" + "|".join("---:" if j in b.right else "---" for j in range(len(b.headers))) + "|"]
    for row in b.rows:
        # leading spaces (group indentation) would vanish; keep them as no-break spaces
        cells = ["\u00a0" * (len(c) - len(c.lstrip(" "))) + md_escape(c, cell=True) for c in row]
        out.append("| " + " | ".join(cells) + " |")
    return out


def _fence(lines: list[str]) -> list[str]:
    ticks = "`" * max(3, 1 + max((len(m) for m in re.findall(r"`+", "\n".join(lines))), default=0))
    return [ticks + "text", *lines, ticks]


def _link(path: str) -> str:
    return path.replace(" ", "%20").replace("(", "%28").replace(")", "%29")


def render_markdown(report: Report, images: dict[str, str] | None = None, trend_image: str | None = None) -> str:
    """`images`: envelope name -> relative path of its SVG chart, linked from the text;
    `trend_image`: that of the mass-history chart, when the report has one."""
    images = images or {}
    out: list[str] = []
    for b in report_blocks(report):
        if b.kind == "h1":
            out += [f"# {md_escape(b.text)}", ""]
        elif b.kind == "h2":
            out += [f"## {md_escape(b.text)}", ""]
        elif b.kind == "p":
            out += [md_escape(b.text), ""]
        elif b.kind == "caution":
            out += [f"> **Caution.** {md_escape(b.text)}", ""]
        elif b.kind == "table":
            out += [*_table(b), ""]
        elif b.kind == "chart":
            c = b.chart
            if c.envelope in images:
                out += [f"![chart of envelope {md_escape(c.envelope)}]({_link(images[c.envelope])})", ""]
            out += [*_fence(c.lines), ""]
            out += [f"- `{m}` {md_escape(t)}" for m, t in c.legend] + [""]
        elif b.kind == "list":
            out += [f"- {md_escape(t)}" for t in b.items] + [""]
        elif b.kind == "svg" and b.text and trend_image:
            out += [f"![mass history]({_link(trend_image)})", ""]
    return "\n".join(out).rstrip() + "\n"
