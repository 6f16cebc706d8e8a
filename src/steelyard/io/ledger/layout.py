"""Saving over a ledger while keeping its layout: comments, order, blank lines and number text.

`preserving_text(original_text, original, new)` rewrites the text a ledger
was read from so that it means `new`, touching only what changed:

- an entry (an item, a loadout, a limit, a change-log entry, `[units]`, ...)
  that did not change keeps its bytes, comments and odd spacing included;
- in a changed entry, a `key = value` whose value changed gets the new
  value text only (the key's spelling, the spaces and a comment after it
  stay; a value written over several lines becomes one line); a key added
  goes after the entry's last key line, a key removed loses its line; a
  number that did not change keeps its text ("2.30"), as do the sub-tables
  of `[loadout.set]` and the like;
- what such edits cannot do safely (a key written as `a.b = ...`, a changed
  `[[sequence.step]]`) replaces that entry's body with its canonical text
  (io.ledger.write), its leading and trailing comments kept;
- a new entry goes after the entry before it in the new ledger (appended
  ones after the last of their kind, a new kind where the canonical writer
  puts it), a removed entry drops its text with the comments right above it.

The text produced is read back with the normal reader and must mean `new`
(io.ledger.layout_fields.same_ledger); otherwise, and for any layout this
module does not edit, the result is the canonical `ledger_to_toml(new)`. So a
save never writes something that reads differently, only, at worst, without
the comments. That check is one parse of the file (timed in `Preserved`).
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field

from steelyard.core.document.model import Ledger, document_of
from steelyard.io.ledger.layout_fields import (ARRAYS, ORDER, SINGLES, UNIT_BOUND, entries, entry_text, fields,
                                               keys, render, same_entry, same_ledger)
from steelyard.io.ledger.layout_scan import Statement, Unsupported, pieces, statements
from steelyard.io.ledger.read import DOCUMENT, ledger_from_data
from steelyard.io.ledger.toml_read import parse_toml
from steelyard.io.ledger.toml_write import key
from steelyard.io.ledger.write import ledger_to_toml

SOURCE = "layout-preserving save"


@dataclass(frozen=True)
class Preserved:
    """The text to write and how it was made: "unchanged", "patched" or "canonical" (with why)."""

    text: str
    how: str
    why: str = ""
    check_seconds: float = 0.0  # reading the result back to prove it means the new ledger


def preserving_text(original_text: str, original: Ledger, new: Ledger) -> str:
    """`new` as text, keeping every byte of `original_text` (which reads as `original`) that it can."""
    return preserve(original_text, original, new).text


def preserve(original_text: str, original: Ledger, new: Ledger, *, canonical: str | None = None) -> Preserved:
    """As `preserving_text`, saying how; `canonical` is `ledger_to_toml(new)` if the caller has it already."""
    try:
        text = _Plan(original_text, original, new).result()
    except Unsupported as exc:
        return _canonical(new, canonical, str(exc))
    except Exception as exc:  # noqa: BLE001 - a slip here must cost the layout, never the save
        return _canonical(new, canonical, f"layout writer failed: {exc!r}")
    if text == original_text:
        return Preserved(text, "unchanged")  # it reads as `original`, which equals `new` entry by entry
    t0 = time.perf_counter()
    try:
        ok = same_ledger(ledger_from_data(parse_toml(text, source=SOURCE), source=SOURCE, tree=DOCUMENT),
                         document_of(new))
        why = "" if ok else "the edited text read back differently"
    except Exception as exc:  # noqa: BLE001 - whatever it is, the edited text is not used
        ok, why = False, f"the edited text did not read back: {exc}"
    spent = time.perf_counter() - t0
    if not ok:
        return _canonical(new, canonical, why, spent)
    return Preserved(text, "patched", check_seconds=spent)


def _canonical(new: Ledger, canonical: str | None, why: str, spent: float = 0.0) -> Preserved:
    return Preserved(canonical if canonical is not None else ledger_to_toml(new), "canonical", why, spent)


@dataclass
class _Span:
    """One stretch of the text owned by an entry (or nobody): leading lines, body, trailing comments."""

    owner: tuple | None  # (kind, index in the original ledger), ("top", 0) or None
    start: int
    body_start: int
    body_end: int
    end: int


@dataclass
class _Section:
    """The key lines of one table header inside an entry's body."""

    array: bool
    end: int  # where a key added to it goes: after its last statement
    indent: str = ""
    lines: dict = field(default_factory=dict)  # key -> Statement of a plain `key = value` (value maybe over lines)
    defined: set = field(default_factory=set)  # first keys of every statement


