"""The read cache: an unchanged ledger reopens from what the last read built, not by parsing it again.

One entry per file as named (the path given, its absolute and real path), in
the user's cache folder (platformdirs; `STEELYARD_CACHE_DIR` overrides it).
An entry is used only when all of these still hold, else it is ignored and
rebuilt by the next read:

- its header and payload are whole (magic, lengths, sha256 of each);
- it was written by this very program: version, Python, numpy, and the
  size and modification time of every steelyard source file;
- the file's bytes have the sha256 recorded, and so has every file the read
  went on to (each placed assembly file, at any depth);
- the payload unpickles through a restricted unpickler (io.ledger.cache_codec).

Anything else (a damaged, stale or foreign file, an unreadable or unwritable
folder) is a miss, never an error. Writers never read through it: only
`open_ledger(..., cache=True)` does, which read-only commands ask for.
`STEELYARD_NO_CACHE=1` or `--no-cache` turn it off (no read, no write).
The folder holds at most MAX_ENTRIES entries and MAX_BYTES bytes; the
least recently used go first.
"""

from __future__ import annotations

import gc
import hashlib
import json
import os
import struct
import sys
import time
from dataclasses import dataclass
from pathlib import Path

from steelyard.core.document.model import Ledger

MAGIC = b"steelyard ledger cache\n"
SUFFIX = ".ledger-cache"
MAX_ENTRIES = 32
MAX_BYTES = 256 * 1024 * 1024
_LENGTH = struct.Struct(">I")
_off = False  # set by --no-cache


def turn_off(off: bool = True) -> None:
    """No reads or writes of the cache in this process from now on (the CLI's --no-cache); False: again."""
    global _off
    _off = off


def enabled() -> bool:
    return not _off and os.environ.get("STEELYARD_NO_CACHE", "").strip() in ("", "0")


def cache_dir() -> Path | None:
    """Where entries live: $STEELYARD_CACHE_DIR, else <user cache dir>/steelyard/ledgers (None: unknown)."""
    given = os.environ.get("STEELYARD_CACHE_DIR", "")
    if given:
        return Path(given)
    try:
        from platformdirs import user_cache_dir
    except ImportError:  # pragma: no cover - a dependency; a bare checkout may lack it
        return None
    return Path(user_cache_dir("steelyard")) / "ledgers"


_PROGRAM: list[str] = []


def program_tag() -> str:
    """This program exactly: version, Python, numpy, and every source file's size and mtime (a dev
    checkout with edited code never trusts what older code wrote)."""
    if _PROGRAM:
        return _PROGRAM[0]
    import numpy

    import steelyard

    h = hashlib.sha256()
    root = os.path.dirname(os.path.abspath(steelyard.__file__))
    for folder, dirs, files in sorted(os.walk(root)):
        dirs.sort()
        for name in sorted(files):
            if name.endswith(".py"):
                try:
                    st = os.stat(os.path.join(folder, name))
                except OSError:
                    continue
                h.update(f"{os.path.relpath(folder, root)}/{name}:{st.st_size}:{st.st_mtime_ns}\n".encode())
    _PROGRAM.append(f"steelyard {steelyard.__version__}; python {sys.version}; numpy {numpy.__version__}; "
                    f"sources {h.hexdigest()}")
    return _PROGRAM[0]


def _key(source: str, fast: bool) -> str:
    return json.dumps([source, os.path.abspath(source), os.path.realpath(source), bool(fast)])


def entry_path(source: str, *, fast: bool = True) -> Path | None:
    """The cache file for `source` (None when there is no cache folder)."""
    folder = cache_dir()
    if folder is None:
        return None
    return folder / (hashlib.sha256(_key(source, fast).encode()).hexdigest()[:40] + SUFFIX)


@dataclass(frozen=True)
class Hit:
    ledger: Ledger
    had_comments: bool


