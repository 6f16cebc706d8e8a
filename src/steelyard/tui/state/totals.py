"""What the panels show for one ledger under one loadout, and an edit's effect from two of them.

Every number is core's (`resolve`, `rollup_state`, `envelope_results`, and
`check_rollup` for what applies: the same scope rules as `steelyard check`); a
loadout that cannot be applied becomes `Totals.error` instead of an exception.
"""

from __future__ import annotations

from dataclasses import dataclass

from steelyard.core.history.changes import Effect
from steelyard.core.errors import SteelyardError
from steelyard.core.loading.loadout import State, resolve
from steelyard.core.document.model import Ledger
from steelyard.core.physics.rollup import MassProperties, rollup_state
from steelyard.core.limits.checks import Finding, StateCheck, check_rollup
from steelyard.core.limits.status import EnvelopeResult, RoomLeft, envelope_results, room_left


@dataclass(frozen=True)
class Totals:
    """Everything the panels show for one ledger under one loadout."""

    loadout: str | None
    state: State | None
    mp: MassProperties | None
    envelopes: tuple[EnvelopeResult, ...]
    error: str | None = None  # why the loadout cannot be applied
    check: StateCheck | None = None  # every envelope and [[limit]] against this state, scoped as `check` does
    room: RoomLeft | None = None  # mass that can still be added at the CG, and what binds

    def finding(self, kind: str, name: str) -> Finding | None:
        """This state's finding for one envelope (kind "envelope") or limit, or None."""
        if self.check is None:
            return None
        return next((f for f in self.check.findings if f.kind == kind and f.name == name), None)

    def applies(self, envelope: str) -> bool:
        """Whether the envelope's scope takes in this loadout (True when unknown)."""
        f = self.finding("envelope", envelope)
        return f is None or f.applies

    @property
    def limits(self) -> tuple[Finding, ...]:
        """The [[limit]] findings (applicable or not) of this state."""
        return () if self.check is None else tuple(f for f in self.check.findings if f.kind != "envelope")


def effect_of(before: Totals, after: Totals) -> Effect | None:
    """The change log's Effect from two roll-ups core already made (None: a side has no totals).

    The same subtraction as `core.changes.effect_between`, which would roll
    both ledgers up again: on a big ledger that is most of an edit's cost.
    """
    if before.mp is None or after.mp is None:
        return None
    m0 = {r.name: r.margin for r in before.envelopes}
    m1 = {r.name: r.margin for r in after.envelopes}
    names = list(m1) + [n for n in m0 if n not in m1]
    margins = tuple((n, None if m0.get(n) is None or m1.get(n) is None else float(m1[n]) - float(m0[n]))
                    for n in names)
    d_cg = tuple(float(x) for x in (after.mp.cg - before.mp.cg))
    return Effect(float(after.mp.mass) - float(before.mp.mass), d_cg, margins)


def compute_totals(ledger: Ledger, loadout: str | None) -> Totals:
    """Roll-up and envelope status from core; a loadout problem becomes `error`."""
    try:
        state = resolve(ledger, loadout)
        mp = rollup_state(state)
        envelopes = tuple(envelope_results(ledger, mp))  # refuses a roll-up that overflowed, naming the item
        check = check_rollup(ledger, loadout, mp)
    except SteelyardError as exc:
        return Totals(loadout, None, None, (), str(exc))
    return Totals(loadout, state, mp, envelopes, check=check, room=room_left(check.findings))
