"""Names of the chart files a Markdown report writes beside itself.

Each name starts with the report's own name, so two reports in one folder
never write over each other's pictures: `w-and-b.md` gets
`w-and-b-envelope-normal.svg`, `w-and-b-envelope-utility.svg` and, when the
ledger has a history in git, `w-and-b-mass-trend.svg`.
"""

from __future__ import annotations

import re

_OTHER = re.compile(r"[^a-z0-9]+")


def slug(name: str) -> str:
    """A file-name piece of an envelope name: lower-case letters and digits joined by '-'."""
    return _OTHER.sub("-", str(name).lower()).strip("-")


def envelope_files(stem: str, envelopes: list[str]) -> dict[str, str]:
    """Envelope name -> chart file name; names that slug alike (or to nothing) get their position."""
    out: dict[str, str] = {}
    used: set[str] = set()
    for k, name in enumerate(envelopes, start=1):
        piece = slug(name) or str(k)
        if piece in used:
            piece = f"{piece}-{k}"
        used.add(piece)
        out[name] = f"{stem}-envelope-{piece}.svg"
    return out


def trend_file(stem: str) -> str:
    return f"{stem}-mass-trend.svg"
