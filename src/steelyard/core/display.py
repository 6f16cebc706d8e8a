"""Display units: which unit each kind of number is shown in, and factors.

The CLI and the TUI both show numbers in the file's own units by default, or
in SI or US customary on request. Pure: it formats, it never prints.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from steelyard.core.document.model import FileUnits
from steelyard.core.units import SYSTEMS, unit_factor

AXIS_NAMES = ("x", "y", "z")

# C0 controls, DEL, C1 controls, and the bidirectional overrides/isolates that
# can make text display in a different order than it is stored.
_CONTROL = re.compile("[\x00-\x1f\x7f-\x9f\u202a-\u202e\u2066-\u2069]")


def _picture(match: re.Match) -> str:
    code = ord(match.group(0))
    if code < 0x20:
        return chr(0x2400 + code)  # Unicode "control pictures": ␛ for ESC
    return "\u2421" if code == 0x7F else "\ufffd"


def visible(text: object) -> str:
    """User text with every control character shown as a visible symbol.

    Names come from files anyone can write; an ESC must never reach a
    terminal or a report as an escape sequence.
    """
    s = text if isinstance(text, str) else str(text)
    return _CONTROL.sub(_picture, s) if _CONTROL.search(s) else s
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

    def decimals(self, dimension: str) -> int:
        """Decimals that resolve about 0.25 mm, 5 g and 1e-4 kg·m² in this unit (common practice)."""
        unit, res = {"length": (self.length, 2.5e-4), "mass": (self.mass, 5e-3),
                     "inertia": (self.inertia, 1e-4), "moment": (None, 1e-3)}[dimension]
        factor = (unit_factor(unit, dimension) if unit else
                  unit_factor(self.mass, "mass") * unit_factor(self.length, "length"))
        return max(0, min(6, round(-math.log10(res / factor))))

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
    """A number for a table with `digits` decimals and thousands separators; '—' for none."""
    if x is None or x != x:
        return "—"
    if abs(x) >= 1e12:
        return f"{x:.4e}"
    out = f"{x:,.{digits}f}"
    if out.startswith("-") and not out.strip("-0.,"):
        out = out[1:]  # no "-0.00"
    return out


def fmt_sig(x: float | None, sig: int = 5) -> str:
    """A number to `sig` significant figures (inertia spans many decades)."""
    if x is None or x != x:
        return "—"
    if x == 0:
        return "0"
    ax = abs(x)
    if ax >= 1e9 or ax < 1e-4:
        return f"{x:.{sig - 1}e}"
    decimals = max(0, sig - 1 - math.floor(math.log10(ax)))
    return f"{x:,.{decimals}f}"
