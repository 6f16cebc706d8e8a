"""Mass growth allowance: basic mass, predicted mass and group allocations.

A ledger's masses are mostly not yet weighed; they grow as a design matures.
Predicted mass = basic mass x (1 + growth allowance), the allowance set by the
item's design maturity (ANSI/AIAA S-120A with SAWE RP A-3 publish the concept;
the percentages below are recalled, not re-read, so the table is configurable).

Item keys (`Item.maturity`, `Item.growth`):

    maturity = "layout"      # one of CATEGORIES, or a category the ledger's [growth] adds
    growth = 0.12            # optional: explicit fraction of basic mass, wins over maturity

Ledger tables (`Ledger.growth`, `Ledger.allocations`):

    [growth]                 # category = fraction; replaces or adds defaults
    layout = 0.20

    [[allocation]]           # not-to-exceed budget of a group and its subgroups
    group = "avionics"
    mass = "40 kg"
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from types import MappingProxyType

import numpy as np

from steelyard.core.errors import SteelyardError, UnitError, item_subject
from steelyard.core.document.model import Ledger, more_rows, rows_with
from steelyard.core.units import parse_quantity, to_si

#: Maturity categories, least to most mature.
CATEGORIES = ("estimated", "layout", "preliminary", "released", "existing", "measured")

#: Default allowance by maturity, as fractions of basic mass. FROM MEMORY: the
#: recalled typical ranges are estimated 15-50 %, layout 10-25 %, pre-release
#: drawings 5-20 %, released drawings 3-10 %, existing hardware 2-3 %,
#: measured 0 %; one value was chosen inside each range (listed beside it).
DEFAULT_GROWTH: Mapping[str, float] = MappingProxyType({
    "estimated": 0.25,    # recalled range 0.15-0.50
    "layout": 0.15,       # recalled range 0.10-0.25
    "preliminary": 0.10,  # pre-release drawings, recalled range 0.05-0.20
    "released": 0.05,     # released drawings, recalled range 0.03-0.10
    "existing": 0.03,     # existing hardware, recalled range 0.02-0.03
    "measured": 0.0,      # weighed: no allowance
})


def _fraction(value: object, *, subject: str, field: str) -> float:
    """A growth fraction 0..1: a bare number (0.12) or a string ("12 %")."""
    try:
        if isinstance(value, bool):
            raise UnitError(f"expected a fraction 0..1, got {value!r}")
        if isinstance(value, (int, float)):
            f = float(value)
        elif isinstance(value, str):
            f = parse_quantity(value, "dimensionless")
        else:
            raise UnitError(f"expected a fraction 0..1, got {type(value).__name__}")
    except SteelyardError as exc:
        raise exc.located(subject=subject, field=field)
    if not (0.0 <= f <= 1.0):  # also rejects NaN
        raise SteelyardError(f"growth fraction {f:g} is outside 0..1", subject=subject, field=field)
    return f


def growth_table(ledger: Ledger) -> dict[str, float]:
    """Default table overlaid with the ledger's `[growth]` table (validated)."""
    table = dict(DEFAULT_GROWTH)
    raw = ledger.growth
    if raw is None:
        return table
    if not isinstance(raw, Mapping):
        raise SteelyardError("[growth] must be a table of category = fraction",
                             subject="growth table")
    for key, value in raw.items():
        table[str(key)] = _fraction(value, subject="growth table", field=str(key))
    return table


def growth_fractions(ledger: Ledger) -> np.ndarray:
    """Growth fraction of each item (n,), from `growth`, else `maturity`, else 0.

    An item with neither key carries no allowance: it has not been classified.
    """
    cached = ledger.__dict__.get("_growth_fractions")
    if cached is not None:
        return cached
    table = growth_table(ledger)
    out = np.zeros(len(ledger.items))
    items = ledger.items
    for i in rows_with(items, "maturity", "growth", among=more_rows(ledger)):
        item = items[i]
        if item.maturity is None and item.growth is None:
            continue
        maturity = item.maturity
        if maturity is not None:  # checked even when `growth` overrides it
            if not isinstance(maturity, str) or maturity not in table:
                known = ", ".join(table)
                raise SteelyardError(f"unknown maturity {maturity!r} (use one of: {known})",
                                     subject=item_subject(item.id), field="maturity")
        explicit = item.growth
        if explicit is not None:
            out[i] = _fraction(explicit, subject=item_subject(item.id), field="growth")
        elif maturity is not None:
            out[i] = table[maturity]
    out.setflags(write=False)
    ledger.__dict__["_growth_fractions"] = out  # a ledger is immutable; an edit makes a new one
    return out


