"""Terminal text without rich: titles, wrapped lines and boxed tables for headless commands.

Importing rich and laying out a table through it costs more than a small
roll-up itself, and a thousand-row weight statement takes seconds. The
tables of `steelyard rollup` are simple (one line per cell, every column
wide enough), so they are written here directly, to the same characters rich
writes: same widths, boxes, title wrapping and padding. What this module does
not lay out the same way (a table wider than the screen, East Asian wide or
combining characters, an output encoding that is not UTF-8) is handed to rich,
imported only then, so nothing prints worse than before.

On a terminal, titles, headers and the caution carry the same bold and italic
as before (plain SGR codes); in a pipe the text is bare.
"""

from __future__ import annotations

import os
import re
import sys
import unicodedata
from dataclasses import dataclass, field
from itertools import repeat

_BOLD, _ITALIC, _RESET = "\x1b[1m", "\x1b[3m", "\x1b[0m"
_SGR = {"bold": _BOLD, "italic": _ITALIC}
_WORD = re.compile(r"\s*\S+\s*")
_TRAILING_SPACE = re.compile(r"\s+$")

#: box characters: (top: left, line, divider, right), head row verticals, rule under the head,
#: body row verticals, bottom; rich's HEAVY_HEAD and SIMPLE_HEAD
_BOXES = {
    "heavy_head": ("┏━┳┓", "┃┃┃", "┡━╇┩", "│││", "└─┴┘"),
    "simple_head": ("    ", "   ", " ── ", "   ", "    "),
}


def cell_len(text: str) -> int | None:
    """Terminal cells of `text` when each character takes one; None when one may not (wide,
    combining, invisible): such text is left to rich."""
    if text.isascii():
        return len(text) if text.isprintable() else None
    for ch in text:
        if ch.isascii():
            if not ch.isprintable():
                return None
        elif (unicodedata.combining(ch) or unicodedata.east_asian_width(ch) in "WF"
              or unicodedata.category(ch)[0] in "CZ" and ch != " "):
            return None
    return len(text)


@dataclass
class Column:
    header: str
    justify: str = "left"  # "left" or "right"
    width: int | None = None  # fixed content width (rich's Column.width)
    min_width: int | None = None
    no_wrap: bool = False  # overflow is rich's default for a column, "ellipsis"


@dataclass
class Table:
    """A table as rich's Table(title=..., title_justify="left", box=..., pad_edge=...) would draw it.
    A cell is a str or (str, style) with style "bold"."""

    title: str
    columns: list[Column] = field(default_factory=list)
    rows: list[list] = field(default_factory=list)
    box: str = "heavy_head"
    pad_edge: bool = True

    def add_column(self, header: str, **kw) -> None:
        self.columns.append(Column(header, **kw))

    def add_row(self, *cells) -> None:
        self.rows.append(list(cells))


def _text(cell) -> tuple[str, str | None]:
    return (cell, None) if isinstance(cell, str) else cell


class Out:
    """Where the text goes: stdout, the console width as rich measures it, whether to style."""

    def __init__(self, stream=None, environ=None):
        self.stream = stream or sys.stdout
        env = os.environ if environ is None else environ
        self.terminal = _is_terminal(self.stream, env)
        self.width = _width(env, self.terminal)
        encoding = (getattr(self.stream, "encoding", None) or "utf-8").lower()
        self.utf8 = encoding.startswith("utf")
        self._console = None

    # -- fallback -----------------------------------------------------------------------------
    def console(self):
        """rich's Console, made once, for what this module leaves to rich."""
        if self._console is None:
            from rich.console import Console

            self._console = Console(file=self.stream, highlight=False, markup=False, width=self.width)
        return self._console

    # -- text ---------------------------------------------------------------------------------
    def line(self, text: str, style: str | None = None) -> None:
        """A paragraph, word-wrapped at the console width as rich wraps it."""
        lines = wrap(text, self.width, pad=False) if self.utf8 else None
        if lines is None:
            from rich.text import Text

            self.console().print(Text(text, style=style or ""))
            return
        self.stream.write("".join(self._styled(s, style) + "\n" for s in lines))

    def _styled(self, s: str, style: str | None) -> str:
        return f"{_SGR[style]}{s}{_RESET}" if style and self.terminal else s

    # -- tables -------------------------------------------------------------------------------
    def table(self, t: Table) -> None:
        text = render_table(t, self.width, self._styled) if self.utf8 else None
        if text is None:
            self.console().print(_to_rich(t))
            return
        self.stream.write(text)