def _sha(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def _split(blob: bytes) -> tuple[dict, int]:
    """(header, where the payload starts) of a whole, undamaged entry; ValueError otherwise."""
    if not blob.startswith(MAGIC):
        raise ValueError("not a cache entry")
    at = len(MAGIC)
    (n,) = _LENGTH.unpack_from(blob, at)
    at += _LENGTH.size
    raw, check = blob[at:at + n], blob[at + n:at + n + 32]
    if len(raw) != n or hashlib.sha256(raw).digest() != check:
        raise ValueError("damaged header")
    header = json.loads(raw.decode("utf-8"))
    if type(header) is not dict:
        raise ValueError("damaged header")
    start = at + n + 32
    payload = memoryview(blob)[start:]
    if len(payload) != header.get("size") or _sha(payload) != header.get("sha256"):
        raise ValueError("damaged payload")
    return header, start


def _same_files(files: object) -> bool:
    """True when every file the read went on to still has the bytes it had."""
    if type(files) is not list:
        return False
    for entry in files:
        if type(entry) is not list or len(entry) != 2 or not all(type(x) is str for x in entry):
            return False
        try:
            with open(entry[0], "rb") as f:
                data = f.read()
        except OSError:
            return False
        if _sha(data) != entry[1]:
            return False
    return True


def _discard(path: Path) -> None:
    try:
        path.unlink()
    except OSError:
        pass


def lookup(source: str, data: bytes, *, fast: bool = True, sha256: str | None = None) -> Hit | None:
    """What the last read of `source` built, if its bytes (`data`, whose sha256 is `sha256` when known)
    and every file it read are unchanged."""
    if not enabled():
        return None
    path = entry_path(source, fast=fast)
    if path is None:
        return None
    try:
        blob = path.read_bytes()
    except OSError:
        return None
    try:
        header, start = _split(blob)
    except (ValueError, struct.error, UnicodeDecodeError):
        _discard(path)  # damaged: rebuilt by this read
        return None
    if header.get("program") != program_tag() or header.get("key") != _key(source, fast):
        _discard(path)  # another program's (or version's) entry, or a name clash
        return None
    if header.get("top") != (sha256 or _sha(data)) or not _same_files(header.get("files")):
        return None  # stale: the read that follows writes over it
    from steelyard.io.ledger.cache_codec import loads

    collecting = gc.isenabled()
    gc.disable()  # the ledger holds no cycles: collection passes over its objects are pure cost
    try:
        ledger = loads(blob, start)
    except Exception:  # noqa: BLE001 - anything a foreign payload makes the unpickler do is a miss
        _discard(path)
        return None
    finally:
        if collecting:
            gc.enable()
    try:
        if time.time() - path.stat().st_mtime > 600:  # recently used: evicted last (a touch per ten minutes is enough)
            os.utime(path)
    except OSError:
        pass
    return Hit(ledger, bool(header.get("had_comments")))


def store(source: str, data: bytes, ledger: Ledger, *, had_comments: bool, files: dict | None = None,
          fast: bool = True, sha256: str | None = None) -> None:
    """Remember what reading `source` (bytes `data`) built; `files`: every other file the read went
    on to, realpath -> (label, sha256) (io.ledger.tree.TreeReader.files). Never raises for I/O."""
    if not enabled():
        return
    path = entry_path(source, fast=fast)
    if path is None:
        return
    from steelyard.io.ledger.cache_codec import dumps

    collecting = gc.isenabled()
    gc.disable()  # millions of short-lived containers: a collection pass would walk the whole ledger
    try:
        payload = dumps(ledger)
    except Exception:  # noqa: BLE001 - something unpicklable: not cached, the read stands
        return
    finally:
        if collecting:
            gc.enable()
    if payload is None or len(payload) > MAX_BYTES // 2:
        return
    header = json.dumps({
        "program": program_tag(), "key": _key(source, fast), "top": sha256 or _sha(data),
        "files": [[key, sha] for key, (_, sha) in (files or {}).items()],
        "had_comments": bool(had_comments), "size": len(payload), "sha256": _sha(payload),
    }).encode("utf-8")
    blob = b"".join((MAGIC, _LENGTH.pack(len(header)), header, hashlib.sha256(header).digest(), payload))
    import tempfile  # here: a hit never needs it

    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=".tmp-", dir=path.parent)
    except OSError:
        return
    try:
        with os.fdopen(fd, "wb") as f:
            f.write(blob)
        os.replace(tmp, path)
    except OSError:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        return
    evict(path.parent)


def evict(folder: Path, *, max_entries: int | None = None, max_bytes: int | None = None) -> None:
    """Keep the newest entries within the bounds; remove the rest (and temporary files left by a crash)."""
    max_entries = MAX_ENTRIES if max_entries is None else max_entries
    max_bytes = MAX_BYTES if max_bytes is None else max_bytes
    try:
        names = os.listdir(folder)
    except OSError:
        return
    entries = []
    for name in names:
        p = folder / name
        try:
            st = p.stat()
        except OSError:
            continue
        if name.endswith(SUFFIX):
            entries.append((st.st_mtime_ns, st.st_size, p))
        elif name.startswith(".tmp-") and st.st_mtime < time.time() - 3600:
            _discard(p)
    entries.sort(key=lambda e: e[0], reverse=True)
    total = 0
    for i, (_, size, p) in enumerate(entries):
        total += size
        if i >= max_entries or total > max_bytes:
            _discard(p)


def same_reading(a: Ledger, b: Ledger) -> bool:
    """Whether two readings of one file mean the same: every table, every item and every column.

    Placements are compared by what they record (id, file, hash, rows, placement), not by the
    child ledgers they keep; cached derived values (names starting with "_") are left out."""
    import dataclasses

    import numpy as np

    for f in dataclasses.fields(Ledger):
        x, y = getattr(a, f.name), getattr(b, f.name)
        if f.name == "placed":
            if [_placed_key(q) for q in x] != [_placed_key(q) for q in y]:
                return False
        elif x != y:
            return False
    p, q = a.arrays, b.arrays
    (pr, pv), (qr, qv) = p.own_sparse(), q.own_sparse()
    return all(np.array_equal(u, v) for u, v in ((p.unit_mass, q.unit_mass), (p.quantity, q.quantity),
                                                  (p.cg, q.cg), (p.variable, q.variable), (pr, qr), (pv, qv)))


def _placed_key(q) -> tuple:
    """What a placement record says, arrays as lists (a record compared whole would compare arrays)."""
    import dataclasses

    import numpy as np

    said = tuple(v.tolist() if isinstance(v, np.ndarray) else v
                 for v in (getattr(q.placement, f.name) for f in dataclasses.fields(q.placement)))
    return (q.id, q.file, q.sha256, q.start, q.stop, q.depth, said)
