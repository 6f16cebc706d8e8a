"""Limits and room left in plain words, one wording for the editor, `rollup` and the report.

The figures are `core.limits.checks` Findings of one state (so the scope
rules are `check`'s own) and `status.room_left`; this module only words
them in the display units, so every place that shows a limit says the same.
"""

from __future__ import annotations

from steelyard.core.display import DisplayUnits, pretty_unit
from steelyard.core.limits.status import RoomLeft

#: what each kind of limit is called where a user reads it
KIND_WORDS = {"mass": "mass limit", "inertia": "inertia limit", "cg-offset": "CG offset limit",
              "envelope": "envelope"}


def scope_words(scope) -> str:
    """'loadouts solo-training; conditions takeoff': a scope's tags, as the file names them."""
    by: dict[str, list[str]] = {}
    for kind, name in sorted(scope or ()):
        by.setdefault(kind + "s", []).append(name)
    return "; ".join(f"{k} {', '.join(v)}" for k, v in by.items())


def quantity(du: DisplayUnits, dimension: str, x: float | None) -> str:
    """An SI figure in the display unit by the number rule (docs/numbers.md), with the unit: '2.653 kg'."""
    if x is None:
        return "—"
    unit = {"mass": du.mass, "length": du.length}.get(dimension, du.inertia)
    return f"{du.num(x, dimension if dimension in ('mass', 'length') else 'inertia')} {pretty_unit(unit)}"


def _bounds(f, du: DisplayUnits) -> str:
    if f.lo is not None and f.hi is not None:
        return f"allowed {quantity(du, f.dimension, f.lo)} to {quantity(du, f.dimension, f.hi)}"
    if f.hi is not None:
        return f"max {quantity(du, f.dimension, f.hi)}"
    return "no bound" if f.lo is None else f"min {quantity(du, f.dimension, f.lo)}"


def limit_line(f, du: DisplayUnits) -> str:
    """One [[limit]] finding: 'mass limit "mtow": 2.6530 kg, max 3.0000 kg: ok, 0.3470 kg to spare'."""
    head = f'{KIND_WORDS.get(f.kind, f.kind)} "{f.name}"'
    if not f.applies:
        return f"{head}: does not apply here"
    what = {"inertia": f"I{f.axis} " if f.axis in ("xx", "yy", "zz") else f"∫{f.axis} dm ",
            "cg-offset": "CG offset "}.get(f.kind, "")
    line = f"{head}: {what}{quantity(du, f.dimension, f.value)}, {_bounds(f, du)}"
    if f.margin is None:
        return line
    if f.ok:
        return f"{line}: ok, {quantity(du, f.dimension, abs(f.margin))} to spare"
    return f"{line}: BROKEN by {quantity(du, f.dimension, abs(f.margin))}"


def limit_short(f, du: DisplayUnits) -> str:
    """A [[limit]] finding in a few words, for a status strip: 'mtow ok, 0.3470 kg to spare'."""
    if not f.applies:
        return f"{f.name}: does not apply here"
    if f.margin is None:
        return f"{f.name} {'ok' if f.ok else 'BROKEN'}"
    what = f"I{f.axis} " if f.kind == "inertia" and f.axis in ("xx", "yy", "zz") else (
        f"∫{f.axis} dm " if f.kind == "inertia" else "")
    amount = quantity(du, f.dimension, abs(f.margin))
    return f"{f.name} ok, {what}{amount} to spare" if f.ok else f"{f.name} BROKEN by {what}{amount}"


def room_line(room: RoomLeft | None, du: DisplayUnits) -> str:
    """'Room left: 0.3470 kg at this CG (mass limit "mtow" binds)'."""
    if room is None:
        return "Room left: no envelope or mass limit applies"
    if room.mass < 0:
        return f"Room left: none, {quantity(du, 'mass', -room.mass)} over {room.what}"
    if room.mass == 0:
        return f"Room left: none ({room.what})"
    return f"Room left: {quantity(du, 'mass', room.mass)} at this CG ({room.what} binds)"
