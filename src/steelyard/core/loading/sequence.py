"""Burn and drop sequences: ordered steps applied to a loadout (reading and applying the steps).

A ``[[sequence]]`` starts from a loadout and lists ``[[sequence.step]]``
tables, each doing one thing:

- ``burn``: fuel (any variable item) drains *gradually*; ``{ fuel-l = "8 gal",
  fuel-r = "8 gal" }`` drains the tanks together at steady rates, a list plus
  ``amount`` splits the amount over the tanks in proportion to what each holds;
  one tank after another is two steps;
- ``remove``: items come off at once (a payload dropped, a passenger leaving,
  a removable part taken off);
- ``add``: items go on at once (ballast, a passenger boarding).

This module reads ``[[sequence]]`` tables and works out what each step does
to the fills of the items it names, checking every amount against what is on
board at that point. core.sequence_path samples the steps into a path of
states; docs/sequences.md is the user's description.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from steelyard.core.display import fmt
from steelyard.core.document import schema
from steelyard.core.document.named_tables import entry_name, refuse_duplicate_names
from steelyard.core.errors import SteelyardError
from steelyard.core.errors import said
from steelyard.core.loading.loadout import CONDITIONS, is_removable
from steelyard.core.document.model import Ledger
from steelyard.core.units import UnitError, from_si, parse_quantity

DEFAULT_SAMPLES = 100
MAX_SAMPLES = 1_000_000
_SEQ_KEYS = set(schema.SEQUENCE)  # the format's one list (core.document.schema)
_STEP_KEYS = set(schema.STEP)
_TOL = 1e-9  # fraction of an item's capacity treated as rounding when checking what a tank holds


# --------------------------------------------------------------------------- reading


@dataclass(frozen=True)
class StepSpec:
    index: int
    kind: str
    label: str
    samples: int
    targets: tuple[tuple[str, object], ...]  # (item id, raw amount) ; remove: amount None
    total: object = None  # burn over a list of tanks: the raw amount to split


def _samples(raw, where: str, field: str, default: int) -> int:
    if raw is None:
        return default
    if type(raw) is not int or not (1 <= raw <= MAX_SAMPLES):
        raise SteelyardError(f"must be a whole number 1..{MAX_SAMPLES:,}, got {said(raw)}", subject=where, field=field)
    return raw


def _read_step(raw, k: int, where: str, samples: int) -> StepSpec:
    f = f"step {k}"
    if type(raw) is not dict:
        raise SteelyardError("must be a table", subject=where, field=f)
    unknown = sorted(set(raw) - _STEP_KEYS)
    if unknown:
        raise SteelyardError(f"unknown key {said(unknown[0])} (a step does one of burn, remove, add)", subject=where,
                             field=f"{f} {unknown[0]}")
    kinds = [x for x in ("burn", "remove", "add") if x in raw]
    if len(kinds) != 1:
        raise SteelyardError("a step does exactly one of burn, remove, add", subject=where, field=f)
    kind = kinds[0]
    label = raw.get("name", "")
    if type(label) is not str:
        raise SteelyardError(f"must be a string, got {said(label)}", subject=where, field=f"{f} name")
    n = _samples(raw.get("samples"), where, f"{f} samples", samples)
    body = raw[kind]
    if "amount" in raw and not (kind == "burn" and isinstance(body, list)):
        raise SteelyardError("amount goes with burn = [tanks]: it is split over them", subject=where,
                             field=f"{f} amount")
    if isinstance(body, str):
        body = [body]
    if kind == "remove" or (kind == "burn" and isinstance(body, list)):
        if type(body) is not list or not body or not all(isinstance(x, str) for x in body):
            raise SteelyardError(f"must be a list of item ids, got {said(body)}"[:160], subject=where, field=f"{f} {kind}")
        if kind == "burn" and "amount" not in raw:
            raise SteelyardError("burn = [tanks] needs amount = (a mass, a volume or \"all\")", subject=where,
                                 field=f"{f} amount")
        targets = tuple((x, None) for x in body)
        total = raw.get("amount")
    else:
        if type(body) is not dict or not body:
            raise SteelyardError(f"must be a table of item id = amount, got {said(body)}"[:160], subject=where,
                                 field=f"{f} {kind}")
        targets, total = tuple(body.items()), None
    ids = [t[0] for t in targets]
    dup = sorted({x for x in ids if ids.count(x) > 1})
    if dup:
        raise SteelyardError(f"names item {said(dup[0])} twice", subject=where, field=f"{f} {kind}")
    return StepSpec(k, kind, label or f"{kind} {', '.join(ids)}", n, targets, total)


@dataclass(frozen=True)
class SequenceSpec:
    name: str
    loadout: str
    end_condition: str | None
    steps: tuple[StepSpec, ...]

    @property
    def subject(self) -> str:
        return f"sequence {said(self.name)}"


def _read_sequence(raw, k: int, ledger: Ledger) -> SequenceSpec:
    name, where = entry_name(raw, "sequence", k)
    unknown = sorted(set(raw) - _SEQ_KEYS)
    if unknown:
        raise SteelyardError(f"unknown key {said(unknown[0])} (known: {', '.join(sorted(_SEQ_KEYS))})", subject=where,
                             field=unknown[0])
    lo = raw.get("loadout")
    if type(lo) is not str:
        raise SteelyardError("required: the loadout the sequence starts from", subject=where, field="loadout")
    if lo not in {x.name for x in ledger.loadouts}:
        raise SteelyardError(f"no loadout named {said(lo)}", subject=where, field="loadout")
    end = raw.get("end_condition")
    if end is not None and end not in CONDITIONS:
        raise SteelyardError(f"must be one of {', '.join(CONDITIONS)}, got {said(end)}", subject=where,
                             field="end_condition")
    samples = _samples(raw.get("samples"), where, "samples", DEFAULT_SAMPLES)
    steps = raw.get("step")
    if type(steps) is not list or not steps:
        raise SteelyardError("has no steps: add [[sequence.step]] tables", subject=where, field="step")
    return SequenceSpec(name, lo, end, tuple(_read_step(s, j, where, samples) for j, s in enumerate(steps, 1)))


def _read_all(ledger: Ledger) -> tuple[SequenceSpec, ...]:
    raw = ledger.sequences
    out = tuple(_read_sequence(s, k, ledger) for k, s in enumerate(raw, 1))
    refuse_duplicate_names([s.name for s in out], "sequence")
    return out


def sequence_specs(ledger: Ledger) -> tuple[SequenceSpec, ...]:
    cached = ledger.__dict__.get("_sequence_specs")
    if cached is None:
        cached = ledger.__dict__["_sequence_specs"] = _read_all(ledger)
    return cached


# --------------------------------------------------------------------------- amounts


def _amount_fraction(ledger: Ledger, row: int, raw, where: str, field: str) -> float:
    """A step amount as a fraction of the item's capacity: bare number = fraction, or a mass / volume."""
    item = ledger.items[row]
    full = item.mass * item.quantity
    if type(raw) is bool or raw is None:
        raise SteelyardError(f"must be a fraction, a mass or a volume, got {said(raw)}", subject=where, field=field)
    if isinstance(raw, (int, float)):
        if not 0.0 <= raw <= 1.0:
            raise SteelyardError(f"fraction must be within 0..1, got {said(raw)}", subject=where, field=field)
        return float(raw)
    if not isinstance(raw, str):
        raise SteelyardError(f"must be a fraction, a mass or a volume, got {said(raw)}", subject=where, field=field)
    mass = _mass_of(ledger, row, raw, where, field)
    if full <= 0:
        raise SteelyardError(f"item {said(item.id)} has no capacity (mass 0)", subject=where, field=field)
    return mass / full


