"""Small ledgers from TOML text, for tests that give the file's text inline."""

from __future__ import annotations

import tomllib
from pathlib import Path

from steelyard.io.ledger.read import ledger_from_data


def ledger_from_text(text: str, source: str = "test.toml"):
    """The ledger a file with this text holds, parsed by the standard library's tomllib."""
    return ledger_from_data(tomllib.loads(text), source=source)


def write_ledger(folder: Path, text: str, name: str = "ledger.toml") -> Path:
    """The text as a file in `folder` (a test's tmp_path); returns its path."""
    path = folder / name
    path.write_text(text)
    return path