class _Plan:
    def __init__(self, text: str, original: Ledger, new: Ledger):
        original, new = document_of(original), document_of(new)  # placed items are never written
        self.text, self.old, self.new = text, original, new
        first = text.find("\n")
        self.nl = "\r\n" if first > 0 and text[first - 1] == "\r" else "\n"
        self.units_same = original.units == new.units
        self.edits: list[tuple[int, int, int, int, str, bool]] = []  # start, end, rank, seq, text, own line
        self.spans: list[_Span] = []
        self.owned: dict[tuple, list[int]] = {}
        self._own()

    # ------------------------------------------------------------ ownership
    def _own(self) -> None:
        raw, headers = pieces(self.text)
        count = dict.fromkeys(ARRAYS, 0)
        spans = self.spans
        last_owned = -1
        for p in raw:
            hk = p.header
            if hk is None or hk == -1:
                spans.append(_Span(None if hk is None else ("top", 0), *p[:4]))
                if hk == -1:
                    last_owned = len(spans) - 1
                continue
            h = headers[hk]
            path = h.path
            kind = path[0]
            sub = len(path) > 1
            if kind in count:
                if not sub:
                    if not h.array:
                        raise Unsupported(f"[{kind}] is written as a single table")
                    count[kind] += 1
                elif not count[kind]:
                    raise Unsupported(f"a [{'.'.join(path)}] table comes before any [[{kind}]]")
                owner = (kind, count[kind] - 1)
            elif kind in SINGLES:
                if not sub and h.array:
                    raise Unsupported(f"[[{kind}]] is written as an array of tables")
                owner = (kind, 0)
            else:
                raise Unsupported(f"unknown table [{kind}]")
            if sub and last_owned >= 0 and spans[last_owned].owner == owner:
                merged = spans[last_owned]  # a sub-table right after its table: one body
                del spans[last_owned + 1:]
                merged.body_end, merged.end = p.body_end, p.end
                continue
            spans.append(_Span(owner, *p[:4]))
            last_owned = len(spans) - 1
        self.last_of: dict[str, int] = {}  # kind -> its last span
        for k, s in enumerate(self.spans):
            if s.owner is not None:
                self.owned.setdefault(s.owner, []).append(k)
                self.last_of[s.owner[0]] = k
        self.inline = self._top_tables()
        for kind, n in count.items():
            if kind not in self.inline and n != len(entries(self.old, kind)):
                raise Unsupported(f"{n} [[{kind}]] headers for {len(entries(self.old, kind))} entries")

    def _top_tables(self) -> set[str]:
        """Tables written as keys before the first header (`units = {...}`): kept only if unchanged."""
        top = self.spans[0]
        found = {st.path[0] for st in statements(self.text, top.body_start, top.body_end) if not st.header}
        found.discard("steelyard")
        for kind in found:
            if kind not in ARRAYS and kind not in SINGLES:
                raise Unsupported(f"unknown key {kind!r} before the first table")
            xs, ys = entries(self.old, kind), entries(self.new, kind)
            if len(xs) != len(ys) or not all(same_entry(kind, x, y) for x, y in zip(xs, ys)) or (
                    kind in UNIT_BOUND and not self.units_same):
                raise Unsupported(f"'{kind}' is written before the first table header and changed")
        return found

    # ------------------------------------------------------------- planning
    def result(self) -> str:
        for kind in ORDER:
            if kind in self.inline:
                continue
            if kind in ARRAYS:
                self._array(kind)
            else:
                self._single(kind)
        return self._splice()

    def _array(self, kind: str) -> None:
        olds, news = entries(self.old, kind), entries(self.new, kind)
        if not olds and not news:
            return
        where = {k: i for i, k in enumerate(keys(kind, olds))}
        match = [where.get(k) for k in keys(kind, news)]
        last = -1
        for i in match:
            if i is not None:
                if i < last:
                    raise Unsupported(f"the [[{kind}]] tables are in another order")
                last = i
        used = {i for i in match if i is not None}
        prev = -1
        for j, i in enumerate(match):  # a renamed entry (new key where an old one vanished) is edited in place
            if i is None and prev + 1 < len(olds) and prev + 1 not in used:
                match[j] = i = prev + 1
                used.add(i)
            if i is not None:
                prev = i
        for i in range(len(olds)):
            if i not in used:
                self._delete(self.owned.get((kind, i), []))
        first_kept = next((i for i in match if i is not None), None)
        before = None  # the kept entry the next new one follows
        for j, i in enumerate(match):
            if i is not None:
                self._update(kind, olds[i], news[j], self.owned.get((kind, i), []))
                before = i
            elif before is not None:
                self._insert_after(self.owned[(kind, before)][-1], kind, news[j])
            elif first_kept is not None:  # new ones ahead of every kept one: just before the first of them
                self._insert(self.spans[self.owned[(kind, first_kept)][0]].start, 1, kind, news[j])
            else:
                self._insert_after(self._anchor(kind), kind, news[j])

    def _single(self, kind: str) -> None:
        spans = self.owned.get((kind, 0), [])
        o, n = getattr(self.old, SINGLES[kind]), getattr(self.new, SINGLES[kind])
        if kind not in ("units", "frame"):
            o, n = o or {}, n or {}
        if spans:
            if not n:
                if not same_entry(kind, o, n):
                    self._delete(spans)
            else:
                self._update(kind, o, n, spans)
        elif (n if kind not in ("units", "frame") else not same_entry(kind, o, n)):
            if kind not in ("units", "frame") and o:
                raise Unsupported(f"[{kind}] has no header of its own")
            self._insert_after(self._anchor(kind), kind, n)

    def _anchor(self, kind: str) -> int:
        """The span a table new to the file follows: the last of its kind, else of the nearest kind before it."""
        for before in reversed(ORDER[:ORDER.index(kind) + 1]):
            if before in self.last_of:
                return self.last_of[before]
        return 0

    # ---------------------------------------------------------------- edits
    def _edit(self, start: int, end: int, text: str, *, rank: int = 0, line: bool = False) -> None:
        self.edits.append((start, end, rank, len(self.edits), text, line))

    def _delete(self, spans: list[int]) -> None:
        for k in spans:
            s = self.spans[k]
            self._edit(s.start, s.end, "")

    def _block(self, kind: str, entry: object) -> str:
        return entry_text(kind, entry, self.new.units).replace("\n", self.nl) + self.nl

    def _insert_after(self, span: int, kind: str, entry: object) -> None:
        self._insert(self.spans[span].end, 0, kind, entry)

    def _insert(self, at: int, rank: int, kind: str, entry: object) -> None:
        self._edit(at, at, self.nl + self._block(kind, entry), rank=rank, line=True)

    def _update(self, kind: str, o: object, n: object, spans: list[int]) -> None:
        if same_entry(kind, o, n) and (kind not in UNIT_BOUND or self.units_same):
            return
        ot, nt = fields(kind, o, self.old.units), fields(kind, n, self.new.units)
        if ot == nt:
            return
        if len(spans) == 1:
            try:
                for e in self._patch(self.spans[spans[0]], kind, ot, nt):
                    self._edit(*e[:3], line=e[3])
                return
            except Unsupported:
                pass  # the whole body is written afresh instead
        first = self.spans[spans[0]]
        self._edit(first.body_start, first.body_end, self._block(kind, n))
        self._delete(spans[1:])

    def _patch(self, span: _Span, kind: str, ot: dict, nt: dict) -> list[tuple]:
        """Line edits turning the entry's body from `ot` into `nt`; Unsupported when lines cannot do it."""
        sections: dict[tuple, _Section] = {}
        cur: _Section | None = None
        for st in statements(self.text, span.body_start, span.body_end):
            if st.header:
                rel = st.path[1:]
                if st.path[0] != kind or (rel in sections and not (st.array and sections[rel].array)):
                    raise Unsupported("a table defined twice")
                cur = sections[rel] = _Section(st.array and bool(rel), st.end)
            elif cur is None:
                raise Unsupported("a key before the table's header")
            else:
                self._key_line(cur, st)
        if () not in sections:
            raise Unsupported("no header")
        edits: list[tuple] = []
        self._patch_section(sections, (), ot, nt, edits)
        return edits

    def _key_line(self, sec: _Section, st: Statement) -> None:
        first = st.path[0]
        if first in sec.defined:
            sec.lines.pop(first, None)  # `a.x = 1` and `a.y = 2`: not one line
        elif len(st.path) == 1:
            sec.lines[first] = st
        sec.defined.add(first)
        sec.end = st.end
        line = self.text[st.start:st.end]
        sec.indent = line[:len(line) - len(line.lstrip(" \t"))]

    def _patch_section(self, sections: dict, path: tuple, o_map: dict, n_map: dict, edits: list) -> None:
        sec = sections[path]
        for k in list(n_map) + [k for k in o_map if k not in n_map]:
            o, n = o_map.get(k), n_map.get(k)
            if o == n:
                continue
            st = sec.lines.get(k)
            if st is not None:
                edits.append((st.start, st.end, "", False) if n is None else
                             (st.value_start, st.value_end, render(n), False))
                continue
            sub = path + (k,)
            if sub in sections and not sections[sub].array and isinstance(o, dict) and isinstance(n, dict):
                self._patch_section(sections, sub, o, n, edits)
                continue
            written = k in sec.defined or any(p[:len(sub)] == sub for p in sections)
            if not written:  # absent from the text (its default, or not there at all): one line more
                edits.append((sec.end, sec.end, f"{sec.indent}{key(k)} = {render(n)}{self.nl}", True))
                continue
            raise Unsupported(f"{k!r} is written in a way one line cannot change")

    # -------------------------------------------------------------- output
    def _splice(self) -> str:
        text = self.text
        if not self.edits:
            return text
        out: list[str] = []
        pos = 0
        last = ""
        for start, end, _rank, _seq, new, line in sorted(self.edits):
            if start < pos:
                raise Unsupported("overlapping edits")
            if start > pos:
                out.append(text[pos:start])
                last = text[start - 1]
            if line and last not in ("", "\n"):
                new = self.nl + new
            if new:
                out.append(new)
                last = new[-1]
            pos = end
        out.append(text[pos:])
        return "".join(out)