def _is_terminal(stream, env) -> bool:
    """rich's Console.is_terminal, less Jupyter and IDLE."""
    if env.get("TTY_COMPATIBLE", "") in ("0", "1"):
        return env["TTY_COMPATIBLE"] == "1"
    if env.get("FORCE_COLOR") is not None:
        return env["FORCE_COLOR"] != ""
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError, OSError):
        return False


def _width(env, terminal: bool) -> int:
    """rich's Console.size width: COLUMNS, else the size of the first of stdin, stdout, stderr
    that is a terminal, else 80 (always 80 on a dumb terminal)."""
    if terminal and env.get("TERM", "").lower() in ("dumb", "unknown"):
        return 80
    columns = env.get("COLUMNS")
    if columns is not None and columns.isdigit():
        return int(columns)
    for fd in (0, 1, 2):
        try:
            width = os.get_terminal_size(fd).columns
        except (AttributeError, ValueError, OSError):
            continue
        return width or 80
    return 80


def _divide(text: str, width: int) -> list[int] | None:
    """rich's _wrap.divide_line (fold on), for text of one-cell characters."""
    breaks: list[int] = []
    offset = 0
    for m in _WORD.finditer(text):
        start, word = m.start(), m.group(0)
        length = len(word.rstrip())
        if width - offset >= length:
            offset += len(word)
        elif length > width:
            chunks = [word[i:i + width] for i in range(0, len(word), width)]
            for k, chunk in enumerate(chunks):
                if start:
                    breaks.append(start)
                if k == len(chunks) - 1:
                    offset = len(chunk)
                else:
                    start += len(chunk)
        elif offset and start:
            breaks.append(start)
            offset = len(word)
    return breaks


def wrap(text: str, width: int, *, pad: bool) -> list[str] | None:
    """Text.wrap of rich with overflow "fold" (justify "left" when pad, else "default");
    None when the text has characters this module does not measure."""
    if width < 1 or cell_len(text.replace("\n", " ")) is None:
        return None
    out: list[str] = []
    for line in text.split("\n"):
        cuts = [0, *_divide(line, width), len(line)]
        for a, b in zip(cuts, cuts[1:]):
            piece = line[a:b]
            if len(piece) > width:  # rstrip_end: only spaces beyond the width go
                m = _TRAILING_SPACE.search(piece)
                if m:
                    piece = piece[:len(piece) - min(len(m.group(0)), len(piece) - width)]
            piece = piece[:width]
            out.append(piece.ljust(width) if pad else piece)
    return out


def _fit(text: str, width: int, col: Column) -> str:
    if len(text) > width:
        text = text[:width - 1] + "…"
    return text.rjust(width) if col.justify == "right" else text.ljust(width)


def _one_cell_each(texts) -> bool:
    """True when every text is printable ASCII: one cell a character, measured by len."""
    joined = "".join(texts)
    return joined.isascii() and joined.isprintable()


def _widest(texts) -> int | None:
    """Cells of the widest text; None when one is not measured here."""
    if _one_cell_each(texts):
        return max(map(len, texts))
    lengths = [cell_len(x) for x in texts]
    return None if None in lengths else max(lengths)


def _columns(t: Table) -> tuple[list[list[str]], list[list[str | None] | None]] | None:
    """Per column: the cells' texts, and their styles (None for a column without any);
    None when a row has not one cell per column."""
    n = len(t.columns)
    if any(len(row) != n for row in t.rows):
        return None
    texts, styles = [], []
    for col in (zip(*t.rows) if t.rows else [()] * n):
        if all(map(isinstance, col, repeat(str))):
            texts.append(list(col))
            styles.append(None)
        else:
            pairs = list(map(_text, col))
            texts.append([p[0] for p in pairs])
            styles.append([p[1] for p in pairs])
    return texts, styles


