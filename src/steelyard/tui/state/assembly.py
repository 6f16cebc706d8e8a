"""Assemblies in the editor, without widgets: which placement a row comes from, the placement
form's fields <-> an [[assembly]] table, reading a placed file for an edit, and refreshing the
parent after a placed file was saved.

A placed item is read-only in the parent: it belongs to another file, which
the user opens in place to edit. A placement itself (id, file, group, at,
mirror, rotate) is the parent's own data and edited like an item, through
core.assembly.edit, so an edit of a 100,000-item tree is a splice of the
flat ledger and never a re-read.
"""

from __future__ import annotations

import math
import os
import posixpath
import re
from dataclasses import dataclass

from steelyard.core.assembly.edit import add_assembly, remove_assembly, top_placements, with_assembly, with_placed_file
from steelyard.core.assembly.flatten import Placed, group_prefix
from steelyard.core.assembly.placement import read_placement
from steelyard.core.document.model import Ledger
from steelyard.core.errors import SteelyardError, UnitError, said
from steelyard.core.units import parse_number
from steelyard.io.ledger.file import open_ledger
from steelyard.io.ledger.toml_write import number

#: form field keys, in the order the form shows them
FIELDS = ("id", "file", "group", "x", "y", "z", "mirror", "rotate")
AXES = ("x", "y", "z")


# ------------------------------------------------------------- placed rows
def _by_id(ledger: Ledger) -> dict[str, Placed]:
    cache = ledger.__dict__.get("_placed_by_id")
    if cache is None:
        cache = ledger.__dict__["_placed_by_id"] = {q.id: q for q in ledger.placed}
    return cache


def source_of(ledger: Ledger, item_id: str) -> Placed | None:
    """The placement an item comes from (the innermost one), None for the file's own item."""
    i = ledger.index.get(item_id)
    if i is None:
        return None
    src = ledger.items[i].source
    return None if src is None else _by_id(ledger).get(src)


def placed_mark(ledger: Ledger, item) -> str:
    """"‹lift-pod› ": the name of the file a placed item comes from, before its name in the table."""
    q = _by_id(ledger).get(item.source)
    if q is None:
        return "‹?› "
    return f"‹{file_stem(q.file)}› "


def file_stem(file: str) -> str:
    """"lift-pod" for "pods/lift-pod.toml": what fits beside a name at 80 columns."""
    stem = posixpath.basename(file)
    return stem[:-5] if stem.endswith(".toml") else stem


def top_of(ledger: Ledger, row: int) -> Placed | None:
    """The placement this file makes (depth 1) that holds row `row`, if any."""
    for q in ledger.placed:
        if q.depth == 1 and q.start <= row < q.stop:
            return q
    return None


def placement(ledger: Ledger, assembly_id: str) -> tuple[int, Placed] | None:
    """(index in [[assembly]], record) of one of this file's placements."""
    for k, t in enumerate(ledger.assemblies):
        if t.get("id") == assembly_id:
            for q in top_placements(ledger):
                if q.id == assembly_id:
                    return k, q
    return None


def group_files(ledger: Ledger) -> dict[str, str]:
    """Group path -> the file placed there (the group row of each placement shows it)."""
    cache = ledger.__dict__.get("_group_files")
    if cache is not None:
        return cache
    prefix: dict[str, str] = {}
    out: dict[str, str] = {}
    for q in sorted(ledger.placed, key=lambda q: q.depth):
        own = group_prefix(q.placement)
        above = prefix.get(q.id.rsplit("/", 1)[0]) if q.depth > 1 else None
        prefix[q.id] = f"{above}/{own}" if above else own
        out.setdefault(prefix[q.id], q.file)
    ledger.__dict__["_group_files"] = out
    return out


def refusal(ledger: Ledger, item_id: str, key: str = "o") -> str | None:
    """Why a placed item cannot be changed here (None for the file's own items)."""
    i = ledger.index.get(item_id)
    if i is None or ledger.items[i].source is None:
        return None
    top = top_of(ledger, i)
    file = top.file if top is not None else (source_of(ledger, item_id).file)
    where = top.id if top is not None else ""
    return (f"{item_id} belongs to {file} (placed here as {where}): read-only in this file. "
            f"Press {key} to open {file} and edit it there; Backspace comes back.")


