"""Every table's meaning, derived once when a ledger is read.

The reader checks the shape of the file (core.document.schema) and the v1
fields; the tables added since are owned by the modules that give them
meaning. This asks each of them once, so a bad `[[limit]]`, tolerance or
sequence is refused when the file is opened — by `rollup` as much as by
`check` — and each derived result stays cached on the (immutable) ledger for
the commands that use it.
"""

from __future__ import annotations

from steelyard.core.assembly.checked import own_part, own_rows, seed_tables, top_records
from steelyard.core.control.growth import allocations, growth_fractions
from steelyard.core.control.uncertainty import parse_tolerances
from steelyard.core.document.model import Ledger, more_rows, rows_with
from steelyard.core.limits.rules import envelope_specs, fuel_rows, limit_specs, mac_reference
from steelyard.core.loading.loadout import fill_fractions, is_removable, loadout_condition
from steelyard.core.loading.tank import tank_tables


def validate_document(ledger: Ledger) -> None:
    """Raise the first SteelyardError any table of `ledger` gives (located by table and key).

    In a tree, the rows placed from other files were checked when each file was
    read: only the file's own rows are looked at one by one (core.assembly.checked).
    """
    mac_reference(ledger)
    fuel_rows(ledger)
    own = ledger
    records = top_records(ledger) if ledger.placed else None
    if records:
        rows = own_rows(ledger, records)
        own = own_part(ledger, rows)
    for i in rows_with(own.items, "removable", unset=False, among=more_rows(own)):
        if own.items[i].removable:
            is_removable(own.items[i])
    for lo in ledger.loadouts:
        fill_fractions(ledger, lo.name)
        loadout_condition(ledger, lo.name)
    envelope_specs(ledger)
    limit_specs(ledger)
    if ledger.sequences:  # the weighing, sequence and change-log modules only for a file with such tables
        from steelyard.core.loading.sequence import sequence_specs

        sequence_specs(ledger)
    if records:
        seed_tables(ledger, records, own, rows)  # tanks, then growth: the order of the two calls below
    tank_tables(ledger)
    growth_fractions(ledger)
    allocations(ledger)
    parse_tolerances(own)
    if ledger.weighing is not None:
        from steelyard.core.control.weighing import parse_weighing

        parse_weighing(ledger.weighing, ledger.units, ledger)
    if ledger.changes:
        from steelyard.core.history.changes import log_from_ledger

        log_from_ledger(ledger)
