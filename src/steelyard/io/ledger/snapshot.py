"""Snapshots: one configuration frozen as a self-contained, checkable ledger.

A snapshot is a v1 ledger (any reader, `steelyard rollup` included, takes it)
in SI units whose items are the configuration as carried: each load item is
written as a fixed item with the mass the loadout put on board (own inertia
tables scaled by the same fill), keeps its id, and records its full amount
under `loaded = { capacity_kg, fill }`. Loadouts, sequences and [fuel] are
dropped (there is nothing left to load); frame, envelopes, limits and every
other table are kept with their meaning (see `as_carried`).

A `[snapshot]` table at the end records when, by whom, from what, the
totals and envelope status, and `content_sha256`: the SHA-256 of the
canonical text (`ledger_to_toml`) of the ledger without its `[snapshot]`
table. As written, that text is exactly the file's bytes before the blank
line that precedes `[snapshot]`. Reading checks both: the hash (catches any
edit to items, frame or envelopes) and the totals recomputed from the items
(catches an edited table, or a version that computes differently).
"""

from __future__ import annotations

import datetime as _dt
import hashlib
from collections.abc import Mapping
from dataclasses import dataclass, replace

import numpy as np

from steelyard import __version__
from steelyard.core.caution import CAUTION
from steelyard.core.history.diff import LOADED_KEY, SNAPSHOT_TABLE, is_snapshot
from steelyard.core.errors import SteelyardError
from steelyard.core.document.pinning import pin_units
from steelyard.core.limits.rules import SCOPE_KEYS, envelope_specs
from steelyard.core.loading.loadout import fill_fractions, loadout_condition, resolve
from steelyard.core.loading.tank import cg_for_fill
from steelyard.core.document.model import Envelope, FileUnits, ItemArrays, Ledger, with_arrays
from steelyard.core.physics.rollup import MassProperties, rollup_state
from steelyard.core.limits.status import envelope_results
from steelyard.io.ledger.snapshot_sources import placed_sources

SNAPSHOT_FORMAT = 1
#: Stored totals must match the recomputed ones to this fraction of each quantity's size.
TOTALS_RTOL = 1e-9


class SnapshotMismatch(SteelyardError):
    """A snapshot whose content or totals no longer match what it records."""


@dataclass(frozen=True)
class SnapshotInfo:
    taken: object
    author: str
    source: str
    loadout: str | None
    version: str
    content_sha256: str


def content_text(ledger: Ledger) -> str:
    """Canonical text of the ledger without its [snapshot] table: what the hash covers.

    Exactly `ledger_to_toml(ledger, snapshot=False)`, written by the snapshot's quick path. Imported here:
    checking a snapshot read from a file takes its hash from the file's bytes and needs no writer."""
    from steelyard.io.ledger.snapshot_content import content_text as fast_content_text

    return fast_content_text(ledger)


def content_hash(ledger: Ledger) -> str:
    return hashlib.sha256(content_text(ledger).encode("utf-8")).hexdigest()


