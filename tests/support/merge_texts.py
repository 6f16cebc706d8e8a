"""Three ledger texts merged with `steelyard merge`, for the merge tests (tests/test_merge*.py)."""

from __future__ import annotations

import tomllib

from steelyard.cli.main import main

HEAD = """steelyard = 1

[units]
mass = "kg"
length = "m"
inertia = "kg*m**2"

[frame]
x = "aft"
y = "right"
z = "up"
"""

ITEMS = """
[[item]]
id = "battery"
name = "Main battery"
mass = 41.5
cg = [3.1, 0.0, 0.42]

[[item]]
id = "radio"
name = "Radio"
mass = 1.2
cg = [2.0, 0.1, 0.5]
"""


def merge(tmp_path, base: str, ours: str, theirs: str) -> tuple[int, str]:
    paths = []
    for name, text in (("base", base), ("ours", ours), ("theirs", theirs)):
        p = tmp_path / f"{name}.toml"
        p.write_text(text)
        paths.append(str(p))
    rc = main(["merge", *paths])
    return rc, (tmp_path / "ours.toml").read_text()


def data(text: str) -> dict:
    return tomllib.loads(text)
