"""Reading a ledger's assemblies: every placed file read once, cycles named, errors located.

A ledger with [[assembly]] tables is read as a tree: each placed file is
opened through the same strict reader (its own assemblies first), then its
items are placed into the parent's frame (core.assembly). A file placed
many times (four identical pods) is read and parsed once per tree. Files
come from a `Source`: the disk, or git at one commit (FILE@REV reads its
assemblies at the same revision). Nothing here writes.
"""

from __future__ import annotations

import hashlib
import operator
import os
import posixpath
from dataclasses import dataclass, field

from steelyard.core.assembly.flatten import Placed, concatenate, nested_records, place
from steelyard.core.assembly.placement import read_placements
from steelyard.core.document.model import Item, ItemArrays, Ledger
from steelyard.core.errors import SteelyardError, said

_ID = operator.attrgetter("id")

#: deeper than this is surely a mistake (and keeps error chains readable)
MAX_TREE_DEPTH = 32


class DiskSource:
    """A ledger file on disk; `top` is the folder of the file the user named (paths are shown from it)."""

    def __init__(self, path: str, top: str | None = None) -> None:
        self.path = path
        self.top = top if top is not None else os.path.dirname(os.path.abspath(path))

    @property
    def key(self) -> str:
        return os.path.realpath(self.path)

    @property
    def label(self) -> str:
        return self.path

    @property
    def shown(self) -> str:
        """The path from the top file's folder, '/'-separated (what `rollup --json` reports)."""
        rel = os.path.relpath(os.path.abspath(self.path), self.top)
        return rel.replace(os.sep, "/")

    def read(self) -> bytes:
        from steelyard.io.ledger.file import read_bytes

        return read_bytes(self.path)

    def relative(self, other: str) -> "DiskSource":
        if "\x00" in other or os.path.isabs(other):
            raise SteelyardError(f"{other!r} is not a relative file path")
        return DiskSource(os.path.normpath(os.path.join(os.path.dirname(self.path), *other.split("/"))), self.top)


class RevisionSource:
    """A ledger file as committed (io.vcs.revision.Revision); its assemblies at the same commit."""

    def __init__(self, revision, top: str | None = None) -> None:
        self.revision = revision
        self.top = top if top is not None else posixpath.dirname(revision.name)

    @property
    def key(self) -> str:
        return f"{self.revision.commit}:{self.revision.name}"

    @property
    def label(self) -> str:
        return self.revision.spec

    @property
    def shown(self) -> str:
        return posixpath.relpath(self.revision.name, self.top or ".")

    def read(self) -> bytes:
        return self.revision.read()

    def relative(self, other: str) -> "RevisionSource":
        return RevisionSource(self.revision.relative(other), self.top)


def tree_for(source) -> "TreeReader":
    """A reader for the tree whose top file is `source` (a DiskSource or RevisionSource)."""
    return TreeReader(chain=[source.shown], keys=[source.key])


@dataclass
class TreeReader:
    """Reads the assemblies of one top file; shared by every level so each file is parsed once."""

    fast: bool = True
    #: source key -> (resolved ledger, sha256 of its bytes)
    cache: dict = field(default_factory=dict)
    #: source labels from the top file down to the one being read (cycle check, messages)
    chain: list = field(default_factory=list)
    keys: list = field(default_factory=list)
    #: every file read, key -> (label, sha256): what a snapshot records and a cache is keyed by
    files: dict = field(default_factory=dict)

    def resolve(self, document: Ledger, source, items: list[Item], arrays: ItemArrays
                ) -> tuple[list[Item], ItemArrays, tuple[Placed, ...]]:
        """The items and columns of `document` (own ones first, then each placement's) and the records."""
        try:
            placements = read_placements(document, {it.id for it in items})
        except SteelyardError as exc:
            raise exc.located(file=source.label)
        all_items = list(items)
        parts = [arrays]
        placed: list[Placed] = []
        ids = {it.id for it in items}
        for p in placements:
            child_source = self._child_source(source, p)
            child, sha = self._read(child_source, p, source)
            start = len(all_items)
            new_items, new_arrays = self._place(child, p, document, source, child_source)
            new_ids = list(map(_ID, new_items))
            if not ids.isdisjoint(new_ids):  # (ids within one file are unique: its reader checked)
                clash = next(i for i in new_ids if i in ids)
                raise SteelyardError(f"id {said(clash)} of a placed item clashes with another item's id",
                                     file=source.label, subject=f"assembly {said(p.id)}", field="id")
            ids.update(new_ids)
            all_items.extend(new_items)
            parts.append(new_arrays)
            placed.extend(nested_records(child, p, child_source.shown, sha, start))
        return all_items, concatenate(parts), tuple(placed)

    def _child_source(self, source, p):
        try:
            return source.relative(p.file)
        except SteelyardError as exc:
            raise SteelyardError(exc.message, file=source.label, subject=f"assembly {said(p.id)}",
                                 field="file") from None

    def _place(self, child: Ledger, p, document: Ledger, source, child_source):
        try:
            return place(child, p, document.units, document.frame)
        except SteelyardError as exc:
            raise exc.located(file=child_source.label)

    def _read(self, child_source, p, parent_source) -> tuple[Ledger, str]:
        key = child_source.key
        if key in self.keys:
            chain = " -> ".join([*self.chain, child_source.shown])
            raise SteelyardError(f"assemblies form a cycle: {chain}", file=parent_source.label,
                                 subject=f"assembly {said(p.id)}", field="file")
        hit = self.cache.get(key)
        if hit is not None:
            return hit
        if len(self.chain) >= MAX_TREE_DEPTH:
            raise SteelyardError(f"assemblies nested more than {MAX_TREE_DEPTH} levels deep",
                                 file=parent_source.label, subject=f"assembly {said(p.id)}", field="file")
        try:
            data = child_source.read()
        except SteelyardError as exc:
            raise SteelyardError(f"cannot read {said(p.file)}: {exc.message}", file=parent_source.label,
                                 subject=f"assembly {said(p.id)}", field="file") from None
        from steelyard.io.ledger.file import ledger_from_bytes

        self.chain.append(child_source.shown)
        self.keys.append(key)
        try:
            ledger, _ = ledger_from_bytes(data, source=child_source.label, fast=self.fast,
                                          tree=self, tree_source=child_source)
        finally:
            self.chain.pop()
            self.keys.pop()
        sha = hashlib.sha256(data).hexdigest()
        self.cache[key] = (ledger, sha)
        self.files[key] = (child_source.shown, sha)
        return ledger, sha
