"""Reduce a weighing to the empty vehicle's mass and CG.

The handbook method (FAA-H-8083-1; FAA-H-8083-30 ch. 4): net = scale reading
- tare at each support point; weighed mass = sum of net; weighed CG = sum of
net x arm / sum of net. Empty = weighed - what was on board but is not part of
the empty vehicle (usable fuel, ballast, loose equipment) + what belongs to it
but was missing (unusable fuel, an instrument on the bench).

A level weighing fixes the CG along the two horizontal axes only: the scale
contact heights say nothing about the vertical CG. So the vertical coordinate
comes from `vertical_cg` (a tilted weighing, or an accepted estimate) or is
NaN. The vehicle is assumed level in the body frame, with each support point's
`at` its contact position in body axes.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from steelyard.core.errors import SteelyardError, UnitError, item_subject, said
from steelyard.core.document.model import FileUnits, Item, Ledger
from steelyard.core.units import DIMENSIONS, from_si, parse_quantity, to_si

#: standard gravity, m/s^2 (NIST SP 811, exact): turns a force reading into mass
G_N = 9.80665

_POINT_KEYS = {"name", "at", "reading", "tare"}
_TABLE_KEYS = {"point", "on_board", "missing", "replaces", "vertical_cg", "date", "note", "by"}
_ADJUST_KEYS = {"name", "item", "mass", "volume", "density", "at"}


@dataclass(frozen=True)
class Adjustment:
    """A mass taken off (on board) or added back (missing) at `at` (SI)."""

    name: str
    mass: float
    at: tuple[float, float, float]
    item: str | None = None  # ledger id it came from, if any


@dataclass(frozen=True)
class WeighingResult:
    net: np.ndarray  # (k,) kg at each support point
    weighed_mass: float
    weighed_cg: np.ndarray  # (3,); vertical NaN unless given
    empty_mass: float
    empty_cg: np.ndarray  # (3,)


@dataclass(frozen=True)
class WeighingInputs:
    """A `[weighing]` table read into SI."""

    names: tuple[str, ...]
    support_xyz: np.ndarray  # (k, 3)
    readings: np.ndarray  # (k,)
    tares: np.ndarray  # (k,)
    on_board: tuple[Adjustment, ...] = ()
    missing: tuple[Adjustment, ...] = ()
    replaces: str | None = None
    vertical_cg: float | None = None
    vertical_axis: int = 2
    #: the file's mass unit: messages name masses in it, as the user wrote them
    mass_unit: str = "kg"

    def reduce(self) -> WeighingResult:
        return reduce_weighing(self.support_xyz, self.readings, self.tares,
                               self.on_board, self.missing, names=self.names,
                               vertical_cg=self.vertical_cg, vertical_axis=self.vertical_axis,
                               mass_unit=self.mass_unit)


def _shown(mass_si: object, unit: str) -> str:
    """An SI mass as a plain number in `unit` for a message ("-225 lb"), never a numpy repr."""
    try:
        return f"{from_si(float(mass_si), 'mass', unit):.10g} {unit}"
    except (TypeError, ValueError, OverflowError, SteelyardError):
        return said(mass_si)


def _pairs(entries, what: str, unit: str = "kg") -> tuple[np.ndarray, np.ndarray]:
    """(mass (j,), at (j, 3)) from Adjustments or (mass, (x, y, z)) pairs."""
    masses, places = [], []
    for k, e in enumerate(entries):
        if isinstance(e, Adjustment):
            mass, at, label = e.mass, e.at, e.name
        else:
            try:
                mass, at = e
            except (TypeError, ValueError):
                raise SteelyardError("each entry must be (mass, (x, y, z))",
                                     subject=f"weighing {what} #{k + 1}") from None
            label = f"#{k + 1}"
        at = np.asarray(at, dtype=float).reshape(-1)
        if at.shape != (3,) or not np.isfinite(at).all():
            raise SteelyardError("position must be 3 finite numbers",
                                 subject=f"weighing {what} {label}", field="at")
        try:
            good = math.isfinite(mass) and mass >= 0
        except TypeError:
            good = False
        if not good:
            raise SteelyardError(f"must be a finite number >= 0, got {_shown(mass, unit)}",
                                 subject=f"weighing {what} {label}", field="mass")
        masses.append(float(mass))
        places.append(at)
    return np.asarray(masses, dtype=float), np.asarray(places, dtype=float).reshape(-1, 3)


def reduce_weighing(support_xyz, readings, tares, on_board=(), missing=(), *,
                    names: Sequence[str] | None = None, vertical_cg: float | None = None,
                    vertical_axis: int = 2, mass_unit: str = "kg") -> WeighingResult:
    """Net loads, weighed mass and CG, and empty mass and CG (all SI).

    on_board / missing: (mass, (x, y, z)) pairs or `Adjustment`s. `mass_unit`
    only says in which unit a message names a mass (the file's).
    """
    xyz = np.asarray(support_xyz, dtype=float)
    readings = np.asarray(readings, dtype=float).reshape(-1)
    tares = np.asarray(tares, dtype=float).reshape(-1)
    k = readings.size
    if k == 0 or xyz.shape != (k, 3) or tares.shape != (k,):
        raise SteelyardError(f"need one position (x, y, z), reading and tare per support point; "
                             f"got {xyz.shape}, {readings.shape}, {tares.shape}", subject="weighing")
    labels = list(names) if names is not None else [f"#{i + 1}" for i in range(k)]
    for i in range(k):  # k is a handful of jacks or scales
        subject = f"weighing point {said(labels[i])}"
        if not np.isfinite(xyz[i]).all():
            raise SteelyardError("position must be finite", subject=subject, field="at")
        if not (math.isfinite(readings[i]) and readings[i] >= 0):
            raise SteelyardError(f"must be a finite number >= 0, got {_shown(readings[i], mass_unit)}",
                                 subject=subject, field="reading")
        if not (math.isfinite(tares[i]) and tares[i] >= 0):
            raise SteelyardError(f"must be a finite number >= 0, got {_shown(tares[i], mass_unit)}",
                                 subject=subject, field="tare")
    net = readings - tares
    bad = np.flatnonzero(net < 0)
    if bad.size:
        i = int(bad[0])
        raise SteelyardError(f"tare exceeds the reading ({_shown(tares[i], mass_unit)} > "
                             f"{_shown(readings[i], mass_unit)}: negative net load)",
                             subject=f"weighing point {said(labels[i])}", field="tare")
    weighed = float(net.sum())
    if not weighed > 0:
        raise SteelyardError("the net readings add up to zero", subject="weighing", field="reading")
    ref = xyz.mean(axis=0)  # offsets keep digits when the datum is far off
    weighed_off = net @ (xyz - ref) / weighed
    if not 0 <= vertical_axis <= 2:
        raise ValueError("vertical_axis must be 0, 1 or 2")
    if vertical_cg is None:
        weighed_off[vertical_axis] = np.nan
    else:
        weighed_off[vertical_axis] = float(vertical_cg) - ref[vertical_axis]

    off_m, off_r = _pairs(on_board, "on_board", mass_unit)
    add_m, add_r = _pairs(missing, "missing", mass_unit)
    empty = weighed - off_m.sum() + add_m.sum()
    if not empty > 0:
        raise SteelyardError(f"taking off the on-board items leaves {_shown(empty, mass_unit)}",
                             subject="weighing", field="on_board")
    moment = weighed * weighed_off - off_m @ (off_r - ref) + add_m @ (add_r - ref)
    return WeighingResult(net=net, weighed_mass=weighed, weighed_cg=ref + weighed_off,
                          empty_mass=float(empty), empty_cg=ref + moment / empty)


# -- reading the [weighing] table -------------------------------------------------

def _si(value: object, dimension: str, unit: str | None, subject: str, field: str) -> float:
    try:
        if unit is None and not isinstance(value, str):
            example = (f"e.g. \"{value} {DIMENSIONS[dimension][1]}\"" if type(value) in (int, float)
                       else f"got {said(value)}")
            raise UnitError(f"write the value with its unit, {example}")
        return to_si(value, dimension, unit or DIMENSIONS[dimension][1])
    except SteelyardError as exc:
        raise exc.located(subject=subject, field=field)


def _at_least_zero(si: float, value: object, subject: str, field: str) -> float:
    """A mass-like value must not be negative; the message quotes it as written."""
    if not si >= 0:
        raise SteelyardError(f"must be >= 0, got {said(value)}", subject=subject, field=field)
    return si


def _load(value: object, unit: str, subject: str, field: str) -> float:
    """A scale reading as mass; a force ("2890 N", "650 lbf") is divided by g_n.

    Read as strictly as any other value (one number, one unit, a decimal point):
    "41,5 lbf" is refused, never read as 415 lbf.
    """
    try:
        si = to_si(value, "mass", unit)
    except UnitError as exc:
        if not isinstance(value, str):
            raise exc.located(subject=subject, field=field)
        try:
            si = parse_quantity(value, "force") / G_N
        except UnitError:
            raise exc.located(subject=subject, field=field) from None
    return _at_least_zero(si, value, subject, field)


def _xyz(value: object, unit: str, subject: str, field: str = "at") -> tuple[float, float, float]:
    if not isinstance(value, (list, tuple)) or len(value) != 3:
        raise SteelyardError("needs [x, y, z]", subject=subject, field=field)
    return tuple(_si(v, "length", unit, subject, field) for v in value)  # type: ignore[return-value]


def _strict(entry: Mapping, allowed: set[str], subject: str) -> None:
    unknown = sorted(set(entry) - allowed)
    if unknown:
        raise SteelyardError(f"unknown key (use {', '.join(sorted(allowed))})",
                             subject=subject, field=str(unknown[0]))


def _adjustment(entry: object, what: str, k: int, units: FileUnits, ledger: Ledger | None) -> Adjustment:
    if isinstance(entry, str):
        entry = {"item": entry}
    if not isinstance(entry, Mapping):
        raise SteelyardError("each entry is an item id or a table {name, mass, at}",
                             subject=f"weighing {what} #{k + 1}")
    item: Item | None = None
    item_id = entry.get("item")
    if item_id is not None:
        if ledger is None or not isinstance(item_id, str) or item_id not in ledger.index:
            raise SteelyardError(f"no ledger item {said(item_id)}", subject=f"weighing {what} #{k + 1}",
                                 field="item")
        item = ledger.item(item_id)
    name = entry.get("name", item.label if item else None)
    if not isinstance(name, str) or not name:
        raise SteelyardError("needs a name (or item = id)", subject=f"weighing {what} #{k + 1}",
                             field="name")
    subject = f"weighing {what} {said(name)}"
    _strict(entry, _ADJUST_KEYS, subject)
    if "mass" in entry and "volume" in entry:
        raise SteelyardError("give mass or volume, not both", subject=subject, field="volume")
    if "mass" in entry:
        mass = _at_least_zero(_si(entry["mass"], "mass", units.mass, subject, "mass"),
                              entry["mass"], subject, "mass")
    elif "volume" in entry:
        volume = _at_least_zero(_si(entry["volume"], "volume", units.volume, subject, "volume"),
                                entry["volume"], subject, "volume")
        if "density" in entry:  # a negative density times a negative volume must not pass as a mass
            density = _at_least_zero(_si(entry["density"], "density", units.density, subject, "density"),
                                     entry["density"], subject, "density")
        elif item is not None and item.density is not None:
            density = item.density
        else:
            raise SteelyardError("a volume needs a density (here or on the item)",
                                 subject=subject, field="density")
        mass = volume * density
    elif item is not None:
        mass = item.mass * item.quantity
    else:
        raise SteelyardError("needs a mass (or volume and density)", subject=subject, field="mass")
    if "at" in entry:
        at = _xyz(entry["at"], units.length, subject)
    elif item is not None:
        at = tuple(float(c) for c in item.cg)
    else:
        raise SteelyardError("needs at = [x, y, z]", subject=subject, field="at")
    if mass < 0:
        raise SteelyardError("mass must be >= 0", subject=subject, field="mass")
    return Adjustment(name, mass, at, item.id if item else None)  # type: ignore[arg-type]


def _list(table: Mapping, key: str) -> list:
    raw = table.get(key, [])
    if isinstance(raw, Mapping):
        raw = [raw]
    if not isinstance(raw, (list, tuple)):
        raise SteelyardError("must be a list", subject="weighing", field=key)
    return list(raw)


def _vertical_axis(ledger: Ledger | None) -> int:
    if ledger is not None:
        for axis in range(3):
            if ledger.frame.direction(axis) in ("up", "down"):
                return axis
    return 2


def parse_weighing(table: Mapping, units: FileUnits, ledger: Ledger | None = None) -> WeighingInputs:
    """Read a `[weighing]` table (bare numbers in `units`); `ledger` resolves item ids."""
    if not isinstance(table, Mapping):
        raise SteelyardError("[weighing] must be a table", subject="weighing")
    _strict(table, _TABLE_KEYS, "weighing")
    points = _list(table, "point")
    if not points:
        raise SteelyardError("needs at least one [[weighing.point]]", subject="weighing", field="point")
    names, xyz, readings, tares = [], [], [], []
    for k, p in enumerate(points):
        if not isinstance(p, Mapping):
            raise SteelyardError("must be a table", subject=f"weighing point #{k + 1}")
        name = p.get("name", f"#{k + 1}")
        subject = f"weighing point {said(name)}"
        if not isinstance(name, str) or not name or name in names:
            raise SteelyardError("needs a unique name", subject=subject, field="name")
        _strict(p, _POINT_KEYS, subject)
        for key in ("at", "reading", "tare"):
            if key not in p:
                raise SteelyardError(f"needs {key} (write tare = 0 if the scale was zeroed)"
                                     if key == "tare" else f"needs {key}", subject=subject, field=key)
        names.append(name)
        xyz.append(_xyz(p["at"], units.length, subject))
        readings.append(_load(p["reading"], units.mass, subject, "reading"))
        tares.append(_load(p["tare"], units.mass, subject, "tare"))
    on_board = tuple(_adjustment(e, "on_board", k, units, ledger) for k, e in enumerate(_list(table, "on_board")))
    missing = tuple(_adjustment(e, "missing", k, units, ledger) for k, e in enumerate(_list(table, "missing")))
    replaces = table.get("replaces")
    if replaces is not None:
        if not isinstance(replaces, str) or (ledger is not None and replaces not in ledger.index):
            raise SteelyardError(f"no ledger item {said(replaces)} to replace", subject="weighing", field="replaces")
        if ledger is not None and ledger.item(replaces).source is not None:
            raise SteelyardError(f"{said(replaces)} is placed from assembly {said(ledger.item(replaces).source)}; "
                                 "a weighing replaces one of this file's own items", subject="weighing",
                                 field="replaces")
        if ledger is not None and ledger.item(replaces).variable:
            raise SteelyardError(f"{said(replaces)} is a load item; the empty vehicle is not variable",
                                 subject="weighing", field="replaces")
    vertical = table.get("vertical_cg")
    if vertical is not None:
        vertical = _si(vertical, "length", units.length, "weighing", "vertical_cg")
    return WeighingInputs(tuple(names), np.asarray(xyz, dtype=float).reshape(-1, 3),
                          np.asarray(readings), np.asarray(tares), on_board, missing,
                          replaces, vertical, _vertical_axis(ledger), units.mass)


def replaced_item(ledger: Ledger, inputs: WeighingInputs, result: WeighingResult) -> Item:
    """The `replaces` item with the weighed empty mass and CG, maturity "measured".

    A coordinate the weighing left undetermined (NaN: the vertical one without
    `vertical_cg`) keeps the old item's value. One unit (quantity 1); an
    explicit `growth` is dropped, since a weighed mass carries none.
    """
    if inputs.replaces is None or inputs.replaces not in ledger.index:
        raise SteelyardError(f"no ledger item {said(inputs.replaces)} to replace",
                             subject="weighing", field="replaces")
    old = ledger.item(inputs.replaces)
    cg = tuple(float(old.cg[a]) if math.isnan(result.empty_cg[a]) else float(result.empty_cg[a])
               for a in range(3))
    if old.variable:
        raise SteelyardError("the empty vehicle is not a load item", subject=item_subject(old.id),
                             field="variable")
    return old.evolve(mass=result.empty_mass, cg=cg, quantity=1, maturity="measured", growth=None)