# ---------------------------------------------------------- placed files
def child_path(parent_path: str, file: str) -> str:
    """A placement's file on disk: `file` is relative to the parent's folder, '/'-separated."""
    if "\x00" in file or os.path.isabs(file):
        raise SteelyardError(f"{said(file)} is not a relative file path", subject="assembly", field="file")
    return os.path.normpath(os.path.join(os.path.dirname(os.path.abspath(parent_path)), *file.split("/")))


@dataclass(frozen=True)
class Child:
    """A placed file as read for an edit: its resolved ledger and the hash of its bytes."""

    path: str
    ledger: Ledger
    sha256: str
    mtime: float


def read_child(parent_path: str | None, file: str, *, cache: dict | None = None, subject: str = "assembly") -> Child:
    """Read the file a placement names, refusing a cycle back to the parent (located errors)."""
    if parent_path is None:
        raise SteelyardError("save this ledger first: a placed file's path is relative to it", subject=subject,
                             field="file")
    try:
        path = child_path(parent_path, file)
        mtime = os.stat(path).st_mtime
    except SteelyardError as exc:
        raise SteelyardError(exc.message, subject=subject, field="file") from None
    except OSError:
        raise SteelyardError(f"no such file: {said(file)} (relative to {os.path.basename(parent_path)})",
                             subject=subject, field="file") from None
    key = (os.path.realpath(path), mtime)
    hit = cache.get(key) if cache is not None else None
    if hit is None:
        top = os.path.realpath(parent_path)
        if os.path.realpath(path) == top:
            raise SteelyardError(f"assemblies would form a cycle: {os.path.basename(parent_path)} places itself",
                                 subject=subject, field="file")
        try:
            loaded = open_ledger(path)
        except SteelyardError as exc:
            raise SteelyardError(f"cannot place {said(file)}: {exc}", subject=subject, field="file") from None
        folder = os.path.dirname(os.path.abspath(path))
        for q in loaded.ledger.placed:  # shown from the child's folder
            if os.path.realpath(os.path.join(folder, *q.file.split("/"))) == top:
                raise SteelyardError(f"assemblies would form a cycle: {os.path.basename(parent_path)} -> {file} -> "
                                     f"... -> {os.path.basename(parent_path)}", subject=subject, field="file")
        hit = Child(path, loaded.ledger, loaded.sha256, mtime)
        if cache is not None:
            cache[key] = hit
    return hit


def placed_reader(parent_path: str | None):
    """`children(file)` for a journal replay: a placed file's (resolved ledger, sha256), read from disk."""
    def children(file: str):
        c = read_child(parent_path, file)
        return c.ledger, c.sha256
    return children


# --------------------------------------------------------- form <-> table
def fields_of(table: dict | None, length_unit: str) -> dict[str, str]:
    """The form's starting text for a placement (None: a new one)."""
    if table is None:
        return {"id": "", "file": "", "group": "", "x": "0", "y": "0", "z": "0", "mirror": "", "rotate": ""}
    at = table.get("at", [0, 0, 0])
    out = {"id": str(table.get("id", "")), "file": str(table.get("file", "")), "group": str(table.get("group", "")),
           "mirror": str(table.get("mirror") or ""),
           "rotate": ", ".join(f"{a} {number(float(d))}" for a, d in table.get("rotate", []))}
    for k, a in enumerate(AXES):
        v = at[k] if isinstance(at, list) and len(at) == 3 else ""
        out[a] = v if isinstance(v, str) else number(float(v))
    return out


def _turns(text: str) -> list[list]:
    out = []
    for part in filter(None, (p.strip() for p in re.split(r"[,;]", text))):
        bits = part.split()
        try:
            ok = len(bits) == 2 and bits[0] in AXES and math.isfinite(parse_number(bits[1]))
        except UnitError:
            ok = False
        if not ok:
            raise SteelyardError(f"each turn is 'axis degrees', e.g. 'z 45, x -5'; got {said(part)}",
                                 subject="assembly", field="rotate")
        out.append([bits[0], float(parse_number(bits[1]))])
    return out