def _mass_of(ledger: Ledger, row: int, text: str, where: str, field: str) -> float:
    try:
        m = parse_quantity(text, "mass")
    except UnitError:
        try:
            v = parse_quantity(text, "volume")
        except UnitError:
            raise SteelyardError(f"cannot read {said(text)} as a mass or a volume", subject=where, field=field) from None
        density = ledger.items[row].density
        if density is None:
            raise SteelyardError(f"{text} needs a density on item {said(ledger.items[row].id)}", subject=where,
                                 field=field) from None
        m = v * density
    if m < 0:
        raise SteelyardError(f"must not be negative, got {said(text)}", subject=where, field=field)
    return m


def step_row(ledger: Ledger, item_id: str, kind: str, where: str, field: str) -> int:
    i = ledger.index.get(item_id)
    if i is None:
        raise SteelyardError(f"names unknown item {said(item_id)}", subject=where, field=field)
    item = ledger.items[i]
    if not item.variable and (kind == "burn" or not is_removable(item)):
        what = "burnt" if kind == "burn" else ("removed" if kind == "remove" else "added")
        hint = "" if kind == "burn" else " (or a fixed item marked removable = true)"
        raise SteelyardError(f"item {said(item_id)} is fixed and cannot be {what}: name a variable item{hint}",
                             subject=where, field=field)
    return i


