"""The demo ledger shipped inside the package (works after a plain install)."""

from __future__ import annotations

from importlib import resources
from pathlib import Path


def demo_path() -> Path:
    return Path(str(resources.files("steelyard") / "demo" / "demo.toml"))
