"""CSV text -> header and columns of cells, each cell located by CSV line and column.

Tolerant of what spreadsheets do (a byte-order mark, `;` or tab separators,
blank or separator-only lines, trailing empty cells, spaces around number
cells) and strict about the rest: text cells are kept verbatim, number cells
must be ASCII decimals (csv_cells), and any problem names the physical line
where the row starts and the column as its header cell says.
"""

from __future__ import annotations

import csv
import io

import numpy as np

from steelyard.core.errors import SteelyardError, said
from steelyard.core.units import unit_factor
from steelyard.io.exchange.csv_cells import COLUMNS, HEADER, REQUIRED, SI_UNIT, TEXT_COLUMNS, parse_cells, unprotect

#: the csv module refuses cells over 128 KiB by default; a 4 MB name is data, not an attack
_FIELD_LIMIT = 2**31 - 1


def _sniff(first_line: str, decimal_comma: bool, source: str) -> str:
    choices = (";", "\t") if decimal_comma else (",", ";", "\t")
    counts = {c: first_line.count(c) for c in choices}
    best = max(choices, key=lambda c: counts[c])
    if counts[best] == 0:
        extra = " (with --decimal-comma the separator must be ';' or a tab)" if decimal_comma else ""
        raise SteelyardError(f"cannot find the separator in the header line{extra}", file=source,
                             subject="line 1")
    return best


#: a character a plain CSV text may not hold: `_split_plain` marks the line ends with it
_MARK = "\x01"

#: the ASCII characters str.strip() removes (str.isspace)
_ASCII_SPACE = " \t\n\r\x0b\x0c\x1c\x1d\x1e\x1f"


def _no_space(text: str) -> bool:
    """Whether `text` holds no character str.strip() would remove: a column's cells are then as stripped."""
    return text.isascii() and not any(c in text for c in _ASCII_SPACE)


def _first_line(text: str) -> str | None:
    """`next(s for s in text.splitlines() if s.strip(" \\t,;"))`, without splitting all of a long text."""
    head = text[:65536].splitlines()
    complete = head if len(text) <= 65536 else head[:-1]  # the last piece of a cut text may be cut short
    first = next((s for s in complete if s.strip(" \t,;")), None)
    if first is None and len(text) > 65536:
        first = next((s for s in text.splitlines() if s.strip(" \t,;")), None)
    return first


