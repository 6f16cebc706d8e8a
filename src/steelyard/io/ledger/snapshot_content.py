"""The text a snapshot's `content_sha256` covers, written quickly: `ledger_to_toml(ledger, snapshot=False)`.

Checking a snapshot means hashing the canonical text of the ledger it holds.
The general writer spends most of its time, item by item, on what a
snapshot never has (a unit search per number, given units, shapes): a
snapshot is in SI, where each number's text is its repr, and its items are
plain. Here such items are written by one template; any other item goes
through the writer's own `item_lines`, and every other table through the
writer's own functions, so the text is byte for byte the writer's
(tests/test_snapshot_content.py compares them on fixtures, generated
ledgers and snapshots). The hash format is unchanged: snapshots written by
earlier versions verify as before.
"""

from __future__ import annotations

from steelyard.core.document.model import FileUnits, Item, Ledger
from steelyard.core.units import unit_factor
from steelyard.io.ledger.toml_write import number, value
from steelyard.io.ledger.write_items import item_head
from steelyard.io.ledger.write import (envelope_lines, frame_fields, item_lines, ledger_to_toml, loadout_lines,
                                       other_text, table_lines, units_fields)

_DIMENSIONS = (("mass", "mass"), ("length", "length"), ("inertia", "inertia"))


def _in_si(u: FileUnits) -> bool:
    """Bare numbers are SI (factor exactly 1), so each number's text is `number(x)`: its repr."""
    return all(unit_factor(getattr(u, attr), dim) == 1.0 for attr, dim in _DIMENSIONS)


def _num(x) -> str:
    return repr(x) if type(x) is float else number(x)


def _plain(it: Item) -> bool:
    """Only the fields the template writes (a snapshot's items, as `as_carried` makes them)."""
    return not (it.given_units or it.shape is not None or it.rotate or it.density is not None
                or it.cg_table is not None or it.growth is not None or it.maturity is not None or it.removable
                or it.tolerance is not None or it.user is not None)


def _item_text(it: Item) -> str:
    """`"\\n".join(item_lines(it, u))` of a plain item in SI units (same keys, same order)."""
    text = item_head(it)
    m = it.mass
    x, y, z = it.cg
    if type(m) is float and type(x) is float and type(y) is float and type(z) is float:
        text += f"\nmass = {m!r}\ncg = [{x!r}, {y!r}, {z!r}]"
    else:
        text += f"\nmass = {number(m)}\ncg = [{number(x)}, {number(y)}, {number(z)}]"
    if it.quantity != 1:
        text += f"\nquantity = {it.quantity}"
    if it.inertia is not None:
        xx, yy, zz, xy, xz, yz = map(_num, it.inertia)
        text += f"\ninertia = {{ xx = {xx}, yy = {yy}, zz = {zz}, xy = {xy}, xz = {xz}, yz = {yz} }}"
    if it.variable:
        text += "\nvariable = true"
    if it.loaded is not None:
        text += f"\nloaded = {value(it.loaded)}"
    return text


def content_text(ledger: Ledger) -> str:
    """Exactly `ledger_to_toml(ledger, snapshot=False)`, laid out as that function lays it out."""
    u = ledger.units
    if not _in_si(u):
        return ledger_to_toml(ledger, snapshot=False)
    blocks = ["steelyard = 1", "\n".join(table_lines("units", units_fields(u))),
              "\n".join(table_lines("frame", frame_fields(ledger.frame)))]
    blocks.extend(_item_text(it) if _plain(it) else "\n".join(item_lines(it, u)) for it in ledger.items)
    blocks.extend("\n".join(loadout_lines(lo)) for lo in ledger.loadouts)
    blocks.extend("\n".join(envelope_lines(env, u)) for env in ledger.envelopes)
    return "\n\n".join(blocks) + "\n" + other_text(ledger, snapshot=False)
