"""An imported ledger must open: write it, read it back with the ledger reader, say where.

The import builds items from cells, but only the reader (and the checks every
command runs) decides what a ledger may hold: a `cg_table` on a fixed item, a
group too deep, an id the format refuses. So the built ledger is written to
TOML and read back before anything is saved, and a problem the reader finds
on an item that came from the CSV is reported at that CSV line and column.
The text is read back piece by piece (io.ledger.read_stream: the whole-file
reader decides, and words, whatever the pieces cannot vouch for), and the items
it gives must be the items built (csv_same): what is saved means what was imported.
"""

from __future__ import annotations

import re
import weakref
from collections.abc import Mapping
from dataclasses import dataclass, field

from steelyard.core.control.growth import growth_fractions
from steelyard.core.control.uncertainty import parse_tolerances
from steelyard.core.document.model import Ledger, document_of
from steelyard.core.errors import SteelyardError, item_subject, said
from steelyard.core.limits.checks import validate
from steelyard.core.physics.inertia import COMPONENTS
from steelyard.io.exchange.csv_cells import COLUMNS, TOL_COLUMNS
from steelyard.io.exchange.csv_same import same_items
from steelyard.io.ledger.read_stream import ledger_from_text
from steelyard.io.ledger.write import ledger_to_toml


@dataclass(frozen=True)
class CsvPlaces:
    """Where each imported item came from: item subject -> (CSV line, id); column key -> header cell."""

    rows: Mapping[str, tuple[int, str]] = field(default_factory=dict)
    labels: dict[str, str] = field(default_factory=dict)


def csv_column(ledger_field: str | None, labels: dict[str, str]) -> str | None:
    """The CSV column that holds a ledger field ("cg.1" -> "y", "cg_table" -> "other"), if the CSV has it."""
    if not ledger_field:
        return None
    head = re.split(r"[.\s\[]", ledger_field, maxsplit=1)[0]
    rest = ledger_field[len(head) + 1:]
    if head == "cg":
        key = "xyz"[int(rest[0])] if rest[:1] in ("0", "1", "2") else "x"
    elif head == "inertia":
        key = rest if rest in COMPONENTS else "xx"
    elif head == "tolerance":
        key = next((c for c in TOL_COLUMNS if c in labels), "tol kind")
    elif head in COLUMNS:
        key = head
    else:  # cg_table, removable, user, ...: the keys the `other` column carries
        key = "other"
    return key if key in labels else None


def placed(exc: SteelyardError, source: str, places: CsvPlaces | None) -> SteelyardError:
    if places is None or exc.subject not in places.rows:
        return exc.located(file=source)
    line, ident = places.rows[exc.subject]
    key = csv_column(exc.field, places.labels)
    where = f"column {said(places.labels[key])}" if key else exc.field
    return SteelyardError(exc.message, file=source, subject=f"line {line} (item {said(ident)})", field=where)


class RowPlaces(Mapping):
    """`CsvPlaces.rows` of an import: item subject -> (CSV line, id), the dict built only if asked."""

    def __init__(self, lines: list[int], ids: list[str]):
        self._lines, self._ids, self._rows = lines, ids, None

    def _built(self) -> dict[str, tuple[int, str]]:
        if self._rows is None:
            self._rows = {item_subject(i): (line, i) for line, i in zip(self._lines, self._ids)}
        return self._rows

    def __getitem__(self, subject: str) -> tuple[int, str]:
        return self._built()[subject]

    def __iter__(self):
        return iter(self._built())

    def __len__(self) -> int:
        return len(self._built())


#: (the ledger last checked, its text): `import` checks the ledger `read_csv` built and checked
_last: tuple[weakref.ref, str] | None = None


def check_ledger(ledger: Ledger, source: str, places: CsvPlaces | None = None, given: dict | None = None,
                 at: str | None = None) -> str:
    """Write the ledger to text and read it back with the full loader: what is saved will open.

    Returns the text, ready to write. With `places`, a problem on an item from
    the CSV names its CSV line and column. The same ledger object (immutable)
    checked again gets the text of its first check, without a second pass.
    `given`: the CSV's number cells for the writer (`ledger_to_toml`), emptied
    once the text is written, so its cells are freed before the read-back.
    `at`: where the ledger will be written (an import --into): its placements
    ([[assembly]]) are read from that file's folder, not the CSV's.
    """
    if _last is not None and _last[0]() is ledger:
        return _last[1]
    try:
        text = ledger_to_toml(ledger, given=given)
        if given:
            given.clear()
        tree_source = None
        if at is not None and ledger.assemblies:
            from steelyard.io.ledger.tree import DiskSource

            tree_source = DiskSource(at)
        final = ledger_from_text(text, source=source, tree_source=tree_source)
        growth_fractions(final)
        parse_tolerances(final)
        validate(final)
        same_items(document_of(ledger).items, document_of(final).items)
    except SteelyardError as exc:
        raise placed(exc, source, places) from None
    remember(ledger, text)
    return text


def remember(ledger: Ledger, text: str) -> None:
    """Note that `ledger` was checked and reads back from `text`: a second check of it returns the text."""
    global _last
    try:
        _last = (weakref.ref(ledger), text)
    except TypeError:  # a ledger type without weak references: no memo
        _last = None
