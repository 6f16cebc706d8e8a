"""Change log and undo/redo: what each applied edit did, and the way back.

Every applied edit is a `Change`: when, who, what kind of edit, which item,
a one-line summary, the fields before and after (SI, keys named with their
units) and its `Effect` on the totals (Δmass, ΔCG per axis, Δmargin per
envelope) under the loadout that was active.

`History` keeps the Ledger objects themselves, so undo hands back the very
object that was there before: totals after an undo are bit-identical, not
recomputed. Changes read from the file are history only: undo never goes
behind them (the ledgers they started from were never loaded).

The log lives in the ledger file as an array of tables `[[change]]`; see
docs/changes.md. Pure: no file I/O, no terminal.
"""

from __future__ import annotations

import datetime as _dt
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace

from steelyard.core.errors import SteelyardError
from steelyard.core.physics.inertia import COMPONENTS
from steelyard.core.loading.loadout import resolve
from steelyard.core.document.model import Item, Ledger, Loadout, with_arrays
from steelyard.core.physics.rollup import rollup_state
from steelyard.core.limits.status import envelope_results

#: actions the program records; others are accepted (imports, tools) if named plainly
ACTIONS = ("add", "edit", "delete", "duplicate", "move", "loadout", "weighing", "import", "envelope", "units")
_DERIVE = object()


@dataclass(frozen=True)
class Effect:
    """What a change did to the totals, SI: kg, m, m per envelope (None where undefined)."""

    d_mass: float
    d_cg: tuple[float, float, float]
    d_margin: tuple[tuple[str, float | None], ...]


@dataclass(frozen=True)
class Change:
    time: str  # ISO-8601, UTC ("2026-05-04T09:12:33Z")
    author: str
    action: str
    item: str | None
    summary: str
    effect: Effect
    before: dict | None  # changed fields before (None: the thing did not exist)
    after: dict | None  # changed fields after (None: the thing is gone)
    reason: str | None = None  # why, in the engineer's words (asked on save; optional)
    request: str | None = None  # the change request / ticket number it answers (optional)
    #: the [[change]] table as read from the file: written back as it was, so an old log keeps its bytes
    table: dict | None = field(default=None, compare=False, repr=False)


# --------------------------------------------------------------------------- effect


def _has_loadout(ledger: Ledger, name: str | None) -> str | None:
    if name is None:
        return None
    return name if any(lo.name == name for lo in ledger.loadouts) else None


def _status(ledger: Ledger, loadout: str | None):
    mp = rollup_state(resolve(ledger, _has_loadout(ledger, loadout)))
    return mp, {r.name: r.margin for r in envelope_results(ledger, mp)}


def effect_between(before: Ledger, after: Ledger, loadout: str | None) -> Effect:
    """Δ totals from `before` to `after` under `loadout`.

    A loadout missing on one side (it was added or deleted by the change)
    counts as no loadout there: variable items empty. Envelopes are listed in
    the order of `after`, then those only in `before`; a margin undefined on
    either side (outside the envelope's mass range, no mass) gives None.
    """
    mp0, m0 = _status(before, loadout)
    mp1, m1 = _status(after, loadout)
    names = list(m1) + [n for n in m0 if n not in m1]
    margins = []
    for n in names:
        a, b = m0.get(n), m1.get(n)
        margins.append((n, None if a is None or b is None else float(b) - float(a)))
    d_cg = tuple(float(x) for x in (mp1.cg - mp0.cg))
    return Effect(float(mp1.mass) - float(mp0.mass), d_cg, tuple(margins))


# --------------------------------------------------------------------------- fields


def item_fields(it: Item) -> dict:
    """An item as a TOML-able dict, SI, keys named with units. Absent fields are left out."""
    out: dict = {"id": it.id, "name": it.name, "group": it.group, "mass_kg": float(it.mass),
                 "cg_m": [float(c) for c in it.cg], "quantity": int(it.quantity), "variable": bool(it.variable)}
    if it.inertia is not None:
        out["inertia_kg_m2"] = {k: float(v) for k, v in zip(COMPONENTS, it.inertia)}
    if it.shape is not None:
        shape: dict = {"kind": it.shape.kind, "axis": it.shape.axis}
        for k, v in it.shape.params.items():
            shape[f"{k}_m"] = [float(x) for x in v] if isinstance(v, tuple) else float(v)
        out["shape"] = shape
    if it.rotate:
        out["rotate_deg"] = [[a, float(d)] for a, d in it.rotate]
    if it.density is not None:
        out["density_kg_m3"] = float(it.density)
    return out


