"""What changed: the change log with undo/redo, and ledger/loadout diffs.

May import: any other core subpackage.
"""
