"""The set-up tables as the file holds them, and a new ledger from one changed entry.

The editor's set-up forms (loadouts, envelopes, limits, allocations, MAC,
fuel, growth) never build a table their own way: each entry is the parsed
TOML table the file would hold (`entries`), and `with_entry` runs a changed
list through the very checks the strict reader runs on a file — the schema
("did you mean"), the reader's loadout and envelope functions and
`validate_document` for every table's meaning, cross references included
(an envelope scoped to a loadout that was just deleted is refused). So a
form cannot accept what a file would refuse, and what it accepts saves and
reads back as the same table.
"""

from __future__ import annotations

import tomllib

from steelyard.core.document.model import Ledger
from steelyard.core.document.schema import check_document
from steelyard.core.errors import SteelyardError
from steelyard.core.validation import validate_document
from steelyard.io.ledger.read import _other_tables, read_envelopes, read_loadouts
from steelyard.io.ledger.write import envelope_lines, loadout_lines

#: the set-up tables, in the order the set-up screen lists them
KINDS = ("loadout", "envelope", "limit", "allocation", "mac", "fuel", "growth")
#: tables a file holds once ([mac]); the others are arrays ([[limit]])
SINGLE = frozenset({"mac", "fuel", "growth"})
#: the Ledger field of each table
FIELD = {"loadout": "loadouts", "envelope": "envelopes", "limit": "limits", "allocation": "allocations",
         "mac": "mac", "fuel": "fuel", "growth": "growth"}
#: what names an entry of an array table
NAME_KEY = {"loadout": "name", "envelope": "name", "limit": "name", "allocation": "group"}
#: errors of a form name this in place of a file
SOURCE = "form"


def _parsed(lines: list[str], name: str) -> dict:
    return tomllib.loads("\n".join(lines))[name][0]


def entries(ledger: Ledger, kind: str) -> list[dict]:
    """Each entry of `kind` as the parsed TOML table the file holds (copies: safe to change)."""
    if kind == "loadout":
        return [_parsed(loadout_lines(lo), "loadout") for lo in ledger.loadouts]
    if kind == "envelope":
        return [_parsed(envelope_lines(env, ledger.units), "envelope") for env in ledger.envelopes]
    raw = getattr(ledger, FIELD[kind])
    if kind in SINGLE:
        return [] if raw is None else [_copy(raw)]
    return [_copy(t) for t in raw]


def _copy(v):
    if isinstance(v, dict):
        return {k: _copy(x) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [_copy(x) for x in v]
    return v


def entry_name(kind: str, raw: dict) -> str:
    """How lists and the change log name an entry: its name or group, or the table's own name."""
    if kind in SINGLE:
        return kind
    v = raw.get(NAME_KEY[kind])
    if kind == "allocation" and v == "":
        return "(whole vehicle)"
    return v if isinstance(v, str) and v else "(no name)"


def with_entries(ledger: Ledger, kind: str, tables: list[dict]) -> Ledger:
    """`ledger` with the entries of `kind` replaced by `tables`, checked as the reader checks a file."""
    value: object = tables if kind not in SINGLE else (tables[0] if tables else None)
    if kind == "growth" and value == {}:
        value, tables = None, []  # an empty [growth] changes nothing, and the writer leaves it out
    if value is not None and value != []:
        try:
            check_document({kind: value})
        except SteelyardError as exc:
            raise exc.located(file=SOURCE)
    if kind == "loadout":
        changes = {"loadouts": read_loadouts(tables, ledger.index, ledger.arrays.variable, SOURCE)}
    elif kind == "envelope":
        changes = {"envelopes": read_envelopes(tables, ledger.units, SOURCE)}
    elif value is None or value == []:
        changes = {FIELD[kind]: None if kind in SINGLE else ()}
    else:
        changes = _other_tables({kind: value}, SOURCE)
    new = ledger.evolve(**changes)
    # the items are the same objects: carry the columns instead of rebuilding them
    for cache in ("arrays", "index"):
        if cache in ledger.__dict__:
            new.__dict__[cache] = ledger.__dict__[cache]
    try:
        validate_document(new)
    except SteelyardError as exc:
        raise exc.located(file=SOURCE)
    return new


def with_entry(ledger: Ledger, kind: str, at: int | None, raw: dict | None) -> Ledger:
    """Replace entry `at` with `raw` (at None: add it; raw None: delete entry `at`)."""
    tables = entries(ledger, kind)
    if raw is None:
        if at is not None:
            del tables[at]
    elif at is None:
        if kind in SINGLE and tables:
            raise SteelyardError(f"the file has a [{kind}] table already; edit it", subject=kind)
        tables.append(raw)
    else:
        tables[at] = raw
    return with_entries(ledger, kind, tables)


def copy_name(ledger: Ledger, kind: str, name: str) -> str:
    """`name-copy`, `name-copy2`, ...: the first name no entry of `kind` uses."""
    used = {entry_name(kind, t) for t in entries(ledger, kind)}
    candidate, k = f"{name}-copy", 2
    while candidate in used:
        candidate, k = f"{name}-copy{k}", k + 1
    return candidate


def copied(ledger: Ledger, kind: str, at: int) -> tuple[Ledger, str]:
    """A ledger with entry `at` copied under a free name, right after it; and that name."""
    if kind in SINGLE:
        raise SteelyardError(f"a file holds one [{kind}] table; it cannot be copied", subject=kind)
    tables = entries(ledger, kind)
    copy = _copy(tables[at])
    name = copy_name(ledger, kind, entry_name(kind, copy))
    copy[NAME_KEY[kind]] = name
    tables.insert(at + 1, copy)
    return with_entries(ledger, kind, tables), name
