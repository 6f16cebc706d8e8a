"""`steelyard convert-units FILE --mass g --length mm`: the file's own units changed, no value changed.

Every bare number is rewritten in the new units, so reading the file gives
the same SI values as before (to the last bit where a short decimal does it,
else within an ulp or two); strings that carry their unit ("41.5 lb") stay as
written. Written through the one writer (io/ledger/file.py), keeping the
file's layout and comments where it can.
"""

from __future__ import annotations

import sys

NAME = "convert-units"
HELP = "change a ledger's own [units] (and rewrite every bare number to match) without changing any value"
DESCRIPTION = (
    "Rewrites FILE (or writes -o OUT) with new [units]: items, envelopes, limits, [mac], allocations, "
    "weighing records, tolerances and tank tables get their bare numbers in the new units, so every "
    "roll-up, check and report gives the same result. Values written with their own unit are kept as "
    "written. See docs/numbers.md.")
_DIMS = ("mass", "length", "inertia", "volume", "density")


def add_arguments(p) -> None:
    p.add_argument("file", help="ledger file (TOML)")
    p.add_argument("--mass", metavar="U", help="new mass unit (kg, g, lb, oz, ...)")
    p.add_argument("--length", metavar="U", help="new length unit (m, mm, in, ft, ...)")
    p.add_argument("--inertia", metavar="U", help="new inertia unit (kg*m**2, g*mm**2, lb*in**2, slug*ft**2, ...)")
    p.add_argument("--volume", metavar="U", help="new unit of bare volumes (L, gal, m**3)")
    p.add_argument("--density", metavar="U", help="new unit of bare densities (kg/L, lb/gal, ...)")
    p.add_argument("-o", "--output", metavar="OUT", help="write here instead of rewriting FILE")
    p.add_argument("--force", action="store_true", help="rewrite a read-only FILE, or replace OUT")


def new_units(old, args):
    """The new FileUnits; one-line error (exit 2) for an unknown or wrong-dimension unit."""
    from dataclasses import replace

    from steelyard.core.errors import SteelyardError, UnitError
    from steelyard.core.units import exact_factor

    changes = {}
    for dim in _DIMS:
        unit = getattr(args, dim)
        if unit is None:
            continue
        unit = unit.strip()
        try:
            exact_factor(unit, dim)
        except UnitError as exc:
            raise SteelyardError(exc.message, field=f"--{dim}") from None
        changes[dim] = unit
    if not changes:
        raise SteelyardError("say which units to change: --mass, --length, --inertia, --volume or --density",
                             field="--mass")
    return replace(old, **changes)


def converted(ledger, units):
    """`ledger` with file units `units`: the same SI values, its kept tables' bare numbers rewritten."""
    from dataclasses import replace

    from steelyard.core.document.pinning import convert_cg_table, convert_table, unit_for

    old = ledger.units

    def table(t, kind):
        return None if t is None else convert_table(t, kind, old, units)

    items = []
    for it in ledger.items:
        changes = {}
        if it.tolerance is not None:
            changes["tolerance"] = table(it.tolerance, "tolerance")
        if it.cg_table is not None:
            changes["cg_table"] = convert_cg_table(it.cg_table, old, units)
        items.append(replace(it, **changes) if changes else it)
    lf_old = _factor(unit_for("length", old), "length")
    lf_new = _factor(unit_for("length", units), "length")
    envelopes = []
    for env in ledger.envelopes:  # %MAC numbers were read as lengths in the file's unit: keep the numbers
        if env.units in ("%mac", "%MAC") and lf_old != lf_new:
            env = replace(env, points=tuple((c / lf_old * lf_new, m) for c, m in env.points))
        envelopes.append(env)
    return replace(ledger, units=units, items=tuple(items), envelopes=tuple(envelopes),
                   limits=tuple(table(t, "limit") for t in ledger.limits), mac=table(ledger.mac, "mac"),
                   allocations=tuple(table(t, "allocation") for t in ledger.allocations),
                   weighing=table(ledger.weighing, "weighing"))


def _factor(unit, dim):
    from steelyard.core.units import unit_factor

    return unit_factor(unit, dim)


def run(args) -> int:
    from steelyard.cli.loading import load_for_cli, located
    from steelyard.io.ledger.file import rewriting

    target = args.output or args.file
    with rewriting(target, source=args.file, force=args.force) as w:
        loaded = load_for_cli(args.file, cache=False)  # it rewrites the ledger: read afresh
        w.replaces(loaded)
        units = new_units(loaded.ledger.units, args)
        with located(loaded):
            ledger = converted(loaded.ledger, units)
            w.write(w.text_for(ledger))
    from steelyard.cli.render.diff import safe

    shown = ", ".join(f"{d} {getattr(units, d)}" for d in _DIMS if getattr(args, d))
    print(safe(f"{target}: units now {shown}; every value unchanged"))
    return 0