def _shown(ledger: Ledger, row: int, fraction: float) -> str:
    item = ledger.items[row]
    return _shown_mass(ledger, fraction * item.mass * item.quantity)


def _shown_mass(ledger: Ledger, kg: float) -> str:
    """A mass in the file's unit, for messages."""
    return f"{fmt(from_si(kg, 'mass', ledger.units.mass), 2)} {ledger.units.mass}"


def step_change(ledger: Ledger, spec: StepSpec, rows: dict[int, int], g: np.ndarray, where: str) -> np.ndarray:
    """The change of the k changing fills this step makes (new fill = g + change); validates amounts."""
    change = np.zeros_like(g)
    f = f"step {spec.index}"
    if spec.kind == "burn" and spec.total is not None:
        idx = [ledger.index[i] for i, _ in spec.targets]
        rs = [rows[i] for i in idx]
        a = ledger.arrays
        full = a.unit_mass[idx] * a.quantity[idx]
        have = g[rs] * full  # kg on board in each tank
        raw, field = spec.total, f"{f} amount"
        if raw == "all":
            take = have
        elif not isinstance(raw, str):
            raise SteelyardError(f"must be a mass, a volume or \"all\", got {said(raw)}", subject=where, field=field)
        else:
            try:
                total, weights, dens = parse_quantity(raw, "mass"), have, np.ones(len(idx))
            except UnitError:
                try:
                    total = parse_quantity(raw, "volume")
                except UnitError:
                    raise SteelyardError(f"cannot read {said(raw)} as a mass or a volume", subject=where,
                                         field=field) from None
                d = [ledger.items[i].density for i in idx]
                if any(x is None for x in d):
                    raise SteelyardError(f"{raw} needs a density on every tank named", subject=where,
                                         field=field) from None
                dens = np.array(d)
                weights = have / dens  # volume on board in each tank
            held = weights.sum()
            if total > held * (1 + _TOL):
                shown = _shown_mass(ledger, have.sum())
                raise SteelyardError(f"burns {raw}, more than the {shown} the tanks hold at that point",
                                     subject=where, field=field)
            take = (total * weights / held if held > 0 else np.zeros(len(idx))) * dens
        frac = np.divide(take, full, out=np.zeros(len(idx)), where=full > 0)
        change[rs] = -np.minimum(frac, g[rs])
        return change
    for item_id, raw in spec.targets:
        field = f"{f} {spec.kind}.{item_id}"
        r = rows[ledger.index[item_id]]
        i = ledger.index[item_id]
        fixed = not ledger.items[i].variable
        if spec.kind == "remove":
            if g[r] <= 0:
                raise SteelyardError(f"item {said(item_id)} is not on board at that point", subject=where, field=field)
            change[r] = -g[r]
        elif spec.kind == "add":
            if fixed:
                if type(raw) is bool or raw not in ("full", 1, 1.0):
                    raise SteelyardError(f"a removable item goes on whole: write {item_id} = \"full\"",
                                         subject=where, field=field)
                if g[r] >= 1:
                    raise SteelyardError(f"item {said(item_id)} is already on board", subject=where, field=field)
                change[r] = 1.0 - g[r]
                continue
            d = 1.0 - g[r] if raw == "full" else _amount_fraction(ledger, i, raw, where, field)
            if g[r] + d > 1 + _TOL:
                raise SteelyardError(f"adds {raw}, more than item {said(item_id)} has room for "
                                     f"({_shown(ledger, i, 1 - g[r])} at that point)", subject=where, field=field)
            change[r] = min(d, 1.0 - g[r])
        else:
            d = g[r] if raw == "all" else _amount_fraction(ledger, i, raw, where, field)
            if d > g[r] + _TOL:
                raise SteelyardError(f"burns {raw}, more than the {_shown(ledger, i, g[r])} item {said(item_id)} "
                                     "holds at that point", subject=where, field=field)
            change[r] = -min(d, g[r])
    return change

