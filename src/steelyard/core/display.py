"""Display units: which unit each kind of number is shown in, and factors.

The CLI and the TUI both show numbers in the file's own units by default, or
in SI or US customary on request. Pure: it formats, it never prints.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from steelyard.core.document.model import FileUnits
from steelyard.core.numbers import column, column_decimals, number
from steelyard.core.units import SYSTEMS, UnitError, unit_factor

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

#: display units a person may pick, per quantity (docs/numbers.md); "auto" switches a lone mass to g / oz
CHOICES: dict[str, tuple[str, ...]] = {
    "mass": ("auto", "kg", "g", "lb", "oz"),
    "length": ("m", "mm", "in", "ft"),
    "inertia": ("kg*m**2", "g*mm**2", "lb*in**2", "slug*ft**2"),
}
#: what a person may type for an inertia unit
INERTIA_SPELLINGS = {"kg·m²": "kg*m**2", "g·mm²": "g*mm**2", "lb·in²": "lb*in**2", "slug·ft²": "slug*ft**2"}
#: exact factors of display units the unit table of core/units.py lacks (g·mm² = 1e-9 kg·m², exactly)
_MORE_EXACT = {("g*mm**2", "inertia"): 1e-9}


def _factor(unit: str, dimension: str) -> float:
    """SI per `unit`: the local exact table first, so a display unit never builds the pint registry."""
    return _MORE_EXACT.get((unit, dimension)) or unit_factor(unit, dimension)


def display_unit(text: str, dimension: str) -> str:
    """A unit named by a person for display ("g", "lb*in**2", "lb·in²"), checked; UnitError if not one."""
    unit = INERTIA_SPELLINGS.get(text.strip(), text.strip().replace("^", "**").replace(" ", ""))
    if unit not in CHOICES[dimension]:
        raise UnitError(f"unknown {dimension} unit {text!r} (use one of: "
                        f"{', '.join(pretty_unit(u) for u in CHOICES[dimension])})")
    return unit


@dataclass(frozen=True)
class UnitChoice:
    """What a person asked to see: a system (file, si, us) and, over it, a unit per quantity."""
    system: str | None = None
    mass: str | None = None
    length: str | None = None
    inertia: str | None = None

    @property
    def label(self) -> str:
        base = {None: "file", "file": "file", "si": "SI", "us": "US"}.get(self.system, str(self.system))
        extra = [pretty_unit(u) for u in (self.mass, self.length, self.inertia) if u]
        return base + (" + " + " ".join(extra) if extra else "")


#: trade words for the body axes when the frame is the usual aircraft one
STATION_WORDS = {"x": "station", "y": "butt line", "z": "water line"}


@dataclass(frozen=True)
class DisplayUnits:
    mass: str
    length: str
    inertia: str

    #: mass unit "auto": a lone mass below 1 kg (1 lb) is shown in g (oz)
    auto_mass: bool = False

    @classmethod
    def choose(cls, file_units: FileUnits, system: "str | UnitChoice | None") -> "DisplayUnits":
        """The units to show: the file's, a system's (si, us), or a UnitChoice that may
        also name a unit per quantity over its system."""
        choice = system if isinstance(system, UnitChoice) else UnitChoice(system=system)
        if choice.system is None or choice.system == "file":
            base = (file_units.mass, file_units.length, file_units.inertia)
        else:
            s = SYSTEMS[choice.system]
            base = (s["mass"], s["length"], s["inertia"])
        mass = choice.mass or base[0]
        auto = mass == "auto"
        if auto:
            mass = "lb" if base[0] in ("lb", "oz", "slug") else "kg"
        return cls(mass, choice.length or base[1], choice.inertia or base[2], auto)

    def mass_text(self, kg: float | None) -> str:
        """A lone mass with its unit, e.g. "35 g" (auto) or "0.035 kg" (kg): the one rule."""
        unit = self.mass
        if self.auto_mass and kg is not None and kg == kg and abs(kg) < _factor(unit, "mass"):
            unit = "oz" if unit == "lb" else "g"
        f = _factor(unit, "mass")
        return f"{number(None if kg is None else kg / f, 'mass', f)} {pretty_unit(unit)}"

    def text(self, si: float | None, dimension: str) -> str:
        """A lone value of `dimension` (mass, length, inertia, moment) in these units, unit included."""
        if dimension == "mass":
            return self.mass_text(si)
        unit = self.moment if dimension == "moment" else getattr(self, dimension)
        f = self.factor(dimension)
        return f"{number(None if si is None else si / f, dimension, f)} {pretty_unit(unit)}"

    def num(self, si: float | None, dimension: str) -> str:
        """A lone value of `dimension` in these units, without its unit (the one rule)."""
        f = self.factor(dimension)
        return number(None if si is None else si / f, dimension, f)

    def factor(self, dimension: str) -> float:
        """SI per display unit of `dimension`."""
        if dimension == "moment":
            return _factor(self.mass, "mass") * _factor(self.length, "length")
        return _factor(getattr(self, dimension), dimension)

    def column(self, si_values, dimension: str) -> list[str]:
        """A column of SI values in these units, one count of decimals (the one rule)."""
        f = self.factor(dimension)
        return column([None if v is None else v / f for v in si_values], dimension, f)

    def column_decimals(self, si_values, dimension: str) -> int:
        f = self.factor(dimension)
        return column_decimals([None if v is None else v / f for v in si_values], dimension, f)

    @property
    def moment(self) -> str:
        return f"{self.mass}*{self.length}"

    def decimals(self, dimension: str) -> int:
        """Decimals that resolve about 0.25 mm, 5 g and 1e-4 kg·m² in this unit (common practice)."""
        unit, res = {"length": (self.length, 2.5e-4), "mass": (self.mass, 5e-3),
                     "inertia": (self.inertia, 1e-4), "moment": (None, 1e-3)}[dimension]
        factor = (_factor(unit, dimension) if unit else
                  _factor(self.mass, "mass") * _factor(self.length, "length"))
        return max(0, min(6, round(-math.log10(res / factor))))

    def m(self, kg: float) -> float:
        return kg / _factor(self.mass, "mass")

    def l(self, metres: float) -> float:
        return metres / _factor(self.length, "length")

    def i(self, kg_m2: float) -> float:
        return kg_m2 / _factor(self.inertia, "inertia")

    def mom(self, kg_m: float) -> float:
        return kg_m / (_factor(self.mass, "mass") * _factor(self.length, "length"))


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
