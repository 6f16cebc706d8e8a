"""Three-way merge of ledgers by item id and by field: what a git merge driver needs.

Two engineers edit one ledger on two branches. A line merge of the TOML
text fails as soon as both touch the same item, even when one changed its
mass and the other its name; and it happily joins two edits that together
make no sense. So entries are matched by key (items by id, loadouts,
envelopes, limits and sequences by name, allocations by group) and merged
field by field against the common base:

- a field only one side changed takes that side's value; both changed it
  alike: that value; differently: the entry is a **conflict**;
- an entry added on one side is added; added on both with different
  content is a conflict; removed on one side and untouched on the other is
  removed; removed on one side and changed on the other is a conflict;
- single tables (`[units]`, `[frame]`, `[mac]`, `[fuel]`, `[growth]`,
  `[weighing]`, `[user]`) are one field each; the change log is the union
  of both logs (ours, then the entries only theirs added).

Fields compare by meaning (core.history.merge_fields): SI values for items,
bare numbers of tables held as written read in their own file's units. The
result carries each conflicting entry as ours has it (theirs when ours
removed it), so the writer can put markers around it. A snapshot is a frozen
record and is never merged.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from steelyard.core.document.model import FileUnits, Ledger
from steelyard.core.document.pinning import pin_units
from steelyard.core.errors import SteelyardError
from steelyard.core.history.diff_equal import same
from steelyard.core.history.merge_fields import (ALLOCATION, ASSEMBLY, ENVELOPE, ITEM, LIMIT, LOADOUT, SEQUENCE,
                                                 table_meaning)

#: why an entry conflicts
BOTH_CHANGED = "changed differently on both sides"
BOTH_ADDED = "added on both sides with different content"
OURS_REMOVED = "removed in ours, changed in theirs"
THEIRS_REMOVED = "changed in ours, removed in theirs"


@dataclass(frozen=True)
class Conflict:
    """One disputed entry: `ours` / `theirs` as each side has it (None: that side has none), in the result's units."""

    table: str  # the file's table name: "item", "loadout", "units", ...
    key: str  # id, name or group; for a single table its name
    why: str
    fields: tuple[str, ...]  # the fields changed differently (BOTH_CHANGED only)
    ours: object | None
    theirs: object | None

    @property
    def label(self) -> str:
        what = f"[{self.table}]" if self.key == self.table else f"{self.table} {self.key!r}"
        detail = f" ({', '.join(self.fields)})" if self.fields else ""
        return f"{what}: {self.why}{detail}"


@dataclass(frozen=True)
class MergeResult:
    """The merged ledger (conflicting entries as ours has them) and the conflicts, in file order."""

    ledger: Ledger
    conflicts: tuple[Conflict, ...]

    @property
    def clean(self) -> bool:
        return not self.conflicts


class _Sides:
    """Units of base, ours and theirs, and of the result."""

    def __init__(self, base: FileUnits, ours: FileUnits, theirs: FileUnits, result: FileUnits) -> None:
        self.base, self.ours, self.theirs, self.result = base, ours, theirs, result
        self.uniform = base == ours == theirs == result


def _field_order(*splits: dict) -> list[str]:
    seen: dict[str, None] = {}
    for s in splits:
        seen.update(dict.fromkeys(s))
    return list(seen)


def _equal(kind, a, ua: FileUnits, b, ub: FileUnits) -> bool:
    """Two entries mean the same, field by field."""
    if ua == ub and a == b:
        return True
    fa, fb = kind.split(a), kind.split(b)
    return all(same(kind.meaning(f, fa.get(f), ua), kind.meaning(f, fb.get(f), ub)) for f in _field_order(fa, fb))


def _rebased(kind, key: str, entry, side: FileUnits, units: FileUnits):
    """`entry` with its numbers kept in meaning under the result's units."""
    if entry is None or side == units:
        return entry
    return kind.join(key, {f: (v, side) for f, v in kind.split(entry).items()}, units)


def _three_way(kind, key: str, b, o, t, u: _Sides):
    """(merged entry, None) or (None, the fields changed differently on both sides)."""
    if u.uniform:
        if t == b:
            return o, None
        if o == b:
            return t, None
    fb, fo, ft = kind.split(b), kind.split(o), kind.split(t)
    chosen: dict = {}
    disputed: list[str] = []
    for f in _field_order(fo, ft, fb):
        mb = kind.meaning(f, fb.get(f), u.base)
        mo = kind.meaning(f, fo.get(f), u.ours)
        mt = kind.meaning(f, ft.get(f), u.theirs)
        if same(mt, mb) or same(mo, mt):
            chosen[f] = (fo.get(f), u.ours)
        elif same(mo, mb):
            chosen[f] = (ft.get(f), u.theirs)
        else:
            disputed.append(f)
    if disputed:
        return None, disputed
    return kind.join(key, chosen, u.result), None


def _keyed(kind, entries: Sequence) -> dict:
    out: dict = {}
    for k, e in enumerate(entries):
        key = kind.key(e, k)
        if key in out:
            raise SteelyardError(f"duplicate {kind.table} {key!r}; a merge matches entries by it", subject=kind.table)
        out[key] = e
    return out


