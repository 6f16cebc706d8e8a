"""Hand-written SVG: escaped text, numbers with fixed decimals, elements, the document wrapper.

A report's charts are a few hundred shapes; writing the markup directly costs
less than a plotting library and keeps the report free of new dependencies.
Every piece of text passes through `esc`: the characters XML 1.0 does not
allow at all (control characters other than tab and line breaks, U+FFFE,
U+FFFF, lone surrogates) become '?', and `&`, `<`, `>`, `"` become entities,
so a name like `normal & <wide>` or one holding an escape sequence always
gives a well-formed file (XML 1.0, section 2.2 "Characters" and 2.4).
"""

from __future__ import annotations

import re
from collections.abc import Iterable

from steelyard.io.report.text import clean

#: characters outside the XML 1.0 `Char` production (section 2.2); clean() already took C0/C1 controls
_NOT_XML = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ud800-\udfff\ufffe\uffff]")
_ENTITIES = {"&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;"}

FONT = 'font-family="system-ui, sans-serif" font-size="12"'


def esc(text: object) -> str:
    """Text safe in XML 1.0 character data and in a double-quoted attribute."""
    text = _NOT_XML.sub("?", clean(text))
    return "".join(_ENTITIES.get(ch, ch) for ch in text)


def num(v: float) -> str:
    """A coordinate: two decimals, no "-0" (pixels: a hundredth is far below what shows)."""
    s = f"{float(v):.2f}"
    return "0" if s in ("-0.00", "0.00") else s.rstrip("0").rstrip(".")


def attrs(**kw) -> str:
    """`key="value"` pairs; underscores in names become dashes (stroke_width -> stroke-width); None left out."""
    out = []
    for k, v in kw.items():
        if v is None:
            continue
        name = k.rstrip("_").replace("_", "-")
        out.append(f'{name}="{num(v) if isinstance(v, float) else esc(v)}"')
    return " ".join(out)


def el(tag: str, text: str | None = None, **kw) -> str:
    """One element; `text` is escaped."""
    a = attrs(**kw)
    head = f"<{tag} {a}" if a else f"<{tag}"
    return f"{head}/>" if text is None else f"{head}>{esc(text)}</{tag}>"


def points(xy: Iterable[tuple[float, float]]) -> str:
    """The `points` attribute of a polyline or polygon."""
    return " ".join(f"{num(x)},{num(y)}" for x, y in xy)


def document(width: int, height: int, body: list[str], *, label: str) -> str:
    """An `<svg>` element (no XML declaration: it is inlined in HTML as it is)."""
    return "\n".join([f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {width} {height}" width="{width}" '
                      f'height="{height}" role="img" aria-label="{esc(label)}" {FONT}>',
                      el("title", label), *body, "</svg>"])


def standalone(svg: str) -> str:
    """An SVG element as a file of its own."""
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + svg + "\n"
