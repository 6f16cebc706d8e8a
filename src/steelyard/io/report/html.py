"""The report as one self-contained HTML page; every piece of user text goes through html.escape."""

from __future__ import annotations

from html import escape as _escape

from steelyard.io.report.build import Report
from steelyard.io.report.blocks import Block, report_blocks
from steelyard.io.report.text import clean

def escape(text: str) -> str:
    return _escape(clean(text))


_STYLE = """
body { font-family: system-ui, sans-serif; margin: 2em auto; max-width: 78em; padding: 0 1em;
       color: #1d1d1d; }
h1 { font-size: 1.5em; } h2 { font-size: 1.2em; margin-top: 2em; border-bottom: 1px solid #bbb; }
table { border-collapse: collapse; margin: 0.5em 0; font-size: 0.9em; }
th, td { border: 1px solid #ccc; padding: 0.2em 0.5em; vertical-align: top; }
th { background: #eee; text-align: left; } td.n { text-align: right; font-variant-numeric: tabular-nums; }
.caution { border-left: 4px solid #8a5a00; background: #fff6e0; padding: 0.5em 1em; }
pre.chart { font-size: 0.8em; line-height: 1.1; } figure { margin: 1em 0; }
figure svg { max-width: 100%; height: auto; }
"""


def _table(b: Block) -> str:
    head = "".join(f"<th>{escape(h)}</th>" for h in b.headers)
    body = []
    for row in b.rows:
        cells = "".join(f'<td class="n">{escape(c)}</td>' if j in b.right else f"<td>{escape(c)}</td>"
                        for j, c in enumerate(row))
        body.append(f"<tr>{cells}</tr>")
    return f"<table>\n<thead><tr>{head}</tr></thead>\n<tbody>\n" + "\n".join(body) + "\n</tbody>\n</table>"


def _chart(b: Block, svgs: dict[str, str]) -> str:
    c = b.chart
    svg = svgs.get(c.envelope)
    if svg:  # the vector chart carries its own axes and legend
        return f"<figure>\n{svg}\n</figure>"
    picture = f'<pre class="chart">{escape(chr(10).join(c.lines))}</pre>'
    legend = "".join(f"<li><code>{escape(m)}</code> {escape(t)}</li>" for m, t in c.legend)
    return f"<figure>\n{picture}\n<figcaption><ul>{legend}</ul></figcaption>\n</figure>"


def render_html(report: Report, svgs: dict[str, str] | None = None) -> str:
    """`svgs`: envelope name -> SVG markup of its chart (else the chart is shown as text)."""
    svgs = svgs or {}
    parts = []
    for b in report_blocks(report):
        if b.kind == "h1":
            parts.append(f"<h1>{escape(b.text)}</h1>")
        elif b.kind == "h2":
            parts.append(f"<h2>{escape(b.text)}</h2>")
        elif b.kind == "p":
            parts.append(f"<p>{escape(b.text)}</p>")
        elif b.kind == "caution":
            parts.append(f'<p class="caution"><strong>Caution.</strong> {escape(b.text)}</p>')
        elif b.kind == "table":
            parts.append(_table(b))
        elif b.kind == "chart":
            parts.append(_chart(b, svgs))
        elif b.kind == "svg" and b.text:  # drawn by the report itself, its text escaped there
            parts.append(f"<figure>\n{b.text}\n</figure>")
        elif b.kind == "list":
            parts.append("<ul>" + "".join(f"<li>{escape(t)}</li>" for t in b.items) + "</ul>")
    title = escape(f"Mass-properties report: {report.source}")
    return ("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
            f"<title>{title}</title>\n<style>{_STYLE}</style>\n</head>\n<body>\n"
            + "\n".join(parts) + "\n</body>\n</html>\n")
