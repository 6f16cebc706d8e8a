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
from pathlib import Path

#: core.history.diff.SNAPSHOT_TABLE, spelt here so that opening any file need not import the diff
#: (tests/test_snapshot_bytes.py holds the two equal)
SNAPSHOT_TABLE = "snapshot"
_HEADER = f"\n[{SNAPSHOT_TABLE}]\n".encode("ascii")
#: the [snapshot] table a writer puts last is a few hundred bytes; one further from the end is not
#: looked for when a file is opened (`file_hashes`: the shortcut is then not taken, nothing else changes)
_TAIL = 1 << 16


def _content_end(data: bytes, start: int = 0) -> int | None:
    """Where the trailing [snapshot] table starts when all after it is that table; else None."""
    i = data.rfind(_HEADER, start)
    if i < 0:
        return None
    import tomllib

    try:
        tail = tomllib.loads(data[i:].decode("utf-8"))
    except (UnicodeDecodeError, tomllib.TOMLDecodeError, RecursionError):
        return None
    return i if list(tail) == [SNAPSHOT_TABLE] else None


def content_sha256_of_bytes(data: bytes) -> str | None:
    """SHA-256 of the bytes before the [snapshot] table when all after them is that table; else None."""
    i = _content_end(data)
    return None if i is None else hashlib.sha256(memoryview(data)[:i]).hexdigest()


def file_hashes(data: bytes) -> tuple[str, str | None]:
    """(SHA-256 of all the bytes, `content_sha256_of_bytes`) in one pass: the content's hash is the
    whole file's hash stopped where the [snapshot] table starts."""
    i = _content_end(data, max(0, len(data) - _TAIL))
    if i is None:
        return hashlib.sha256(data).hexdigest(), None
    view = memoryview(data)
    h = hashlib.sha256(view[:i])
    content = h.hexdigest()
    h.update(view[i:])
    return h.hexdigest(), content


def written_content_sha256(loaded) -> str | None:
    """`content_sha256_of_bytes` of the file a LoadedLedger was read from, when it still holds those bytes
    (the hash taken when it was opened, when there was one: those are the bytes the ledger came from)."""
    if getattr(loaded, "content_sha256", None) is not None:
        return loaded.content_sha256
    try:
        data = Path(loaded.path).read_bytes()
    except (OSError, ValueError):
        return None
    if hashlib.sha256(data).hexdigest() != loaded.sha256:  # changed since it was read, or FILE@REV
        return None
    return content_sha256_of_bytes(data)