def as_carried(ledger: Ledger, loadout: str | None) -> Ledger:
    """The configuration as a ledger of fixed items in SI (see the module docstring).

    What only made sense with something left to load goes: loadouts, sequences,
    the [fuel] table, tank CG tables (each tank's CG is the one it has at this
    fill). %MAC envelopes become stations. Envelopes and limits keep their
    scope: the [snapshot] record names the loadout frozen, its condition and
    the source's loadout and sequence names, so a scope means what it meant.
    Tables kept as written get their units pinned, so their numbers mean in
    the SI file what they meant in the source.
    """
    fill = fill_fractions(ledger, loadout)
    cg_rows = cg_for_fill(ledger, fill)
    units = ledger.units
    items = []
    for i, it in enumerate(ledger.items):
        changes: dict = {"source": None} if it.source is not None else {}  # a placed item becomes the file's own
        if it.given_units:
            changes["given_units"] = {}
        if it.tolerance is not None:
            changes["tolerance"] = pin_units(it.tolerance, "tolerance", units)
        f = float(fill[i])
        if it.variable or f != 1.0:
            changes.update(
                mass=it.mass * f, variable=False,
                inertia=None if it.inertia is None else tuple(v * f for v in it.inertia))
            if it.variable:
                changes["loaded"] = {"capacity_kg": it.mass * it.quantity, "fill": f}
            if it.cg_table is not None:
                changes.update(cg_table=None, cg=tuple(float(c) for c in cg_rows[i]))
        items.append(it.evolve(**changes) if changes else it)
    envelopes = tuple(Envelope(spec.name, spec.axis, spec.points, **{k: getattr(env, k) for k in SCOPE_KEYS},
                               user=env.user) for env, spec in zip(ledger.envelopes, envelope_specs(ledger)))
    before = ledger.snapshot or {}  # a snapshot of a snapshot keeps what the first one froze
    names = {k: list(v) for k, v in (before.get("names") or {}).items()}
    names.setdefault("loadouts", []).extend(lo.name for lo in ledger.loadouts)
    names.setdefault("sequences", []).extend(s["name"] for s in ledger.sequences)
    record = {"format": SNAPSHOT_FORMAT, "condition": before.get("condition", loadout_condition(ledger, loadout)),
              "names": names}
    loadout = loadout if loadout is not None else before.get("loadout")
    if loadout is not None:
        record["loadout"] = loadout
    out = replace(
        ledger, items=tuple(items), units=FileUnits(), loadouts=(), envelopes=envelopes,
        limits=tuple(pin_units(raw, "limit", units) for raw in ledger.limits),
        mac=None if ledger.mac is None else pin_units(ledger.mac, "mac", units), fuel=None, sequences=(),
        allocations=tuple(pin_units(a, "allocation", units) for a in ledger.allocations),
        weighing=None if ledger.weighing is None else pin_units(ledger.weighing, "weighing", units),
        snapshot=record, assemblies=(), placed=())
    a = ledger.arrays
    arrays = ItemArrays(a.unit_mass * fill, a.quantity, np.asfortranarray(cg_rows), a.own * fill[:, None, None],
                        np.zeros(len(items), bool))
    out.__dict__["index"] = ledger.index
    return with_arrays(out, arrays)


def _clean(v):
    """Numbers for TOML (which has no null): callers drop None keys."""
    if isinstance(v, np.ndarray):
        return v.tolist()
    return v


def _totals(mp: MassProperties) -> dict:
    out = {"mass_kg": float(mp.mass), "cg_m": _clean(mp.cg), "inertia_cg_kg_m2": _clean(mp.inertia_cg)}
    if mp.mass > 0:
        out["principal_kg_m2"] = _clean(mp.principal_moments)
    return out


def _envelopes(ledger: Ledger, mp: MassProperties) -> list[dict]:
    out = []
    for r in envelope_results(ledger, mp):
        e = {"name": r.name, "axis": r.axis, "inside": r.inside}
        if r.limits is not None:
            e["limits_m"] = [r.lo, r.hi]
        if r.margin is not None:
            e["margin_m"] = r.margin
        out.append(e)
    return out


def snapshot_text(ledger: Ledger, loadout: str | None, *, source: str, author: str,
                  taken: _dt.datetime | None = None, source_sha256: str | None = None) -> str:
    """The whole snapshot file: canonical content, a blank line, the [snapshot] table."""
    snap = as_carried(ledger, loadout)
    content = content_text(snap)
    mp = rollup_state(resolve(snap, None))
    taken = taken or _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0)
    table: dict = {"format": SNAPSHOT_FORMAT, "taken": taken, "author": author, "source": source}
    if source_sha256:
        table["source_sha256"] = source_sha256
    if loadout is not None:
        table["loadout"] = loadout
    table["condition"] = snap.snapshot["condition"]
    table["names"] = snap.snapshot["names"]
    sources = placed_sources(ledger)
    if sources:
        table["sources"] = sources
    table["steelyard_version"] = __version__
    table["content_sha256"] = hashlib.sha256(content.encode("utf-8")).hexdigest()
    table["caution"] = CAUTION
    table["totals"] = _totals(mp)
    envs = _envelopes(snap, mp)
    if envs:
        table["envelopes"] = envs
    from steelyard.io.ledger.toml_write import tables

    return content + "\n" + tables({SNAPSHOT_TABLE: table})


# --------------------------------------------------------------------------- reading


def _fail(message: str, file: str | None, field: str, cls=SteelyardError):
    return cls(message, file=file, subject="snapshot", field=field)


def _get(table: Mapping, key: str, types, file: str | None):
    v = table.get(key)
    if v is None or not isinstance(v, types) or isinstance(v, bool) and bool not in types:
        raise _fail("missing or of the wrong type (the [snapshot] table was edited)", file, key)
    return v


def _array(v, shape: tuple, file: str | None, field: str) -> np.ndarray:
    try:
        a = np.asarray(v, dtype=float)
    except (TypeError, ValueError):
        a = None
    if a is None or a.shape != shape:
        raise _fail(f"must be numbers of shape {shape} (the [snapshot] table was edited)", file, field)
    return a


