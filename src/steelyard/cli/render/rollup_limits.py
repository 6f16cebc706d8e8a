"""The roll-up's limits section: scope, [[limit]]s and room left, as `steelyard check` reads them.

`rollup` shows one loadout; this checks that state with core's
`check_rollup` (the check's own scope rules, no second roll-up) and words it
with core.limits.limit_words, the wording the editor and the report share.
"""

from __future__ import annotations

from steelyard.core.caution import CAUTION
from steelyard.core.display import DisplayUnits, visible
from steelyard.core.limits.checks import StateCheck, check_rollup
from steelyard.core.limits.limit_words import limit_line, room_line, scope_words
from steelyard.core.limits.rules import envelope_specs
from steelyard.core.limits.status import room_left


def state_check(ledger, loadout: str | None, mp) -> StateCheck:
    return check_rollup(ledger, loadout, mp)


def scoped_out(check: StateCheck) -> set[str]:
    """Names of the envelopes whose scope leaves this state out."""
    return {f.name for f in check.findings if f.kind == "envelope" and not f.applies}


def print_limits(console, ledger, check: StateCheck, du: DisplayUnits, *, caution: bool) -> None:
    """'Limits' lines: envelopes out of scope, each [[limit]], the room left; nothing when there are none."""
    if not ledger.envelopes and not ledger.limits:
        return
    scopes = {e.name: e.applies_to for e in envelope_specs(ledger)}
    lines = [f'envelope "{f.name}": does not apply here (it limits {scope_words(scopes.get(f.name))} only)'
             for f in check.findings if f.kind == "envelope" and not f.applies]
    lines += [limit_line(f, du) for f in check.findings if f.kind != "envelope"]
    lines.append(room_line(room_left(check.findings), du))
    console.line("Limits (scoped as `steelyard check` scopes them)", "bold")  # console: cli.render.plain.Out
    for line in lines:
        console.line("  " + visible(line))
    if caution:
        console.line(CAUTION, "italic")
