"""The item form's preview as a delta: the other rows are summed once, each keystroke adds one row.

Rolling a 100,000-item ledger up again for every key is O(n); here the
roll-up of the loadout's state without the edited row is kept
(`core.physics.delta.rest_sums`, made on the first keystroke) and the row the
fields describe is combined with it, then the envelopes and limits are
checked on those totals (O(envelopes)). The figures are core's: the same
`envelope_results` and `check_rollup` as the panels.

Covered: a fixed item (added, or edited and still fixed). A variable item's
fill comes from loadout amounts that may depend on its own mass and from
tank tables, so for those `totals` returns None and the form rolls the
edited ledger up in full (in a thread on big ledgers), as Apply always does.
"""

from __future__ import annotations

from steelyard.core.document.model import Item, Ledger
from steelyard.core.errors import SteelyardError
from steelyard.core.limits.checks import check_rollup
from steelyard.core.limits.status import envelope_results, room_left
from steelyard.core.physics.delta import RestSums, rest_sums, with_row
from steelyard.tui.state.totals import Totals


class FormPreview:
    """Totals of `ledger` with `original` (None: a new item) replaced by the form's item, in O(1)."""

    def __init__(self, ledger: Ledger, before: Totals, original: Item | None):
        self.ledger, self.before, self.original = ledger, before, original
        self._rest: RestSums | None | bool = False  # False: not summed yet; None: not finite

    def _row(self) -> int | None:
        return None if self.original is None else self.ledger.index[self.original.id]

    def rest(self) -> RestSums | None:
        if self._rest is False:
            st = self.before.state
            rows, values = st.own_sparse()
            self._rest = rest_sums(st.mass, st.cg, values, self._row(), own_rows=rows)
        return self._rest

    def covers(self, item: Item) -> bool:
        o = self.original
        return (self.before.mp is not None and self.before.state is not None and not item.variable
                and (o is None or not o.variable) and getattr(item, "cg_table", None) is None)

    def totals(self, item: Item) -> Totals | None:
        """The edited ledger's totals, or None when the delta does not cover this edit."""
        if not self.covers(item):
            return None
        rest = self.rest()
        if rest is None:
            return None
        row = self._row()
        fill = 1.0 if row is None else float(self.before.state.fill[row])  # a fixed item left off stays off
        scale = item.quantity * fill
        mp = with_row(rest, item.mass * scale, item.cg, item.own_tensor() * scale)
        if mp is None:
            return None  # beyond a float: the full roll-up names the item
        lo = self.before.loadout
        try:
            envelopes = tuple(envelope_results(self.ledger, mp))
            check = check_rollup(self.ledger, lo, mp)
        except SteelyardError as exc:
            return Totals(lo, None, None, (), str(exc))
        return Totals(lo, None, mp, envelopes, check=check, room=room_left(check.findings))
