"""`Ledger` -> canonical TOML text: the one writer every save, snapshot and import uses.

Canonical means: the same ledger always gives the same bytes; keys come in a
fixed order, one `[[item]]` table per item, numbers in the file's own units
printed with the fewest digits that read back to the identical value. So a
version-control diff shows only what really changed.

Every field of the document is written (tests/test_round_trip.py generates
ledgers with every table in any order and checks read -> write -> read), and
every table goes where TOML reads it back as written: plain keys before any
header, each table of an array under its own `[[name]]` header.
"""

from __future__ import annotations

import math

from steelyard.core.physics.inertia import COMPONENTS
from steelyard.core.document.model import Amount, Envelope, FileUnits, Frame, Item, Ledger, Loadout, document_of
from steelyard.core.errors import UnitError
from steelyard.core.units import parse_quantity, unit_factor
from steelyard.io.ledger.toml_write import is_table_array, key, number, string, table_blocks, value


def _factor(unit: str, dimension: str) -> float:
    return unit_factor(unit, dimension)


def _qty(x: float, dimension: str, file_unit: str, given: str | None) -> str:
    if given:
        return string(_with_unit(x, dimension, given))
    return number(x, _factor(file_unit, dimension))


def _with_unit(x: float, dimension: str, unit: str) -> str:
    """'76.1 lb': digits checked through the reader's own path (pint's exact factor),
    so that saving an unchanged file gives the same bytes and the same value."""
    v = x / _factor(unit, dimension)
    candidates = [float(f"{v:.{d}g}") for d in (12, 15, 16, 17)]
    up = down = v
    for _ in range(4):  # the float factor and pint's exact one may differ by an ulp or two
        up, down = math.nextafter(up, math.inf), math.nextafter(down, -math.inf)
        candidates += [up, down]
    for c in candidates:
        text = repr(c)  # shortest text of that float exactly (number() would round to 12 digits)
        try:
            if parse_quantity(f"{text} {unit}", dimension) == x:
                return f"{text} {unit}"
        except UnitError:
            break
    return f"{number(x, _factor(unit, dimension))} {unit}"


def item_fields(it: Item, u: FileUnits) -> list[tuple[str, str]]:
    """(key, value text) of one `[[item]]`, in the order they are written."""
    g = it.given_units
    out = [("id", string(it.id))]
    if it.name:
        out.append(("name", string(it.name)))
    if it.group:
        out.append(("group", string(it.group)))
    out.append(("mass", _qty(it.mass, "mass", u.mass, g.get("mass"))))
    out.append(("cg", "[" + ", ".join(_qty(c, "length", u.length, g.get(f"cg.{k}"))
                                      for k, c in enumerate(it.cg)) + "]"))
    if it.quantity != 1:
        out.append(("quantity", str(it.quantity)))
    if it.inertia is not None:
        parts = [f"{k} = {_qty(v, 'inertia', u.inertia, g.get('inertia.' + k))}"
                 for k, v in zip(COMPONENTS, it.inertia)]
        out.append(("inertia", "{ " + ", ".join(parts) + " }"))
    if it.shape is not None:
        parts = [f"kind = {string(it.shape.kind)}"]
        for k, v in it.shape.params.items():
            if isinstance(v, tuple):
                parts.append(f"{key(k)} = [" + ", ".join(_qty(x, "length", u.length, None) for x in v) + "]")
            else:
                parts.append(f"{key(k)} = {_qty(v, 'length', u.length, None)}")
        if it.shape.axis != "z" or it.shape.axis_written:
            parts.append(f"axis = {string(it.shape.axis)}")
        out.append(("shape", "{ " + ", ".join(parts) + " }"))
    if it.rotate:
        out.append(("rotate", "[" + ", ".join(f"[{string(a)}, {number(d)}]" for a, d in it.rotate) + "]"))
    if it.variable:
        out.append(("variable", "true"))
    if it.density is not None:
        out.append(("density", _qty(it.density, "density", u.density_unit, g.get("density"))))
    more = {"cg_table": it.cg_table, "growth": it.growth, "loaded": it.loaded, "maturity": it.maturity,
            "removable": it.removable or None, "tolerance": it.tolerance, "user": it.user}
    out.extend((k, value(v)) for k, v in more.items() if v is not None)
    return out


def item_lines(it: Item, u: FileUnits) -> list[str]:
    return ["[[item]]"] + [f"{k} = {t}" for k, t in item_fields(it, u)]


def amount_text(amount: Amount) -> str:
    """A loadout amount as written: a fraction as a number, a mass or volume as its own text."""
    if amount.kind == "fraction":
        return number(amount.value)
    if not amount.given:
        unit = "kg" if amount.kind == "mass" else "m**3"
        return string(f"{number(amount.value)} {unit}")
    return string(amount.given)


def loadout_fields(lo: Loadout) -> list[tuple[str, str]]:
    """(key, value text) of a `[[loadout]]`'s own keys; its amounts are `amount_text` under `[loadout.set]`."""
    out = [("name", string(lo.name))]
    if lo.base is not None:
        out.append(("base", string(lo.base)))
    more = {"condition": lo.condition, "off": lo.off, "on": lo.on, "user": lo.user}
    out.extend((k, value(v)) for k, v in more.items() if v is not None)
    return out


