"""Display-unit options shared by the commands that print for people.

`--units file|si|us` picks a system; `--mass-unit`, `--length-unit` and
`--inertia-unit` pick one quantity's unit over it. With neither, the
person's saved settings apply (io/user_settings.py); `--units` alone means
that system with no saved per-quantity units. Machine outputs (JSON, CSV
data) never depend on these.
"""

from __future__ import annotations

UNIT_FLAGS = ("mass_unit", "length_unit", "inertia_unit")


def add_unit_options(p, what: str = "display units") -> None:
    p.add_argument("--units", choices=("file", "si", "us"),
                   help=f"{what}: the file's own, SI or US customary (default: your saved settings, else the file's)")
    p.add_argument("--mass-unit", metavar="U", help="show masses in U: auto, kg, g, lb or oz")
    p.add_argument("--length-unit", metavar="U", help="show lengths in U: m, mm, in or ft")
    p.add_argument("--inertia-unit", metavar="U", help="show inertias in U: kg*m**2, g*mm**2, lb*in**2 or slug*ft**2")


def unit_choice(args):
    """The UnitChoice these options (and the saved settings) ask for; exit-2 error for an unknown unit."""
    from steelyard.core.display import UnitChoice, display_unit
    from steelyard.core.errors import SteelyardError, UnitError

    if args.units is None:
        from steelyard.io.user_settings import load_choice

        base = load_choice()
    else:
        base = UnitChoice(system=None if args.units == "file" else args.units)
    picked = {}
    for flag, dim in zip(UNIT_FLAGS, ("mass", "length", "inertia")):
        text = getattr(args, flag, None)
        if text is not None:
            try:
                picked[dim] = display_unit(text, dim)
            except UnitError as exc:
                raise SteelyardError(exc.message, field="--" + flag.replace("_", "-")) from None
    return UnitChoice(system=base.system, mass=picked.get("mass", base.mass),
                      length=picked.get("length", base.length), inertia=picked.get("inertia", base.inertia))