def _merge_entries(kind, base: Sequence, ours: Sequence, theirs: Sequence, u: _Sides) -> tuple[list, list[Conflict]]:
    """Entries of one kind merged by key, in ours' order with theirs' additions after their predecessor."""
    kb, ko, kt = _keyed(kind, base), _keyed(kind, ours), _keyed(kind, theirs)
    out: dict = {}  # key -> entry, for keys ours has
    added: dict = {}  # anchor key (None: the start) -> [(key, entry)] of entries only theirs has
    conflicts: dict = {}
    for key, o in ko.items():
        b, t = kb.get(key), kt.get(key)
        if t is not None:
            if b is None:
                if not _equal(kind, o, u.ours, t, u.theirs):
                    conflicts[key] = Conflict(kind.table, key, BOTH_ADDED, (), o, t)
                out[key] = _rebased(kind, key, o, u.ours, u.result)
                continue
            merged, disputed = _three_way(kind, key, b, o, t, u)
            if disputed:
                conflicts[key] = Conflict(kind.table, key, BOTH_CHANGED, tuple(disputed), o, t)
                merged = o
            out[key] = _rebased(kind, key, merged, u.ours, u.result) if merged is o else merged
        elif b is None:
            out[key] = _rebased(kind, key, o, u.ours, u.result)
        elif not _equal(kind, o, u.ours, b, u.base):
            conflicts[key] = Conflict(kind.table, key, THEIRS_REMOVED, (), o, None)
            out[key] = _rebased(kind, key, o, u.ours, u.result)
    anchor = None
    for key, t in kt.items():
        if key in ko:
            anchor = key
            continue
        b = kb.get(key)
        if b is not None:
            if _equal(kind, t, u.theirs, b, u.base):
                continue  # ours removed it, theirs left it alone
            conflicts[key] = Conflict(kind.table, key, OURS_REMOVED, (), None, t)
        added.setdefault(anchor, []).append((key, _rebased(kind, key, t, u.theirs, u.result)))
    order = list(added.get(None, []))
    for key, e in out.items():
        order.append((key, e))
        order.extend(added.get(key, []))
    result = [e for _, e in order]
    for c in conflicts.values():
        ours = _rebased(kind, c.key, c.ours, u.ours, u.result)
        theirs = _rebased(kind, c.key, c.theirs, u.theirs, u.result)
        conflicts[c.key] = Conflict(c.table, c.key, c.why, c.fields, ours, theirs)
    position = {k: n for n, (k, _) in enumerate(order)}
    return result, sorted(conflicts.values(), key=lambda c: position[c.key])


# ------------------------------------------------------------------ single tables

#: single tables beside [units]: Ledger field -> (file name, pinning kind or None)
SINGLE = {"frame": ("frame", None), "mac": ("mac", "mac"), "fuel": ("fuel", None), "growth": ("growth", None),
          "weighing": ("weighing", "weighing"), "user": ("user", None)}


def _single_meaning(value, pin: str | None, units: FileUnits):
    return table_meaning(value, pin, units) if (pin and value is not None) else value


def _merge_single(name: str, pin: str | None, b, o, t, u: _Sides) -> tuple[object, Conflict | None]:
    mb, mo, mt = (_single_meaning(v, pin, s) for v, s in ((b, u.base), (o, u.ours), (t, u.theirs)))

    def rebase(v, side):
        return pin_units(v, pin, side) if (pin and v is not None and side != u.result) else v

    if same(mt, mb) or same(mo, mt):
        return rebase(o, u.ours), None
    if same(mo, mb):
        return rebase(t, u.theirs), None
    why = OURS_REMOVED if o is None else THEIRS_REMOVED if t is None else BOTH_CHANGED
    keep = rebase(o, u.ours) if o is not None else rebase(t, u.theirs)
    return keep, Conflict(name, name, why, (), rebase(o, u.ours), rebase(t, u.theirs))


def _merge_units(b: FileUnits, o: FileUnits, t: FileUnits) -> tuple[FileUnits, Conflict | None]:
    """[units] as one field; on a conflict the result keeps ours' units."""
    if t == b or o == t:
        return o, None
    if o == b:
        return t, None
    return o, Conflict("units", "units", BOTH_CHANGED, (), o, t)


def _merge_changes(b: Sequence, o: Sequence, t: Sequence) -> tuple:
    """The change log: ours, then the entries theirs added that ours lacks."""
    return tuple(o) + tuple(c for c in t if c not in o and c not in b)


def merge_ledgers(base: Ledger, ours: Ledger, theirs: Ledger) -> MergeResult:
    """Merge `ours` and `theirs`, both descended from `base` (an empty Ledger() when there is none)."""
    if any(x.snapshot is not None for x in (base, ours, theirs)):
        raise SteelyardError("is a snapshot: a frozen, hash-checked record is never merged; keep one side "
                             "(or take a new snapshot after merging the ledger)")
    units, unit_conflict = _merge_units(base.units, ours.units, theirs.units)
    u = _Sides(base.units, ours.units, theirs.units, units)
    conflicts: list[Conflict] = [unit_conflict] if unit_conflict else []
    out: dict = {"units": units}
    for attr, kind in (("items", ITEM), ("loadouts", LOADOUT), ("envelopes", ENVELOPE), ("limits", LIMIT),
                       ("allocations", ALLOCATION), ("sequences", SEQUENCE), ("assemblies", ASSEMBLY)):
        entries, found = _merge_entries(kind, getattr(base, attr), getattr(ours, attr), getattr(theirs, attr), u)
        out[attr] = tuple(entries)
        conflicts.extend(found)
    for attr, (name, pin) in SINGLE.items():
        value, conflict = _merge_single(name, pin, getattr(base, attr), getattr(ours, attr),
                                        getattr(theirs, attr), u)
        out[attr] = value
        if conflict:
            conflicts.append(conflict)
    out["changes"] = _merge_changes(base.changes, ours.changes, theirs.changes)
    return MergeResult(Ledger(**out), tuple(conflicts))