class CsvTable:
    """One CSV text: header, columns of cell strings, then typed, located values."""

    def __init__(self, text: str, source: str, decimal_comma: bool):
        self.source, self.comma = source, decimal_comma
        text = text[1:] if text.startswith("\ufeff") else text  # a byte-order mark from a spreadsheet
        first = _first_line(text)
        if first is None:
            raise SteelyardError("empty CSV file (needs a header line: id,name,mass [kg],...)", file=source)
        sep = _sniff(first, decimal_comma, source)
        columns = self._split_plain(text, sep)
        if columns is None:
            columns = self._records(text, sep)
        # text verbatim (less a formula guard); everything else without surrounding spaces
        self.cols: dict[str, list[str]] = {}
        self.values: dict[str, np.ndarray] = {}  # key -> float of each (stripped) cell, once `floats` read it
        self._lines: dict[str, str] = {}  # key -> its cells one a line (each ending "\n"), kept for `floats`
        self.joined: dict[str, str] = {}  # key -> the same, once `floats` read it (the writer judges its cells)
        apostrophes = "'" in text
        for key, j in self.index.items():
            col = columns[j]
            if key in TEXT_COLUMNS:
                # only a cell starting with an apostrophe can lose one (csv_cells.unprotect)
                self.cols[key] = [unprotect(c) for c in col] if apostrophes and "'" in "".join(col) else list(col)
                continue
            lines = "\n".join(col) + "\n"
            if lines.count("\n") == len(col) and _no_space(lines.replace("\n", "")):
                self.cols[key] = list(col)  # no cell holds a line break or space: each is as stripped
                self._lines[key] = lines
            else:
                self.cols[key] = list(map(str.strip, col))

    def _records(self, text: str, sep: str) -> list:
        """The columns, read record by record with the csv module (quotes, line breaks in cells, ragged rows)."""
        if csv.field_size_limit() < _FIELD_LIMIT:
            csv.field_size_limit(_FIELD_LIMIT)
        if not self._read_fast(text, sep):
            self._read_records(text, sep)
        if not self.rows:
            raise SteelyardError("has a header but no item rows", file=self.source)
        self.n = len(self.rows)
        self.ids = [""] * self.n
        width = len(self.header)
        if set(map(len, self.rows)) != {width}:
            for k, cells in enumerate(self.rows):
                if len(cells) > width and any(c.strip() for c in cells[width:]):
                    raise self.fail(k, None, f"has {len(cells)} cells, the header has {width}")
                cells += [""] * (width - len(cells))
                del cells[width:]
        columns = list(zip(*self.rows))
        del self.rows
        return columns

    def _split_plain(self, text: str, sep: str) -> list[list[str]] | None:
        """The columns of a plain CSV text, cut with str.split; None when the csv module must read it.

        Plain: no quote, CR, NUL or U+0001 anywhere, the first line is the header,
        every line has the header's number of cells, and no row is blank (every id
        cell holds more than white space). The csv module (RFC 4180 reading, the
        excel dialect) then makes each line one record and cuts it at each
        separator and nothing else, so its cells are these, line k + 1 being row k
        (tests/test_csv_split.py compares the two).
        """
        if '"' in text or "\r" in text or "\0" in text or _MARK in text or "\n" not in text:
            return None
        cut = text.index("\n")
        header = text[:cut].split(sep)
        width = len(header)
        if not text[:cut].replace(sep, "").strip():
            return None
        body = text[cut + 1:]
        if not body.endswith("\n"):
            body += "\n"
        # each line break becomes one more cell, _MARK: every line has `width` cells exactly when the
        # marks are all in the column after the last one, and the count comes out even
        cells = body.replace("\n", sep + _MARK + sep).split(sep)
        del body
        n, left = divmod(len(cells), width + 1)
        if left != 1 or cells[-1] or n == 0 or cells[width::width + 1].count(_MARK) != n:
            return None  # a ragged or blank line: the records are worded and padded one by one
        cells.pop()  # after the last mark
        columns = [cells[j::width + 1] for j in range(width)]
        del cells
        self.header, self.header_line = [c.strip() for c in header], 1
        self._columns()
        if not all(map(str.strip, columns[self.index["id"]])):
            self.header = None
            return None  # a row without an id may be blank: the csv reading skips those
        self.n, self.ids, self.lines = n, [""] * n, list(range(2, n + 2))
        return columns

    def _read_fast(self, text: str, sep: str) -> bool:
        """All records at once, when each is one physical line (line k+1 is record k); False otherwise."""
        reader = csv.reader(io.StringIO(text, newline=""), delimiter=sep)
        try:
            records = list(reader)
        except csv.Error:
            return False  # `_read_records` finds where, and words it
        if reader.line_num != len(records):
            return False  # a quoted cell spans lines: `_read_records` numbers them
        # a record is blank when all its cells are white space: so is their concatenation
        keep = [k for k, s in enumerate(map(str.strip, map("".join, records))) if s]
        if not keep:  # cells, but all blank: worded as the record-by-record reading words it
            self.header, self.rows, self.lines = None, [], []
            return True
        first = keep[0]
        self.header, self.header_line = [c.strip() for c in records[first]], first + 1
        self._columns()
        if len(keep) == len(records) - first:
            self.rows = records[first + 1:]
            self.lines = list(range(first + 2, len(records) + 1))
        else:
            rest = keep[1:]
            self.rows = [records[k] for k in rest]
            self.lines = [k + 1 for k in rest]
        return True

    def _read_records(self, text: str, sep: str) -> None:
        """Record by record, each numbered by the physical line it starts on."""
        reader = csv.reader(io.StringIO(text, newline=""), delimiter=sep)
        self.header: list[str] | None = None
        self.rows: list[list[str]] = []
        self.lines: list[int] = []
        before = 0
        try:
            for record in reader:
                start = before + 1
                before = reader.line_num
                if not any(c.strip() for c in record):
                    continue
                if self.header is None:
                    self.header, self.header_line = [c.strip() for c in record], start
                    self._columns()
                    continue
                self.rows.append(record)
                self.lines.append(start)
        except csv.Error as exc:
            raise SteelyardError(f"not readable as CSV ({exc})", file=self.source,
                                 subject=f"line {before + 1}") from None

    def _columns(self) -> None:
        self.index: dict[str, int] = {}
        self.labels: dict[str, str] = {}
        self.units: dict[str, str] = {}
        self.factor: dict[str, float] = {}
        where = {"file": self.source, "subject": f"line {self.header_line}"}
        for j, cell in enumerate(self.header):
            m = HEADER.match(cell)
            name = " ".join((m.group("name") if m else cell).replace("_", " ").lower().split())
            dim = COLUMNS[name] if name in COLUMNS else None
            unit = (m.group("unit") or "").strip() if m else ""
            problem = (f"unknown column (known: {', '.join(COLUMNS)})" if name not in COLUMNS else
                       "column appears twice" if name in self.index else
                       f"needs its unit in brackets, e.g. '{name} [{SI_UNIT[dim]}]'" if dim and not unit else
                       "takes no unit" if unit and not dim else None)
            if problem:
                raise SteelyardError(problem, field=f"column {said(cell)}", **where)
            if dim:
                try:
                    self.factor[name] = unit_factor(unit, dim)
                except SteelyardError as exc:
                    raise exc.located(field=f"column {said(cell)}", **where)
                self.units[name] = unit
            self.index[name], self.labels[name] = j, cell
        missing = [k for k in REQUIRED if k not in self.index]
        if missing:
            raise SteelyardError(f"missing column {missing[0]!r} (required: {', '.join(REQUIRED)})", **where)

    def fail(self, k: int, key: str | None, message: str) -> SteelyardError:
        ident = self.ids[k] if k < len(self.ids) else ""
        subject = f"line {self.lines[k]}" + (f" (item {said(ident)})" if ident else "")
        field = f"column {said(self.labels[key])}" if key else None
        return SteelyardError(message, file=self.source, subject=subject, field=field)

    def has(self, key: str) -> bool:
        return key in self.index

    def floats(self, key: str) -> tuple[np.ndarray, np.ndarray]:
        """(values in the column's unit, blank mask); NaN where blank."""
        lines = self._lines.pop(key, None)
        vals, blank, bad, why = parse_cells(self.cols[key], self.comma, lines)
        if lines is not None and not self.comma:
            self.joined[key] = lines
        if bad is not None:
            raise self.fail(bad, key, why)
        self.values[key] = vals
        return vals, blank

    def reject(self, key: str, bad: np.ndarray, message: str) -> None:
        """Raise for the first row where `bad` holds; `{cell}` in the message is its text."""
        if bad.any():
            k = int(np.argmax(bad))
            raise self.fail(k, key, message.format(cell=self.cols[key][k]))

    def si(self, key: str) -> tuple[np.ndarray, np.ndarray]:
        vals, blank = self.floats(key)
        with np.errstate(over="ignore", under="ignore", invalid="ignore"):
            out = vals * self.factor[key]
        self.reject(key, ~blank & ~np.isfinite(out), "{cell!r} is too large to represent in SI units")
        self.reject(key, ~blank & (out == 0.0) & (vals != 0.0), "{cell!r} is too small to represent in SI units "
                                                               "(it would read as 0)")
        return out, blank
