"""Display units: which unit each kind of number is shown in, and factors.

The CLI and the TUI both show numbers in the file's own units by default, or
in SI or US customary on request. Pure: it formats, it never prints.
"""

from __future__ import annotations

from dataclasses import dataclass

from .model import FileUnits
from .units import SYSTEMS, unit_factor

AXIS_NAMES = ("x", "y", "z")
#: trade words for the body axes when the frame is the usual aircraft one
STATION_WORDS = {"x": "station", "y": "butt line", "z": "water line"}


@dataclass(frozen=True)
class DisplayUnits:
    mass: str
    length: str
    inertia: str

    @classmethod
    def choose(cls, file_units: FileUnits, system: str | None) -> "DisplayUnits":
        if system is None or system == "file":
            return cls(file_units.mass, file_units.length, file_units.inertia)
        s = SYSTEMS[system]
        return cls(s["mass"], s["length"], s["inertia"])

    @property
    def moment(self) -> str:
        return f"{self.mass}*{self.length}"

    def m(self, kg: float) -> float:
        return kg / unit_factor(self.mass, "mass")

    def l(self, metres: float) -> float:
        return metres / unit_factor(self.length, "length")

    def i(self, kg_m2: float) -> float:
        return kg_m2 / unit_factor(self.inertia, "inertia")

    def mom(self, kg_m: float) -> float:
        return kg_m / (unit_factor(self.mass, "mass") * unit_factor(self.length, "length"))


def pretty_unit(unit: str) -> str:
    """'lb*in**2' -> 'lb·in²' for labels."""
    return (unit.replace("**2", "²").replace("**3", "³").replace("*", "·").replace(" ", ""))


def fmt(x: float | None, digits: int = 4) -> str:
    """A number for a table: fixed decimals scaled to its size, '—' for none."""
    if x is None or x != x:
        return "—"
    ax = abs(x)
    if ax != 0 and (ax >= 1e7 or ax < 1e-4):
        return f"{x:.{digits}e}"
    if ax >= 1000:
        return f"{x:,.{max(digits - 3, 1)}f}"
    return f"{x:.{digits}f}"
