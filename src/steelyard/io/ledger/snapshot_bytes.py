"""A snapshot's content hash taken from the file's own bytes, so checking it need not rewrite the text.

The writer puts the canonical content text first, then a blank line and the
`[snapshot]` table (`snapshot.snapshot_text`). A file still as written thus
holds, before its last `\\n[snapshot]\\n`, exactly the bytes `content_sha256`
covers: hashing them (C speed) settles the check without regenerating the
canonical text of 100,000 items. This is a shortcut only: it is taken when
the hash of those bytes matches the stored one, and the rest of the file is
the `[snapshot]` table alone (parsed on its own; nothing after it adds an
item or a key to the content). Anything else (a comment, a blank line, CRLF,
a file from an earlier writer, a changed value) gets None here and the
canonical text is regenerated as before, so what verifies and what fails is
unchanged.
"""

from __future__ import annotations

import hashlib
import tomllib
from pathlib import Path

from steelyard.core.history.diff import SNAPSHOT_TABLE

_HEADER = f"\n[{SNAPSHOT_TABLE}]\n".encode("ascii")


def content_sha256_of_bytes(data: bytes) -> str | None:
    """SHA-256 of the bytes before the [snapshot] table when all after them is that table; else None."""
    i = data.rfind(_HEADER)
    if i < 0:
        return None
    try:
        tail = tomllib.loads(data[i:].decode("utf-8"))
    except (UnicodeDecodeError, tomllib.TOMLDecodeError, RecursionError):
        return None
    if list(tail) != [SNAPSHOT_TABLE]:
        return None
    return hashlib.sha256(memoryview(data)[:i]).hexdigest()


def written_content_sha256(loaded) -> str | None:
    """`content_sha256_of_bytes` of the file a LoadedLedger was read from, when it still holds those bytes."""
    try:
        data = Path(loaded.path).read_bytes()
    except (OSError, ValueError):
        return None
    if hashlib.sha256(data).hexdigest() != loaded.sha256:  # changed since it was read, or FILE@REV
        return None
    return content_sha256_of_bytes(data)
