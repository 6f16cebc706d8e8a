"""The person's own display settings: which unit each quantity is shown in.

Kept per user, never in the ledger (two people may read one file in lb and in
kg). A small TOML file under the user's config folder (platformdirs, else
$XDG_CONFIG_HOME or ~/.config)/steelyard/settings.toml; $STEELYARD_SETTINGS
names another file (tests, a shared workstation). A missing file is the
defaults; a broken one is one clear error naming it.
"""

from __future__ import annotations

import os
import tomllib
from pathlib import Path

from steelyard.core.display import CHOICES, UnitChoice, display_unit
from steelyard.core.errors import SteelyardError, UnitError

ENV = "STEELYARD_SETTINGS"
SYSTEM_CHOICES = ("file", "si", "us")
_KEYS = ("units", "mass", "length", "inertia")


def settings_path() -> Path:
    """Where the settings live: $STEELYARD_SETTINGS, else the user's config folder."""
    named = os.environ.get(ENV)
    if named:
        return Path(named)
    try:
        from platformdirs import user_config_dir

        return Path(user_config_dir("steelyard", appauthor=False)) / "settings.toml"
    except ImportError:  # platformdirs is a dependency; a bare checkout may still lack it
        base = os.environ.get("XDG_CONFIG_HOME") or os.path.join(os.path.expanduser("~"), ".config")
        return Path(base) / "steelyard" / "settings.toml"


def load_choice(path: Path | None = None) -> UnitChoice:
    """The saved display units ([display] units, mass, length, inertia); defaults if no file."""
    path = settings_path() if path is None else path
    try:
        with open(path, "rb") as fh:
            data = tomllib.load(fh)
    except FileNotFoundError:
        return UnitChoice()
    except (OSError, tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise SteelyardError(f"cannot read settings: {exc}", file=str(path)) from None
    table = data.get("display", {})
    if not isinstance(table, dict) or set(data) - {"display"}:
        raise SteelyardError("settings have one table, [display]", file=str(path))
    unknown = set(table) - set(_KEYS)
    if unknown:
        raise SteelyardError(f"unknown key {sorted(unknown)[0]!r} (keys: {', '.join(_KEYS)})",
                             file=str(path), field="display")
    system = table.get("units", "file")
    if system not in SYSTEM_CHOICES:
        raise SteelyardError(f"units must be one of {', '.join(SYSTEM_CHOICES)}, got {system!r}",
                             file=str(path), field="display.units")
    units = {}
    for dim in CHOICES:
        if dim in table:
            try:
                units[dim] = display_unit(str(table[dim]), dim)
            except UnitError as exc:
                raise SteelyardError(exc.message, file=str(path), field=f"display.{dim}") from None
    return UnitChoice(system=None if system == "file" else system, **units)


def save_choice(choice: UnitChoice, path: Path | None = None) -> Path:
    """Write the display units atomically (the settings folder is made if missing)."""
    import tomli_w

    from steelyard.io.durability.atomic import write_atomic

    path = settings_path() if path is None else path
    table = {"units": choice.system or "file"}
    table.update({dim: getattr(choice, dim) for dim in CHOICES if getattr(choice, dim)})
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise SteelyardError(f"cannot make the settings folder: {exc.strerror}", file=str(path.parent)) from None
    write_atomic(path, tomli_w.dumps({"display": table}).encode("utf-8"))
    return path
