"""The ledger file: TOML parsing, the strict reader, the one writer, open/save with safety checks, snapshots.
"""