def loadout_lines(lo: Loadout) -> list[str]:
    out = ["[[loadout]]"] + [f"{k} = {t}" for k, t in loadout_fields(lo)]
    if lo.set:
        out.append("[loadout.set]")
        out.extend(f"{key(item_id)} = {amount_text(amount)}" for item_id, amount in lo.set.items())
    return out


def envelope_fields(env: Envelope, u: FileUnits) -> list[tuple[str, str]]:
    lf, mf = _factor(u.length, "length"), _factor(u.mass, "mass")
    pts = ", ".join(f"[{number(c, lf)}, {number(m, mf)}]" for c, m in env.points)
    out = [("name", string(env.name)), ("axis", string(env.axis)), ("points", f"[{pts}]")]
    more = {"conditions": env.conditions, "loadouts": env.loadouts, "sequences": env.sequences,
            "units": env.units, "user": env.user}
    out.extend((k, value(v)) for k, v in more.items() if v is not None)
    return out


def envelope_lines(env: Envelope, u: FileUnits) -> list[str]:
    return ["[[envelope]]"] + [f"{k} = {t}" for k, t in envelope_fields(env, u)]


def units_fields(u: FileUnits) -> list[tuple[str, str]]:
    """mass, length and inertia always; volume and density when given."""
    units = {"mass": u.mass, "length": u.length, "inertia": u.inertia}
    units.update((k, v) for k, v in (("density", u.density), ("volume", u.volume)) if v is not None)
    return [(key(k), string(v)) for k, v in units.items()]


def frame_fields(f: Frame) -> list[tuple[str, str]]:
    return [("x", string(f.x)), ("y", string(f.y)), ("z", string(f.z))]


def table_lines(name: str, fields: list[tuple[str, str]]) -> list[str]:
    return [f"[{name}]"] + [f"{k} = {t}" for k, t in fields]


def other_tables(ledger: Ledger, *, snapshot: bool = True) -> dict:
    """The tables beyond items, loadouts and envelopes, by file name, in the order they are written.

    Alphabetical (the order earlier versions wrote them in), except that
    `[snapshot]` is always last: its hash covers the text before it.
    """
    out: dict = {}
    for name, v in (("allocation", list(ledger.allocations)), ("assembly", list(ledger.assemblies)),
                    ("change", list(ledger.changes)),
                    ("fuel", ledger.fuel), ("growth", ledger.growth), ("limit", list(ledger.limits)),
                    ("mac", ledger.mac), ("sequence", list(ledger.sequences)), ("user", ledger.user),
                    ("weighing", ledger.weighing)):
        if v:
            out[name] = v
    if snapshot and ledger.snapshot is not None:
        out["snapshot"] = ledger.snapshot
    return out


def change_lines(entry) -> list[str]:
    """One `[[change]]` entry, compact: every key on its own line, tables (`d_margin_m`, `before`,
    `after`) inline, so an edit costs a dozen lines, not two dozen under sub-table headers."""
    return ["[[change]]"] + [f"{key(k)} = {value(v)}" for k, v in entry.items()]


def other_blocks(ledger: Ledger, *, snapshot: bool = True) -> list[list[str]]:
    """The lines of every table `other_tables` lists, table by table, in that order."""
    blocks: list[list[str]] = []
    for name, v in other_tables(ledger, snapshot=snapshot).items():
        if name == "change":
            blocks.extend(change_lines(entry) for entry in v)
        elif isinstance(v, dict):
            blocks.extend(table_blocks(key(name), v))
        elif is_table_array(v):
            for entry in v:
                blocks.extend(table_blocks(key(name), entry, array=True))
        else:
            raise TypeError(f"top-level {name!r} is not a table")
    return blocks


def ledger_to_toml(ledger: Ledger, *, snapshot: bool = True, given: dict | None = None) -> str:
    """The whole file; `snapshot=False` leaves out the [snapshot] record (what its hash covers).

    Items placed from assemblies are never written: a file holds its own items and [[assembly]] tables.
    `given`: texts the caller has for the items' numbers (write_items.items_text); the same bytes.
    """
    ledger = document_of(ledger)
    u = ledger.units
    from steelyard.io.ledger.write_items import items_text

    blocks = [*head_blocks(u, ledger.frame), *items_text(ledger.items, u, given)]
    blocks.extend("\n".join(loadout_lines(lo)) for lo in ledger.loadouts)
    blocks.extend("\n".join(envelope_lines(env, u)) for env in ledger.envelopes)
    return "\n\n".join(blocks) + "\n" + other_text(ledger, snapshot=snapshot)


def head_blocks(u: FileUnits, frame: Frame) -> list[str]:
    """The blocks before the items: the version line, [units], [frame]."""
    return ["steelyard = 1", "\n".join(table_lines("units", units_fields(u))),
            "\n".join(table_lines("frame", frame_fields(frame)))]


def items_only_text(u: FileUnits, frame: Frame, item_texts: list[str]) -> str:
    """`ledger_to_toml` of a ledger that holds only units, a frame and items, from the items' texts
    (`write_items.columns_text`): what an import of a new ledger writes."""
    return "\n\n".join([*head_blocks(u, frame), *item_texts]) + "\n"


def other_text(ledger: Ledger, *, snapshot: bool = True) -> str:
    """The text after the envelopes (a blank line, then every other table), "" when there are none.

    Shared with the snapshot hash's quick text (io.ledger.snapshot_content), so the two cannot drift.
    """
    rest = other_blocks(ledger, snapshot=snapshot)
    return "\n" + "\n\n".join("\n".join(b) for b in rest) + "\n" if rest else ""
