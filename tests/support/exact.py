"""Exact roll-ups for expected values, independent of steelyard.

CG = Σ moment / Σ mass, moment = mass × arm (FAA-H-8083-1, weight and balance),
in exact fractions; file values with units use the exact NIST SP 811 pound and
inch. `exact_totals` reads the file with the standard library's tomllib.
"""

from __future__ import annotations

import tomllib
from fractions import Fraction
from pathlib import Path

from support.units import IN, LB

_MASS_UNITS = {"lb": LB, "kg": Fraction(1)}
_LENGTH_UNITS = {"in": IN, "m": Fraction(1), "ft": 12 * IN}


def exact_moments(rows):
    """(Σ m, Σ m·arm) of (mass, arm) rows; an arm is one number or an (x, y, z) sequence."""
    rows = [(Fraction(m), arm) for m, arm in rows]
    total = sum(m for m, _ in rows)
    if isinstance(rows[0][1], (tuple, list)):
        return total, [sum(m * Fraction(arm[k]) for m, arm in rows) for k in range(len(rows[0][1]))]
    return total, sum(m * Fraction(arm) for m, arm in rows)


def exact_cg(rows):
    """(Σ m, CG = Σ m·arm / Σ m) of (mass, arm) rows; an arm is one number or an (x, y, z) sequence."""
    total, moment = exact_moments(rows)
    if isinstance(moment, list):
        return total, [mk / total for mk in moment]
    return total, moment / total


def _amount(v, units: dict[str, Fraction]) -> Fraction:
    """A bare number as it stands, or "<number> <unit>" through `units`."""
    return Fraction(v.split()[0]) * units[v.split()[1]] if isinstance(v, str) else Fraction(v)


def carried(data: dict, loadout: str, units: dict[str, Fraction]) -> list[tuple[dict, Fraction]]:
    """(item table, mass carried) of every item of a parsed file under one of its loadouts, exact.

    A fixed item carries quantity × mass; a variable item its amount in the loadout's
    [loadout.set] (a fraction of full, or a mass or volume with a unit), nothing when not
    named. `units` gives each unit written in the file in one chosen mass unit (a volume:
    through the density the test states).
    """
    sets = next(lo for lo in data["loadout"] if lo["name"] == loadout)["set"]
    rows = []
    for it in data["item"]:
        m = _amount(it["mass"], units) * it.get("quantity", 1)
        if it.get("variable"):
            a = sets.get(it["id"], 0)
            m = _amount(a, units) if isinstance(a, str) else m * Fraction(a)
        rows.append((it, m))
    return rows


def _value(v, units: dict[str, Fraction], file_unit: Fraction) -> Fraction:
    """A bare number in the file's unit, or "<number> <unit>" with one of a few exact units."""
    if isinstance(v, str):
        number, unit = v.split()
        return Fraction(number) * units[unit]
    return Fraction(str(v)) * file_unit


def exact_totals(path: Path, extra: list[tuple[str, str, str, str]] = ()) -> tuple[Fraction, list[Fraction]]:
    """Total mass (kg) and CG (m) of a file's fixed items, exact; variable items are empty (no loadout).

    `extra` adds point items, each a tuple of strings with units: (mass, x, y, z).
    """
    data = tomllib.loads(Path(path).read_text())
    units = data.get("units", {})
    fm = _MASS_UNITS[units.get("mass", "kg")]
    fl = _LENGTH_UNITS[units.get("length", "m")]
    mass = Fraction(0)
    moment = [Fraction(0)] * 3
    for it in data.get("item", []):
        if it.get("variable", False):
            continue
        m = _value(it["mass"], _MASS_UNITS, fm) * it.get("quantity", 1)
        mass += m
        for k in range(3):
            moment[k] += m * _value(it["cg"][k], _LENGTH_UNITS, fl)
    for m_text, *xyz in extra:
        m = _value(m_text, _MASS_UNITS, fm)
        mass += m
        for k in range(3):
            moment[k] += m * _value(xyz[k], _LENGTH_UNITS, fl)
    return mass, [mk / mass for mk in moment]


def close(a: float, b: Fraction, rel: float = 1e-12) -> bool:
    """float vs exact value: a double sum of ~50 terms is good to a few parts in 1e15."""
    return abs(Fraction(a) - b) <= abs(b) * Fraction(rel)