def table_from_fields(fields: dict[str, str], original: dict | None, start: dict[str, str]) -> dict:
    """An [[assembly]] table as it will be written; untouched values keep the original's exact form."""
    table: dict = {"id": fields["id"].strip(), "file": fields["file"].strip()}
    group = fields["group"].strip().strip("/")
    if group:
        table["group"] = group
    at = []
    for k, a in enumerate(AXES):
        text = fields[a].strip()
        if original is not None and text == start[a].strip():
            at.append(original["at"][k])
            continue
        try:
            at.append(float(parse_number(text)))
        except UnitError:
            at.append(text)  # with a unit ("3 in"): the reader checks it
    table["at"] = at
    mirror = fields["mirror"].strip()
    if mirror:
        table["mirror"] = mirror
    if fields["rotate"].strip():
        if original is not None and fields["rotate"].strip() == start["rotate"].strip():
            table["rotate"] = original["rotate"]
        else:
            table["rotate"] = _turns(fields["rotate"])
    if original is not None and "user" in original:
        table["user"] = original["user"]
    return table


# ------------------------------------------------------------ the edits
def placement_edit(ledger: Ledger, original_id: str | None, table: dict, child: Child, parent_path: str) -> Ledger:
    """The ledger with placement `original_id` changed to `table` (None: `table` added). Raises located errors."""
    k = len(ledger.assemblies) if original_id is None else placement(ledger, original_id)[0]
    read_placement(table, k + 1, ledger.units)  # the reader's own checks, first
    shown = posixpath.normpath(table["file"])
    if original_id is None:
        return add_assembly(ledger, table, child.ledger, shown, child.sha256)
    return with_assembly(ledger, k, table, child.ledger, shown, child.sha256)


def placement_removed(ledger: Ledger, assembly_id: str) -> Ledger:
    return remove_assembly(ledger, assembly_id)


def replaced_file(ledger: Ledger, file: str, child: Ledger, sha256: str) -> Ledger:
    """`ledger` with every placement of `file` made from its saved contents (no re-read).

    The per-row tank-table cache follows the splice (rows outside it shifted,
    rows inside read again), as it follows a one-row edit: a rescan of
    100,000 items would cost more than the whole splice.
    """
    new = with_placed_file(ledger, file, child, sha256)
    cached = ledger.__dict__.get("_tank_tables")
    if cached is not None and new is not ledger:
        new.__dict__["_tank_tables"] = _tables_moved(cached, ledger, new, file)
    return new


def _tables_moved(cached: dict, old: Ledger, new: Ledger, file: str) -> dict:
    from dataclasses import replace

    from steelyard.core.loading.tank import read_table

    before = sorted((q.start, q.stop) for q in top_placements(old) if q.file == file)
    after = sorted((q.start, q.stop) for q in top_placements(new) if q.file == file)
    tables = {}
    for i, table in cached.items():
        shift = 0
        for (a, b), (c, d) in zip(before, after):
            if a <= i < b:
                break
            if i >= b:
                shift += (d - c) - (b - a)
        else:
            tables[i + shift] = table if shift == 0 else replace(table, row=i + shift)
    for c, d in after:
        for r in range(c, d):
            if new.items[r].cg_table is not None:
                tables[r] = read_table(new, r)
    return tables


def nested_saved(parent: Ledger, file: str, child: Ledger) -> bool:
    """True when a file placed inside `file` (at any depth) has other contents in `child` (the file's
    resolved ledger as saved) than in `parent`'s placements of `file`: saved through `file`, opened
    from here. Compared by placement id and hash (each file names the others from its own folder)."""
    inner = {(q.id, q.sha256) for q in child.placed}
    for top in top_placements(parent):
        if top.file == file:
            head = top.id + "/"
            held = {(q.id[len(head):], q.sha256) for q in parent.placed if q.depth > 1 and q.id.startswith(head)}
            if held != inner:
                return True
    return False


def stale_files(ledger: Ledger, fresh: dict[str, tuple[Ledger, str]]) -> Ledger:
    """`ledger` with every top placement whose file has newer contents in `fresh` placed again."""
    out = ledger
    for file, (child, sha) in fresh.items():
        if any(q.file == file and q.sha256 != sha for q in top_placements(out)) or nested_saved(out, file, child):
            out = with_placed_file(out, file, child, sha)
    return out