def _near(stored: np.ndarray, now: np.ndarray) -> bool:
    stored, now = np.atleast_1d(stored), np.atleast_1d(now)
    both_nan = np.isnan(stored) & np.isnan(now)
    scale = np.nanmax(np.abs(np.concatenate([stored, now]))) if not both_nan.all() else 0.0
    ok = both_nan | (np.abs(stored - now) <= TOTALS_RTOL * scale)
    return bool(ok.all())


def snapshot_info(ledger: Ledger, *, file: str | None = None) -> SnapshotInfo | None:
    """What the [snapshot] table says (None: not a snapshot). Checks its shape, not its content."""
    if not is_snapshot(ledger):
        return None
    t = ledger.snapshot
    fmt_version = _get(t, "format", (int,), file)
    if fmt_version > SNAPSHOT_FORMAT:
        raise _fail(f"snapshot format {fmt_version} is newer than this program reads ({SNAPSHOT_FORMAT})",
                    file, "format")
    loadout = t.get("loadout")
    if loadout is not None and not isinstance(loadout, str):
        raise _fail("must be a loadout name", file, "loadout")
    return SnapshotInfo(t.get("taken"), str(t.get("author", "")), str(t.get("source", "")), loadout,
                        str(t.get("steelyard_version", "")), _get(t, "content_sha256", (str,), file))


def verify_snapshot(ledger: Ledger, *, file: str | None = None, written_sha256: str | None = None) -> SnapshotInfo:
    """Recompute the hash and the totals; raise SnapshotMismatch naming what disagrees.

    `written_sha256`: the hash of the file's content bytes as they stand (`snapshot_bytes`); when it
    is the stored one the canonical text need not be regenerated (the file is as the writer wrote it)."""
    info = snapshot_info(ledger, file=file)
    if info is None:
        raise _fail("not a snapshot (no [snapshot] table)", file, SNAPSHOT_TABLE)
    now = written_sha256 if written_sha256 == info.content_sha256 else content_hash(ledger)
    if now != info.content_sha256:
        raise _fail(f"content does not match its hash (stored {info.content_sha256[:12]}…, now {now[:12]}…): "
                    "the items, frame or envelopes were edited after the snapshot was taken",
                    file, "content_sha256", SnapshotMismatch)
    if ledger.loadouts or ledger.arrays.variable.any():  # the column the reader made of every item's flag
        raise _fail("a snapshot holds fixed items only", file, "content_sha256", SnapshotMismatch)
    t = ledger.snapshot
    totals = _get(t, "totals", (dict,), file)
    mp = rollup_state(resolve(ledger, None))
    why = (f"this version ({__version__}) computes differently from the one that took it "
           f"({info.version or 'unknown'}), or the [snapshot] table was edited")
    checks = [("mass_kg", (), mp.mass), ("cg_m", (3,), mp.cg), ("inertia_cg_kg_m2", (3, 3), mp.inertia_cg)]
    for key, shape, value in checks:
        if key not in totals:
            raise _fail("missing (the [snapshot] table was edited)", file, f"totals.{key}")
        stored = _array(totals[key], shape, file, f"totals.{key}")
        if not _near(stored, np.asarray(value, dtype=float)):
            raise _fail(f"stored {_show(stored)} but the items give {_show(value)}: {why}", file,
                        f"totals.{key}", SnapshotMismatch)
    stored_envs = {e.get("name"): e for e in t.get("envelopes", []) if isinstance(e, Mapping)}
    for r in envelope_results(ledger, mp):
        e = stored_envs.get(r.name)
        if e is None or e.get("inside") is not r.inside:
            said = "missing" if e is None else ("inside" if e.get("inside") else "outside")
            raise _fail(f"stored status {said} but the totals give {'inside' if r.inside else 'outside'}: {why}",
                        file, f"envelopes.{r.name}", SnapshotMismatch)
    return info


def verify_loaded(loaded, *, file: str | None = None) -> SnapshotInfo:
    """`verify_snapshot` of an opened file (io.ledger.file.LoadedLedger), hashing its own bytes first."""
    from steelyard.io.ledger.snapshot_bytes import written_content_sha256

    return verify_snapshot(loaded.ledger, file=file if file is not None else loaded.path,
                           written_sha256=written_content_sha256(loaded))


def _show(v) -> str:
    a = np.asarray(v, dtype=float)
    if a.ndim == 0:
        return f"{float(a):.12g}"
    return "[" + ", ".join(f"{x:.9g}" for x in a.ravel()) + "]"