def loadout_fields(lo: Loadout) -> dict:
    out: dict = {"name": lo.name}
    if lo.base is not None:
        out["base"] = lo.base
    units = {"fraction": "", "mass": "_kg", "volume": "_m3"}
    out["set"] = {k: {f"{a.kind}{units.get(a.kind, '')}": float(a.value)} for k, a in lo.set.items()}
    return out


def _diff(a: dict | None, b: dict | None, keep: str) -> tuple[dict | None, dict | None]:
    """Only the fields that differ (plus the identifying key) on each side."""
    if a is None or b is None:
        return a, b
    keys = [k for k in dict.fromkeys([*a, *b]) if a.get(k) != b.get(k)]
    ka = {keep: a[keep]} if keep in a else {}
    kb = {keep: b[keep]} if keep in b else {}
    return ({**ka, **{k: a[k] for k in keys if k in a}}, {**kb, **{k: b[k] for k in keys if k in b}})


def fields_between(before: Ledger, after: Ledger, action: str,
                   item: str | None) -> tuple[dict | None, dict | None]:
    """The changed fields of `item` (an item id, or a loadout name for action "loadout")."""
    if item is None:
        return None, None
    if action == "loadout":
        names0 = {lo.name: lo for lo in before.loadouts}
        names1 = {lo.name: lo for lo in after.loadouts}
        a = loadout_fields(names0[item]) if item in names0 else None
        b = loadout_fields(names1[item]) if item in names1 else None
        return _diff(a, b, "name")
    a = item_fields(before.item(item)) if item in before.index else None
    b = item_fields(after.item(item)) if item in after.index else None
    return _diff(a, b, "id")


# --------------------------------------------------------------------------- history


