"""A ledger written to another folder must still place the files it placed where it was read.

An [[assembly]] table names its file relative to the ledger's own folder
(docs/assemblies.md). Written elsewhere (Save as, `-o` of a command that
rewrites a ledger), the same text would place another file, or none: the
written ledger would not mean what was read. Every writer of a ledger read
from a file asks here first; the refusal names the placement and says what
to do.
"""

from __future__ import annotations

import os

from steelyard.core.document.model import Ledger
from steelyard.core.errors import SteelyardError, said


def refuse_moved_placements(ledger: Ledger, source: str | None, target: str) -> None:
    """Raise unless every placement of `ledger` (read from `source`) names the same file from
    `target`'s folder (an absolute path always does; so does the same folder)."""
    if source is None or not ledger.assemblies:
        return
    here = os.path.dirname(os.path.realpath(source))
    there = os.path.dirname(os.path.realpath(target))
    if here == there:
        return
    for k, entry in enumerate(ledger.assemblies, start=1):
        name = entry.get("file")
        if not isinstance(name, str) or not name or os.path.isabs(name):
            continue
        if os.path.realpath(os.path.join(here, name)) != os.path.realpath(os.path.join(there, name)):
            ident = entry.get("id")
            raise SteelyardError(
                f"places {name!r}, a path from the folder the ledger was read from: written in another "
                f"folder it would place another file or none; write it in the same folder ({here})",
                file=target, subject=f"assembly {said(ident)}" if isinstance(ident, str) and ident else
                f"assembly #{k}", field="file")
