"""Loadout amounts edited one item at a time.

The editor's edits (tui.state.edits) and the journal's replay of them
(io.durability.journal_records) must change loadouts in exactly the same way,
or a replayed journal would not rebuild what the user saw: both use these.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import replace

from steelyard.core.document.model import Amount, Loadout


def rename_in_loadouts(loadouts: Iterable[Loadout], old: str, new: str | None) -> list[Loadout]:
    """Loadouts with item `old` renamed to `new` in place (None: dropped from every loadout).
    A loadout that does not name `old` is kept as the same object."""
    out = []
    for lo in loadouts:
        if old in lo.set:
            amounts = {}
            for k, v in lo.set.items():
                if k != old:
                    amounts[k] = v
                elif new is not None:
                    amounts[new] = v
            lo = replace(lo, set=amounts)
        out.append(lo)
    return out


def with_amount(lo: Loadout, item_id: str, amount: Amount | None) -> Loadout:
    """`lo` carrying `amount` of the item (None: empty, i.e. not named)."""
    amounts = dict(lo.set)
    if amount is None:
        amounts.pop(item_id, None)
    else:
        amounts[item_id] = amount
    return replace(lo, set=amounts)