def utc_stamp(now: _dt.datetime | str | None = None) -> str:
    """ISO-8601 UTC text, to the second, with a Z."""
    if isinstance(now, str):
        return now
    now = now or _dt.datetime.now(_dt.timezone.utc)
    if now.tzinfo is None:
        now = now.replace(tzinfo=_dt.timezone.utc)
    return now.astimezone(_dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")


class History:
    """The working ledger, its change log and the undo/redo stacks.

    `log` holds the persisted changes (read from the file) followed by this
    session's applied ones, oldest first. Undo pops only this session's
    changes; the persisted part is a record, not a stack.
    """

    def __init__(self, ledger: Ledger, log: Sequence[Change] = ()) -> None:
        self._ledger = ledger
        self._persisted: tuple[Change, ...] = tuple(log)
        self._done: list[tuple[Change, Ledger]] = []  # change, the ledger before it
        self._undone: list[tuple[Change, Ledger]] = []  # change, the ledger after it

    @property
    def ledger(self) -> Ledger:
        return self._ledger

    @property
    def log(self) -> tuple[Change, ...]:
        return self._persisted + tuple(c for c, _ in self._done)

    @property
    def can_undo(self) -> bool:
        return bool(self._done)

    @property
    def can_redo(self) -> bool:
        return bool(self._undone)

    def apply(self, new_ledger: Ledger, *, action: str, item: str | None, summary: str,
              loadout: str | None, author: str | None, now: _dt.datetime | str | None = None,
              before: dict | None | object = _DERIVE, after: dict | None | object = _DERIVE,
              effect: Effect | None = None) -> Change:
        """Make `new_ledger` current and record the change with its effect.

        `before`/`after` default to the changed fields of `item`; pass them
        for changes that are not about one item (a weighing, an import).
        `effect` may be passed when the caller already computed it (the editor's
        preview does), saving two roll-ups per edit on a large ledger.
        Applying after an undo drops the changes that could have been redone.
        """
        if not isinstance(action, str) or not action.strip():
            raise SteelyardError("a change needs an action", subject="change", field="action")
        if before is _DERIVE or after is _DERIVE:
            b0, a0 = fields_between(self._ledger, new_ledger, action, item)
            before = b0 if before is _DERIVE else before
            after = a0 if after is _DERIVE else after
        for name, value in (("before", before), ("after", after)):
            if value is not None and not _tomlable(value):
                raise SteelyardError("must be a table of TOML values", subject="change", field=name)
        change = Change(utc_stamp(now), author or "unknown", action, item, " ".join(str(summary).split()),
                        effect if effect is not None else effect_between(self._ledger, new_ledger, loadout),
                        before, after)
        self._done.append((change, self._ledger))
        self._undone.clear()
        self._ledger = new_ledger
        return change

    def reseat(self, ledger: Ledger) -> None:
        """Put `ledger` in place of the current one without recording a change: the same file as
        written, its placed files' rows made again after one of them was saved."""
        self._ledger = ledger

    def annotate(self, reason: str | None, request: str | None, *, saved: Sequence[Change] = ()) -> int:
        """Give this session's changes that have no reason or request yet these two notes.

        Changes in `saved` (by identity: already written to the file) keep what they
        had, so a reason given on one save is not stamped on the changes of an earlier
        one. Returns how many changes were annotated. Undo still hands back the same
        ledgers: only the log entry changes.
        """
        reason = " ".join(str(reason or "").split()) or None
        request = " ".join(str(request or "").split()) or None
        if reason is None and request is None:
            return 0
        kept = {id(c) for c in saved}
        n = 0
        for k, (c, led) in enumerate(self._done):
            if id(c) in kept or c.reason or c.request:
                continue
            self._done[k] = (replace(c, reason=reason, request=request), led)
            n += 1
        return n

    def undo(self) -> Change | None:
        """Go back one change; returns it, or None when there is nothing of this session to undo."""
        return self._step(self._done, self._undone)

    def redo(self) -> Change | None:
        return self._step(self._undone, self._done)

    def _step(self, source: list, target: list) -> Change | None:
        """Move the last change from one stack to the other, taking the ledger it keeps (undo and redo
        are the same move in opposite directions)."""
        if not source:
            return None
        change, ledger = source.pop()
        target.append((change, self._ledger))
        self._ledger = ledger
        return change


def _tomlable(v: object) -> bool:
    if isinstance(v, (bool, int, float, str, _dt.datetime, _dt.date, _dt.time)):
        return True
    if isinstance(v, (list, tuple)):
        return all(_tomlable(x) for x in v)
    if isinstance(v, Mapping):
        return all(isinstance(k, str) and _tomlable(x) for k, x in v.items())
    return False


# --------------------------------------------------------------------------- file form


#: significant figures of every number a new [[change]] table holds: a log is read by people, and
#: float noise (0.30000000000000004) or the 17 digits of a unit conversion say nothing to them
LOG_DIGITS = 6


def rounded(x: float, digits: int = LOG_DIGITS) -> float | None:
    """`x` to `digits` significant figures (the shortest text that reads back to it); None if not finite."""
    x = float(x)
    if not math.isfinite(x):
        return None
    r = float(f"{x:.{digits}g}")
    return 0.0 if r == 0 else r  # no "-0.0" in a log


def compact_value(v):
    """A TOML value with floats rounded (`rounded`) and non-finite numbers left out: a table loses
    that key; a list holding one is dropped whole (None), since a list keeps no place for a gap."""
    if isinstance(v, bool) or isinstance(v, int) or isinstance(v, str):
        return v
    if isinstance(v, float):
        return rounded(v)
    if isinstance(v, Mapping):
        out = {}
        for k, x in v.items():
            y = compact_value(x)
            if y is not None:
                out[k] = y
        return out
    if isinstance(v, (list, tuple)):
        out = [compact_value(x) for x in v]
        return None if any(y is None for y in out) else out
    return v


def change_to_table(c: Change) -> dict:
    """One `[[change]]` table, compact: numbers to `LOG_DIGITS` significant figures, and what is
    undefined (a margin outside the envelope's mass range, a CG of no mass) left out rather than
    written as nan. A change read from the file is written back as it was read."""
    if c.table is not None:
        return c.table
    t: dict = {"time": c.time, "author": c.author, "action": c.action}
    if c.item is not None:
        t["item"] = c.item
    t["summary"] = c.summary
    if c.reason:
        t["reason"] = c.reason
    if c.request:
        t["request"] = c.request
    t["d_mass_kg"] = rounded(c.effect.d_mass) or 0.0
    d_cg = compact_value([float(x) for x in c.effect.d_cg])
    if d_cg is not None:
        t["d_cg_m"] = d_cg
    margins = compact_value({n: (math.nan if m is None else float(m)) for n, m in c.effect.d_margin})
    if margins:
        t["d_margin_m"] = margins
    for key, side in (("before", c.before), ("after", c.after)):
        if side is not None:
            t[key] = compact_value(_plain(side))
    return t


def compact(c: Change) -> Change:
    """The change as its compact table reads back (what the file will hold)."""
    return _table_to_change(change_to_table(c), 1)


def _plain(v):
    if isinstance(v, Mapping):
        return {k: _plain(x) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [_plain(x) for x in v]
    return v


#: d_cg_m left out of a table: undefined on every axis (math.nan itself, so equal to itself in a tuple)
_NO_CG = [math.nan, math.nan, math.nan]


def _number(v: object) -> bool:
    return type(v) is float or type(v) is int


def _table_to_change(t: object, n: int) -> Change:
    subject = f"change #{n}"

    def fail(msg: str, field: str | None = None) -> SteelyardError:
        return SteelyardError(msg, subject=subject, field=field)

    if not isinstance(t, dict):
        raise fail("must be a table ([[change]])")
    time = t.get("time")
    if isinstance(time, _dt.datetime):
        time = utc_stamp(time)
    if not isinstance(time, str):
        raise fail("missing or not text (ISO-8601 UTC, e.g. 2026-05-04T09:12:33Z)", "time")
    try:
        _dt.datetime.fromisoformat(time)
    except ValueError:
        raise fail(f"{time!r} is not an ISO-8601 time", "time") from None
    texts = {}
    for key in ("author", "action"):
        v = t.get(key)
        if not isinstance(v, str) or not v.strip():
            raise fail("missing or not text", key)
        texts[key] = v
    item = t.get("item")
    if item is not None and not isinstance(item, str):
        raise fail("must be text", "item")
    summary = t.get("summary", "")
    if not isinstance(summary, str):
        raise fail("must be text", "summary")
    notes = {}
    for key in ("reason", "request"):
        v = t.get(key)
        if v is not None and not isinstance(v, str):
            raise fail("must be text", key)
        notes[key] = v or None
    dm = t.get("d_mass_kg")
    if not _number(dm):
        raise fail("missing or not a number", "d_mass_kg")
    dcg = t.get("d_cg_m", _NO_CG)  # left out: undefined (no mass on a side)
    if not isinstance(dcg, list) or len(dcg) != 3 or not all(_number(x) for x in dcg):
        raise fail("must be three numbers [dx, dy, dz]", "d_cg_m")
    raw = t.get("d_margin_m", {})
    if not isinstance(raw, dict):
        raise fail("must be a table of envelope name = number", "d_margin_m")
    margins = []
    for name, m in raw.items():
        if not _number(m):
            raise fail("must be a number (nan where undefined)", f"d_margin_m.{name}")
        margins.append((name, None if math.isnan(m) else float(m)))
    sides = {}
    for key in ("before", "after"):
        v = t.get(key)
        if v is not None and not isinstance(v, dict):
            raise fail("must be a table", key)
        sides[key] = v
    return Change(time, texts["author"], texts["action"], item, summary,
                  Effect(float(dm), tuple(x if x is math.nan else float(x) for x in dcg), tuple(margins)),
                  sides["before"], sides["after"], notes["reason"], notes["request"], table=t)


def log_from_ledger(ledger: Ledger) -> tuple[Change, ...]:
    """The persisted change log (`[[change]]` tables, `Ledger.changes`), oldest first."""
    cached = ledger.__dict__.get("_change_log")
    if cached is None:
        cached = tuple(_table_to_change(t, i) for i, t in enumerate(ledger.changes, start=1))
        ledger.__dict__["_change_log"] = cached  # a ledger is immutable; an edit makes a new one
    return cached


def ledger_with_log(ledger: Ledger, log: Sequence[Change]) -> Ledger:
    """The ledger with `log` as its `[[change]]` tables (cached columns kept)."""
    new = ledger.evolve(changes=tuple(change_to_table(c) for c in log))
    if "arrays" in ledger.__dict__:
        with_arrays(new, ledger.arrays)
    if "index" in ledger.__dict__:
        new.__dict__["index"] = ledger.index
    return new


def logged_since(older: Ledger, newer: Ledger) -> tuple[Change, ...]:
    """The changes `newer`'s log holds that `older`'s does not, oldest first: what a diff of the two spans.

    Entries are matched by time, author, action, item and summary (a saved entry never changes,
    so the same edit has the same five in both files); a log that cannot be read counts as empty.
    """
    def key(c: Change) -> tuple:
        return (c.time, c.author, c.action, c.item, c.summary)

    try:
        old = {key(c) for c in log_from_ledger(older)}
        new = log_from_ledger(newer)
    except SteelyardError:
        return ()
    return tuple(c for c in new if key(c) not in old)
