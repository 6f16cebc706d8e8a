"""Arrays of tables whose entries are known by name ([[limit]], [[sequence]]).

Messages, cross-references and the change log all name such an entry, so each
must be a table with a non-empty, unique `name`. The checks are the same for
every such array; only the table's name in the message differs.
"""

from __future__ import annotations

from steelyard.core.errors import SteelyardError, said


def entry_name(raw: object, table: str, k: int) -> tuple[str, str]:
    """The name of entry `k` (1-based) of `[[table]]` and the subject its messages use."""
    if type(raw) is not dict:
        raise SteelyardError("must be a table", subject=f"{table} #{k}")
    name = raw.get("name")
    if type(name) is not str or not name.strip():
        raise SteelyardError("required: a non-empty string", subject=f"{table} #{k}", field="name")
    return name, f"{table} {said(name)}"


def refuse_duplicate_names(names: list[str], table: str) -> None:
    """One message for the first name given to more than one entry."""
    for name in names:
        if names.count(name) > 1:
            raise SteelyardError(f"duplicate {table} name", subject=f"{table} {said(name)}", field="name")