def _cg(mass: np.ndarray, cg: np.ndarray, total: float) -> np.ndarray:
    if total <= 0.0:
        return np.full(3, np.nan)  # no mass, no CG
    # Offsets from a reference row keep digits when the datum is far away.
    ref = cg[int(np.argmax(mass))]
    return ref + (mass @ (cg - ref)) / total


def basic_and_predicted(mass: np.ndarray, cg: np.ndarray, fractions: np.ndarray
                        ) -> tuple[float, np.ndarray, float, np.ndarray]:
    """(basic_total, basic_cg, predicted_total, predicted_cg) of rows (n,), (n, 3).

    Each row's growth mass sits at the row's own CG. A zero total gives a NaN CG.
    """
    mass = np.asarray(mass, dtype=float).reshape(-1)
    cg = np.asarray(cg, dtype=float).reshape(-1, 3)
    predicted = mass * (1.0 + np.asarray(fractions, dtype=float).reshape(-1))
    basic_total = float(mass.sum())
    predicted_total = float(predicted.sum())
    return basic_total, _cg(mass, cg, basic_total), predicted_total, _cg(predicted, cg, predicted_total)


def allocations(ledger: Ledger) -> list[tuple[str, float]]:
    """Each `[[allocation]]` as (group path, not-to-exceed kg), validated."""
    raw = ledger.allocations
    out: list[tuple[str, float]] = []
    seen: set[str] = set()
    for k, entry in enumerate(raw):
        if not isinstance(entry, Mapping):
            raise SteelyardError("each [[allocation]] must be a table", subject=f"allocation #{k + 1}")
        group = entry.get("group")
        if not isinstance(group, str):
            raise SteelyardError("needs group = \"path\" (\"\" for the whole vehicle)",
                                 subject=f"allocation #{k + 1}", field="group")
        group = group.strip("/")
        subject = f"allocation {group!r}"
        if group in seen:
            raise SteelyardError("group has two allocations", subject=subject, field="group")
        seen.add(group)
        if "mass" not in entry:
            raise SteelyardError("needs a mass (the not-to-exceed value)", subject=subject, field="mass")
        try:
            mass = to_si(entry["mass"], "mass", ledger.units.mass)
        except SteelyardError as exc:
            raise exc.located(subject=subject, field="mass")
        if mass < 0:
            raise SteelyardError("allocation must be >= 0", subject=subject, field="mass")
        out.append((group, mass))
    return out


def _in_group(distinct: Sequence[str], group: str) -> np.ndarray:
    """Which distinct group paths are `group` or one of its subgroups ("" matches all)."""
    if not group:
        return np.ones(len(distinct), dtype=bool)
    prefix = group + "/"
    return np.fromiter((g == group or g.startswith(prefix) for g in distinct), bool, len(distinct))


def allocation_margins(ledger: Ledger, row_mass: np.ndarray, fractions: np.ndarray) -> list[dict]:
    """Each `[[allocation]]` against its group's basic and predicted mass.

    margin_kg = allocation - predicted: negative means the budget is broken.
    `row_mass` is each row's mass as carried (unit mass x quantity, or the
    loadout amount for a variable item).
    """
    budgets = allocations(ledger)
    if not budgets:
        return []
    row_mass = np.asarray(row_mass, dtype=float).reshape(-1)
    predicted = row_mass * (1.0 + np.asarray(fractions, dtype=float).reshape(-1))
    # Sum per distinct group path once; each allocation then adds up a few paths.
    codes: dict[str, int] = {}
    inverse = np.fromiter((codes.setdefault(it.group.strip("/"), len(codes)) for it in ledger.items),
                          np.intp, len(ledger.items))
    basic_by = np.bincount(inverse, weights=row_mass, minlength=len(codes))
    predicted_by = np.bincount(inverse, weights=predicted, minlength=len(codes))
    distinct = list(codes)
    out = []
    for group, allocation in budgets:
        hit = _in_group(distinct, group)
        basic_kg = float(basic_by[hit].sum())
        predicted_kg = float(predicted_by[hit].sum())
        out.append({"group": group, "allocation_kg": allocation, "basic_kg": basic_kg,
                    "predicted_kg": predicted_kg, "margin_kg": allocation - predicted_kg})
    return out
