"""Mass-properties control tables for the terminal: basic vs predicted, allocations, uncertainty.

The figures come from `steelyard.io.report.control.control_record`, the same
record the JSON export and the report use; this module only lays them out.
"""

from __future__ import annotations

from rich.console import Console
from rich.table import Table
from rich.text import Text

from steelyard.core.caution import CAUTION
from steelyard.core.display import AXIS_NAMES, DisplayUnits, pretty_unit
from steelyard.core.numbers import cell
from steelyard.io.report.control import DEFAULT_SAMPLES, DEFAULT_SEED, control_record
from steelyard.io.report.text import clean

__all__ = ["control_record", "print_control"]


def _pct(x) -> str:
    return "—" if x is None else f"{100.0 * x:.1f} %"


def _units(ledger, display_units) -> DisplayUnits:
    if isinstance(display_units, DisplayUnits):
        return display_units
    return DisplayUnits.choose(ledger.units, display_units)  # None, "file", "si" or "us"


class _F:
    """Numbers in display units, one count of decimals per dimension for all these tables
    (docs/numbers.md): 5 significant figures at the largest mass and CG they show."""

    def __init__(self, du: DisplayUnits, masses=(), lengths=()):
        self.du = du
        self.dm = du.column_decimals(masses, "mass")
        self.dl = du.column_decimals(lengths, "length")

    def m(self, kg) -> str:
        return cell(None if kg is None else self.du.m(kg), self.dm)

    def l(self, metres) -> str:
        return cell(None if metres is None else self.du.l(metres), self.dl)


def _scale(rec: dict, mass: float, cg) -> tuple[list, list]:
    """The masses and lengths the control tables show, for their one count of decimals."""
    masses, lengths = [mass], list(cg)
    g = rec.get("growth")
    if g:
        for b in [*g["groups"], g["total"]]:
            masses += [b["basic_mass_kg"], b["predicted_mass_kg"]]
            lengths += [*b["basic_cg_m"], *b["predicted_cg_m"]]
    for a in rec.get("allocations") or ():
        masses += [a["allocation_kg"], a["basic_kg"], a["predicted_kg"]]
    return [m for m in masses if m is not None], [c for c in lengths if c is not None]


def _growth_table(g: dict, du: DisplayUnits, wide: bool, f: _F) -> Table:
    """Mass, growth and CG per top-level group; CG along x only unless the terminal is wide."""
    mu, lu = pretty_unit(du.mass), pretty_unit(du.length)
    axes = range(3) if wide else range(1)
    t = Table(title="Basic vs predicted (growth allowance)" + ("" if wide else "; CG along x"),
              title_justify="left")
    t.add_column(Text("group"))
    for col in (f"basic [{mu}]", f"growth [{mu}]", "growth", f"predicted [{mu}]",
                *(f"basic CG {AXIS_NAMES[k]} [{lu}]" for k in axes),
                *(f"pred. CG {AXIS_NAMES[k]} [{lu}]" for k in axes)):
        t.add_column(Text(col), justify="right")

    def row(label, b, style=None):
        t.add_row(Text(clean(label), style=style), f.m(b["basic_mass_kg"]), f.m(b["growth_kg"]),
                  _pct(b["growth_fraction"]), f.m(b["predicted_mass_kg"]),
                  *(f.l(b["basic_cg_m"][k]) for k in axes), *(f.l(b["predicted_cg_m"][k]) for k in axes))

    for b in g["groups"]:
        row(b["group"], b)
    row("total", g["total"], "bold")
    return t


def _allocation_table(allocations: list, du: DisplayUnits, f: _F) -> Table:
    mu = pretty_unit(du.mass)
    t = Table(title="Allocations (not-to-exceed)", title_justify="left")
    t.add_column(Text("group"))
    for col in (f"allocation [{mu}]", f"basic [{mu}]", f"predicted [{mu}]", f"margin [{mu}]"):
        t.add_column(Text(col), justify="right")
    t.add_column(Text("status"))
    for a in allocations:
        t.add_row(Text(clean(a["group"]) or "(whole vehicle)"), f.m(a["allocation_kg"]), f.m(a["basic_kg"]),
                  f.m(a["predicted_kg"]), f.m(a["margin_kg"]),
                  "within" if a["margin_kg"] >= 0 else "OVER")
    return t


def _uncertainty_tables(q: dict, mass: float, cg, du: DisplayUnits, f: _F) -> list[Table]:
    mu, lu = pretty_unit(du.mass), pretty_unit(du.length)
    t = Table(title="Uncertainty (σ: linear propagation; worst case: Σ|∂|·bound, sigma-kind as 3σ)",
              title_justify="left")
    for col in ("quantity", "nominal", "σ", "worst case ±"):
        t.add_column(Text(col), justify="left" if col == "quantity" else "right")
    t.add_row(Text(f"mass [{mu}]"), f.m(mass), f.m(q["sigma_mass_kg"]), f.m(q["worst_mass_kg"]))
    for k, a in enumerate(AXIS_NAMES):
        t.add_row(Text(f"CG {a} [{lu}]"), f.l(cg[k]), f.l(q["sigma_cg_m"][k]), f.l(q["worst_cg_m"][k]))
    out = [t]
    mc = q.get("monte_carlo")
    if mc:
        e = Table(title=f"Probability outside each envelope (Monte Carlo, {mc['samples']:,} samples, "
                        f"seed {mc['seed']})", title_justify="left")
        for col in ("envelope", "axis", "P(outside)", "standard error"):
            e.add_column(Text(col), justify="left" if col in ("envelope", "axis") else "right")
        for r in mc["envelopes"]:
            e.add_row(Text(clean(r["name"])), r["axis"], f"{r['p_outside']:.4f}",
                      f"{r['std_error']:.4f}" if r["p_outside"] > 0 else f"0 (< {3 / mc['samples']:.1e}, 95 %)")
        out.append(e)
    return out


def print_control(console: Console, ledger, state, display_units=None, *, samples: int = DEFAULT_SAMPLES,
                  seed: int = DEFAULT_SEED, record: dict | None = None) -> dict:
    """Print the control tables of `state`; nothing when the ledger has no growth,
    allocation or tolerance keys. Returns the record it printed (SI)."""
    rec = control_record(ledger, state, samples=samples, seed=seed) if record is None else record
    if not rec:
        return rec
    du = _units(ledger, display_units)
    from steelyard.core.physics.rollup import combined_cg

    mass, cg = combined_cg(state.mass, state.cg)
    f = _F(du, *_scale(rec, mass, cg))
    if rec.get("growth"):
        console.print(_growth_table(rec["growth"], du, console.width >= 120, f))
    if rec.get("allocations"):
        console.print(_allocation_table(rec["allocations"], du, f))
    q = rec.get("uncertainty")
    if q:
        for t in _uncertainty_tables(q, mass, cg, du, f):
            console.print(t)
        if q.get("monte_carlo"):
            console.print(Text(CAUTION, style="italic"))
    return rec