def render_table(t: Table, max_width: int, styled) -> str | None:
    """The table as rich draws it, when every cell fits on one line; else None."""
    n = len(t.columns)
    got = _columns(t)
    if got is None:
        return None
    texts, styles = got
    pads = [(0 if (not t.pad_edge and i == 0) else 1, 0 if (not t.pad_edge and i == n - 1) else 1)
            for i in range(n)]
    extra = 2 + n - 1  # the edges and the dividers
    inner = max_width - extra
    widths = []
    for i, col in enumerate(t.columns):
        pad = sum(pads[i])
        widest = _widest([col.header, *texts[i]])
        if widest is None:
            return None
        if col.width is not None:
            w = col.width + pad
        else:
            w = widest + pad
            if col.min_width is not None:
                w = max(w, col.min_width + pad)
        widths.append(min(w, inner))
    if sum(widths) > inner or any(w - sum(p) < 1 for w, p in zip(widths, pads)):
        return None  # rich would shrink and wrap columns: leave it to rich
    table_width = sum(widths) + extra
    title = wrap(t.title, table_width, pad=True) if t.title else []
    if title is None:
        return None
    top, head, rule, body, bottom = _BOXES[t.box]
    spaces = [w - left - right for w, (left, right) in zip(widths, pads)]

    def line(cells, verticals, style_all=None) -> str:
        parts = [verticals[0]]
        for i, (text, style) in enumerate(cells):
            left, right = pads[i]
            body_text = " " * left + _fit(text, spaces[i], t.columns[i]) + " " * right
            parts.append(styled(body_text, style_all or style))
            parts.append(verticals[1] if i < n - 1 else verticals[2])
        return "".join(parts)

    def edge(chars) -> str:
        return chars[0] + chars[2].join(chars[1] * w for w in widths) + chars[3]

    out = [styled(s, "italic") for s in title]
    out.append(edge(top))
    out.append(line([(c.header, None) for c in t.columns], head, "bold"))
    out.append(edge(rule))
    out.extend(_body(t, texts, styles, pads, spaces, body, line))
    out.append(edge(bottom))
    return "\n".join(out) + "\n"


def _body(t: Table, texts, styles, pads, spaces, verticals, line) -> list[str]:
    """The body rows: one format string for the rows without a style (cells cut to their
    column first), `line` for the others."""
    n = len(t.columns)
    cut = [[x if len(x) <= w else x[:w - 1] + "…" for x in col] if max(map(len, col), default=0) > w else col
           for col, w in zip(texts, spaces)]
    fmt = verticals[0] + "".join(
        " " * left + "{:" + (">" if c.justify == "right" else "<") + str(w) + "}" + " " * right
        + (verticals[1] if i < n - 1 else verticals[2])
        for i, (c, (left, right), w) in enumerate(zip(t.columns, pads, spaces)))
    rows = list(zip(*cut))
    marked = [col for col in styles if col is not None]
    if not marked:
        return [fmt.format(*row) for row in rows]
    out = []
    for k, row in enumerate(rows):
        if any(col[k] for col in marked):
            out.append(line([(texts[i][k], None if styles[i] is None else styles[i][k]) for i in range(n)],
                            verticals))
        else:
            out.append(fmt.format(*row))
    return out


def _to_rich(t: Table):
    """The same table as a rich Table, for what render_table leaves to rich."""
    from rich import box
    from rich.table import Table as RichTable
    from rich.text import Text

    rt = RichTable(title=t.title, title_justify="left", pad_edge=t.pad_edge,
                   box=box.HEAVY_HEAD if t.box == "heavy_head" else box.SIMPLE_HEAD)
    for c in t.columns:
        rt.add_column(c.header, justify=c.justify, width=c.width, min_width=c.min_width,
                      no_wrap=c.no_wrap)
    for row in t.rows:
        rt.add_row(*(Text(s, style=style or "") for s, style in map(_text, row)))
    return rt
