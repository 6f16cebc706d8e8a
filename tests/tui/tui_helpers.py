"""Shared helpers for the editor's Pilot tests: start, wait, read the screen, type.

`exact_totals` is the independent oracle: it reads a ledger file with the
standard library's tomllib and adds masses and moments as exact fractions,
using the exact 1959 international pound and inch (NIST SP 811, Appendix B:
1 lb = 0.45359237 kg, 1 in = 0.0254 m). It shares no code with steelyard.
"""

from __future__ import annotations

import io
import shutil
import tomllib
from fractions import Fraction
from pathlib import Path

from rich.console import Console

ROOT = Path(__file__).resolve().parents[2]
TRAINER = ROOT / "fixtures" / "trainer.toml"
DEMO = ROOT / "src" / "steelyard" / "demo" / "demo.toml"

LB = Fraction("0.45359237")  # kg, exact (NIST SP 811)
INCH = Fraction("0.0254")  # m, exact (NIST SP 811)
_MASS_UNITS = {"lb": LB, "kg": Fraction(1)}
_LENGTH_UNITS = {"in": INCH, "m": Fraction(1), "ft": 12 * INCH}


def copy_fixture(tmp_path: Path, source: Path = TRAINER, name: str = "ledger.toml") -> Path:
    target = tmp_path / name
    shutil.copyfile(source, target)
    return target


def _value(v, units: dict[str, Fraction], file_unit: Fraction) -> Fraction:
    """A bare number in the file's unit, or "<number> <unit>" with one of a few exact units."""
    if isinstance(v, str):
        number, unit = v.split()
        return Fraction(number) * units[unit]
    return Fraction(str(v)) * file_unit


def exact_totals(path: Path, extra: list[tuple[str, str, str]] = ()) -> tuple[Fraction, list[Fraction]]:
    """Total mass (kg) and CG (m) of the fixed items, exact; variable items are empty (no loadout).

    `extra` adds point items, each a tuple of strings with units: (mass, x, y, z).
    CG = Σ moment / Σ mass, moment = mass × arm (FAA-H-8083-1, weight and balance).
    """
    data = tomllib.loads(path.read_text())
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


async def wait_loaded(app, pilot, timeout: float = 20.0) -> None:
    from steelyard.tui.screens.loading_screen import LoadingScreen

    waited = 0.0
    while app.session is None or isinstance(app.screen, LoadingScreen):
        await pilot.pause(0.05)
        waited += 0.05
        if waited > timeout:
            raise AssertionError("the ledger did not load")
    await pilot.pause(0.1)


async def settle(pilot, app, rounds: int = 3) -> None:
    """Let workers (subtotals, saves) finish and the screen repaint."""
    for _ in range(rounds):
        await app.workers.wait_for_complete()
        await pilot.pause(0.05)


def screen_text(app) -> str:
    """What the terminal shows, as plain text."""
    console = Console(width=app.size.width, height=app.size.height, record=True, file=io.StringIO(),
                      force_terminal=True, color_system=None)
    console.print(app.screen._compositor.render_update(full=True))
    return console.export_text()


async def type_into(app, pilot, widget_id: str, text: str, *, clear: bool = True) -> None:
    """Focus a form field and type into it key by key, as a user would."""
    box = app.screen.query_one(f"#{widget_id}")
    box.focus()
    await pilot.pause()
    if clear:
        box.action_select_all()
        await pilot.press("backspace")
    keys = ["space" if ch == " " else ch for ch in text]
    if keys:
        await pilot.press(*keys)
    await pilot.pause()


async def cursor_to(app, pilot, item_id: str, limit: int = 400) -> None:
    """Press Down until the table's cursor is on `item_id` (keyboard only, like a user)."""
    table = app.main.table
    await pilot.press("home")
    for _ in range(limit):
        if table.current_item_id == item_id:
            return
        await pilot.press("down")
    raise AssertionError(f"{item_id!r} is not in the table")
