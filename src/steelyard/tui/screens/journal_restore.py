"""Rebuilding an editing session from the journal of unsaved edits (pure, no widgets).

`io.journal.replay` gives the ledger the edits lead to; the editor also wants
them back as entries of the change log (time, author, action, summary,
effect) and as steps that undo can take back one by one. The session wrote,
beside each record, the change it made (see `Session._change`), so replaying
record by record through `History` gives both. Undo and redo records become
undo and redo again. The result is checked against a plain `replay` of all
records; if the two ever differ, the plain replay wins and is entered as one
change, so what is restored is always exactly what the journal says.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from steelyard.core.history.changes import History, log_from_ledger
from steelyard.core.document.model import Ledger
import steelyard.io.durability.journal as J
from steelyard.tui.text import clean


@dataclass(frozen=True)
class Touched:
    """What a list of records changes: item ids and loadout names, in order of first mention."""

    items: tuple[str, ...]
    loadouts: tuple[str, ...]
    other: tuple[str, ...]  # whole-ledger changes: "units", "frame", "envelopes", ...


def touched(records: Sequence[dict]) -> Touched:
    items: dict[str, None] = {}
    loadouts: dict[str, None] = {}
    other: dict[str, None] = {}
    for rec in records:
        for op in rec.get("ops", (rec,)):
            kind = op.get("op")
            if kind == "item":
                items[str(op.get("item", {}).get("id"))] = None
                if "old_id" in op:
                    items[str(op["old_id"])] = None
            elif kind == "delete":
                items[str(op.get("id"))] = None
            elif kind == "splice":
                for it in op.get("items", ()):
                    items[str(it.get("id"))] = None
            elif kind == "amount":
                loadouts[str(op.get("loadout"))] = None
            elif kind == "loadout":
                loadouts[str(op.get("loadout", {}).get("name"))] = None
            elif kind == "loadout_delete":
                loadouts[str(op.get("name"))] = None
            elif kind is not None:
                other[str(kind)] = None
    return Touched(tuple(items), tuple(loadouts), tuple(other))


def offer_lines(state: J.JournalState, limit: int = 200) -> list[str]:
    """What the restore offer says, as plain lines (user text cleaned of control characters)."""
    n = len(state.records)
    who = f"{state.user or 'someone'}@{state.host or 'unknown host'}"
    lines = [f"{n} unsaved edit{'s' if n != 1 else ''} by {who}"
             + (f", started {state.started}" if state.started else "")
             + (f" (process {state.pid})" if state.pid else "") + " were not saved."]
    if state.matches:
        lines.append("They start from this file as it is on disk: restoring gives exactly the edited ledger.")
    else:
        lines.append("WARNING: the file has changed since these edits were made (saved by someone else, or "
                     "a save finished just before the crash). Restoring applies them to the file as it is "
                     "now; check the result before saving.")
    if state.torn:
        lines.append("The last edit was cut off mid-write and is not included.")
    t = touched(state.records)
    if t.items:
        shown = ", ".join(t.items[:12]) + (f", and {len(t.items) - 12} more" if len(t.items) > 12 else "")
        lines.append(f"Items: {shown}")
    if t.loadouts:
        lines.append("Loadouts: " + ", ".join(t.loadouts[:12]))
    if t.other:
        lines.append("Also: " + ", ".join(t.other))
    lines.append("")
    lines.append("Edits, oldest first:")
    described = state.describe()
    for k, line in enumerate(described[:limit], 1):
        lines.append(f"{k:>3}. {line}")
    if len(described) > limit:
        lines.append(f"     … and {len(described) - limit} more")
    return [clean(line) for line in lines]


def _as_change(rec: dict, n: int) -> dict:
    c = rec.get("change")
    c = c if isinstance(c, dict) else {}
    summary = c.get("summary") if isinstance(c.get("summary"), str) else J.describe(rec)
    action = c.get("action") if isinstance(c.get("action"), str) and c.get("action") else "restore"
    item = c.get("item") if isinstance(c.get("item"), str) else None
    return {"action": action, "item": item, "summary": summary or f"journal record {n}",
            "author": c.get("author") if isinstance(c.get("author"), str) else None,
            "when": c.get("when") if isinstance(c.get("when"), str) else None,
            "loadout": c.get("loadout") if isinstance(c.get("loadout"), str) else None}


def rebuilt_history(ledger: Ledger, records: Sequence[dict], *, author: str, children=None) -> History:
    """The session as it was: `ledger` (as loaded) with every record applied through History.

    Raises SteelyardError (from `replay`) when the records cannot be applied.
    `children(file)` reads a file placed by a restored [[assembly]] edit (see `replay`).
    """
    final = J.replay(ledger, records, children=children)  # the authority; raises on a record that cannot apply
    history = History(ledger, log=log_from_ledger(ledger))
    for n, rec in enumerate(records, 1):
        c = _as_change(rec, n)
        if c["action"] == "undo" and history.can_undo:
            history.undo()
            continue
        if c["action"] == "redo" and history.can_redo:
            history.redo()
            continue
        new = J.replay(history.ledger, [rec], children=children)
        history.apply(new, action=c["action"], item=c["item"], summary=c["summary"], loadout=c["loadout"],
                      author=c["author"] or author, now=c["when"])
    if J.edit_record(history.ledger, final) is not None:  # should never happen; never restore a guess
        history = History(ledger, log=log_from_ledger(ledger))
        history.apply(final, action="restore", item=None, loadout=None, author=author,
                      summary=f"restored {len(records)} unsaved edits from the journal")
    return history
