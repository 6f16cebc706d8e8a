"""The four `steelyard solve` modes: read the options, call core.solvers, word the answer.

Each returns (JSON record in SI, lines of text in the file's units).
"""

from __future__ import annotations

import math

import numpy as np

from steelyard.core.display import DisplayUnits, pretty_unit
from steelyard.core.numbers import cell
from steelyard.core.errors import SteelyardError, UnitError, said
from steelyard.core.limits.rules import applies, envelope_specs, fuel_rows, limit_specs, mac_reference, zero_fuel_fill
from steelyard.core.loading.loadout import fill_fractions, loadout_condition, state_from_fill
from steelyard.core.document.model import Ledger
from steelyard.core.physics.rollup import check_finite_rollup, rollup_state
from steelyard.core.limits.solvers import add_mass, ballast_for_limit, ballast_to_enter, payload_remaining, weight_shift
from steelyard.core.limits.status import AXIS_INDEX, geometry
from steelyard.core.units import number_problem, parse_number, parse_quantity, to_si


class _Ctx:
    """The loadout's state and how to read and show numbers for it."""

    def __init__(self, ledger: Ledger, args):
        self.ledger, self.args = ledger, args
        self.axis = args.axis
        self.k = AXIS_INDEX[self.axis]
        self.fill = fill_fractions(ledger, args.loadout)
        self.mp = rollup_state(state_from_fill(ledger, self.fill, args.loadout))
        check_finite_rollup(self.mp, ledger)  # no answer from a roll-up beyond a float
        if not self.mp.mass > 0:
            raise SteelyardError("the loadout has no mass", field="--loadout")
        self.condition = loadout_condition(ledger, args.loadout)
        self.tags = {("condition", self.condition)} | ({("loadout", args.loadout)} if args.loadout else set())
        self.mac = mac_reference(ledger)
        self.du = DisplayUnits.choose(ledger.units, None)
        # one resolution per dimension for every figure of the answer (docs/numbers.md)
        self.dl = self.du.column_decimals([float(c) for c in self.mp.cg], "length")
        self.dm = self.du.column_decimals([self.mass], "mass")

    @property
    def mass(self) -> float:
        return float(self.mp.mass)

    @property
    def cg(self) -> float:
        return float(self.mp.cg[self.k])

    def length(self, text: str, option: str) -> float:
        t = str(text).strip()
        if t.lower().replace(" ", "").endswith("%mac"):
            if self.mac is None or self.axis != "x":
                raise SteelyardError("%MAC needs the file's [mac] table and the x axis", field=option)
            try:
                return float(self.mac.station(parse_number(t.lower().replace(" ", "")[:-4])))
            except UnitError as exc:
                raise SteelyardError(f"cannot read {said(text)} as a %MAC ({exc.message})", field=option) from None
        return self._value(t, "length", self.ledger.units.length, option)

    def mass_value(self, text: str, option: str) -> float:
        return self._value(str(text).strip(), "mass", self.ledger.units.mass, option)

    @staticmethod
    def _value(t: str, dimension: str, unit: str, option: str) -> float:
        """A bare number in the file's unit, or a number with its unit; strictly (core.units)."""
        try:
            if number_problem(t) is None or not any(ch.isalpha() or ch == "%" for ch in t):
                return to_si(parse_number(t), dimension, unit)
            return parse_quantity(t, dimension)
        except UnitError as exc:
            raise exc.located(field=option)

    def l(self, metres: float, cg: bool = False) -> str:  # noqa: E743 - a length, shown
        """A station or CG in display units; a CG on x also in %MAC."""
        text = f"{cell(self.du.l(metres), self.dl)} {pretty_unit(self.du.length)}"
        if cg and self.mac is not None and self.axis == "x" and math.isfinite(metres):
            text += f" ({float(self.mac.percent(metres)):.2f} %MAC)"
        return text

    def m(self, kg: float) -> str:
        return f"{cell(self.du.m(kg), self.dm)} {pretty_unit(self.du.mass)}"

    def envelopes(self, name: str | None):
        specs = [e for e in envelope_specs(self.ledger) if e.axis == self.axis and applies(e.applies_to, self.tags)]
        if name is not None:
            every = {e.name: e for e in envelope_specs(self.ledger)}
            if name not in every:
                raise SteelyardError(f"no envelope named {name!r} (envelopes: {', '.join(map(repr, every)) or 'none'})",
                                     field="--envelope")
            if every[name].axis != self.axis:
                raise SteelyardError(f"envelope {name!r} limits the {every[name].axis} axis; give --axis "
                                     f"{every[name].axis}", field="--envelope")
            specs = [every[name]]
        return specs

    def station(self) -> tuple[float, np.ndarray | None, int | None]:
        """(station on the axis, full position or None, item row or None) from --station or --item."""
        item = getattr(self.args, "item", None)
        if item is None:
            return self.length(self.args.station, "--station"), None, None
        i = self.ledger.index.get(item)
        if i is None:
            raise SteelyardError(f"no item {item!r}", field="--item")
        pos = np.asarray(self.ledger.items[i].cg, dtype=float)
        return float(pos[self.k]), pos, i

    def head(self) -> str:
        return f"now {self.m(self.mass)}, CG {self.axis} {self.l(self.cg, True)}"


def _shift(c: _Ctx) -> tuple[dict, list[str]]:
    a, b = c.length(c.args.from_station, "--from"), c.length(c.args.to_station, "--to")
    if c.args.target_cg is not None:
        target, why = c.length(c.args.target_cg, "--target-cg"), "the CG wanted"
    else:
        env = c.envelopes(c.args.envelope)[0]
        st = geometry(env.points, env.name).evaluate([c.cg], [c.mass])
        if not np.isfinite(st.lo[0]):
            raise SteelyardError(f"the mass is outside envelope {env.name!r}'s range; moving mass cannot help",
                                 field="--envelope")
        if st.inside[0]:
            return ({"mode": "shift", "moved_kg": 0.0, "target_cg_m": c.cg, "inside": True},
                    [c.head(), f"Already inside envelope {env.name!r}: nothing to move."])
        target = float(st.lo[0] if c.cg < st.lo[0] else st.hi[0])
        why = f"the nearer limit of envelope {env.name!r}"
    moved = weight_shift(c.mass, c.cg, target, a, b, units=c.ledger.units)
    rec = {"mode": "shift", "mass_kg": c.mass, "cg_m": c.cg, "axis": c.axis, "from_m": a, "to_m": b,
           "target_cg_m": target, "moved_kg": moved}
    return rec, [c.head(), f"Move {c.m(moved)} from {c.l(a)} to {c.l(b)}: the CG goes to {c.l(target, True)}, {why} "
                           "(mass moved / total mass = CG change / distance moved)."]


def _add(c: _Ctx) -> tuple[dict, list[str]]:
    w, s = c.mass_value(c.args.mass, "--mass"), c.length(c.args.station, "--station")
    if not c.mass + w > 0:  # worded here, in the file's units and as typed (the solver's message is in kg)
        raise SteelyardError(f"{said(c.args.mass)} removes {c.m(-w)}, and the loadout has {c.m(c.mass)}: "
                             "no mass would be left", field="--mass")
    new_mass, new_cg = add_mass(c.mass, c.cg, w, s, units=c.ledger.units)
    _finite(new_mass=new_mass, new_cg=new_cg)
    rec = {"mode": "add", "mass_kg": c.mass, "cg_m": c.cg, "axis": c.axis, "added_kg": w, "station_m": s,
           "new_mass_kg": new_mass, "new_cg_m": new_cg, "envelopes": []}
    lines = [c.head(), f"{'Add' if w >= 0 else 'Remove'} {c.m(abs(w))} at {c.l(s)}: mass {c.m(new_mass)}, "
                       f"CG {c.l(new_cg, True)} (moved {cell(c.du.l(new_cg - c.cg), c.dl)})."]
    for env in c.envelopes(None):
        st = geometry(env.points, env.name).evaluate([new_cg], [new_mass])
        inside = bool(st.inside[0])
        rec["envelopes"].append({"name": env.name, "inside": inside})
        lines.append(f"  envelope {env.name}: {'inside' if inside else 'OUTSIDE'} after the change")
    return rec, lines


def _room(c: _Ctx, row: int | None) -> float | None:
    """Mass a variable item can still take, kg (None for a bare station or a fixed item)."""
    if row is None or not c.ledger.items[row].variable:
        return None
    it = c.ledger.items[row]
    return (1.0 - float(c.fill[row])) * it.mass * it.quantity


def _ballast(c: _Ctx) -> tuple[dict, list[str]]:
    s, _, row = c.station()
    rec = {"mode": "ballast", "mass_kg": c.mass, "cg_m": c.cg, "axis": c.axis, "station_m": s, "answers": []}
    lines = [c.head()]
    if c.args.limit is not None:
        lim = c.length(c.args.limit, "--limit")
        b = ballast_for_limit(c.mass, c.cg, lim, s, units=c.ledger.units)
        answers = [(f"onto the limit {c.l(lim, True)}", b)]
        rec["limit_m"] = lim
    else:
        envs = c.envelopes(c.args.envelope)
        if not envs:
            raise SteelyardError(f"no envelope on the {c.axis} axis applies to this loadout; give --limit",
                                 field="--envelope")
        answers = [(f"inside envelope {e.name!r}", ballast_to_enter(geometry(e.points, e.name), c.mass, c.cg, s,
                                                                        units=c.ledger.units))
                   for e in envs]
    room = _room(c, row)
    for what, b in answers:
        new_mass, new_cg = add_mass(c.mass, c.cg, b, s, units=c.ledger.units)
        rec["answers"].append({"goal": what, "ballast_kg": b, "new_mass_kg": new_mass, "new_cg_m": new_cg})
        text = f"Ballast {c.m(b)} at {c.l(s)} brings the CG {what}: mass {c.m(new_mass)}, CG {c.l(new_cg, True)}."
        if b == 0:
            text = f"No ballast needed: already {what}."
        lines.append(text)
        if room is not None and b > room * (1 + 1e-12):
            lines.append(f"  CAUTION: more than item {c.args.item!r} can take ({c.m(room)} of room).")
        for spec in limit_specs(c.ledger):
            if spec.kind == "mass" and applies(spec.applies_to, c.tags) and np.isfinite(spec.hi[0]) \
                    and new_mass > spec.hi[0] * (1 + 1e-9):
                lines.append(f"  CAUTION: {c.m(new_mass)} is over limit {spec.name!r} ({c.m(float(spec.hi[0]))}).")
    if room is not None:
        rec["item_room_kg"] = room
    return rec, lines


def _payload(c: _Ctx) -> tuple[dict, list[str]]:
    s, pos, row = c.station()
    caps: list[tuple[str, float]] = []
    states = [("", c.mp, c.tags)]
    zf = zero_fuel_fill(c.ledger, c.fill)
    if zf is not None and row not in set(fuel_rows(c.ledger).tolist()):
        mz = rollup_state(state_from_fill(c.ledger, zf))
        check_finite_rollup(mz, c.ledger)
        tags = {("condition", "zero-fuel")} | ({("loadout", c.args.loadout)} if c.args.loadout else set())
        states.append((" at zero fuel", mz, tags))
    skipped = []
    for label, mp, tags in states:
        for env in envelope_specs(c.ledger):
            if not applies(env.applies_to, tags):
                continue
            k = AXIS_INDEX[env.axis]
            if pos is None and env.axis != c.axis:
                skipped.append(env.name)
                continue
            x = float(pos[k]) if pos is not None else s
            cap = payload_remaining([geometry(env.points, env.name)], None, mp.mass, float(mp.cg[k]), x,
                                    units=c.ledger.units)
            caps.append((f"envelope {env.name!r}{label}", cap))
        for spec in limit_specs(c.ledger):
            if spec.kind == "mass" and np.isfinite(spec.hi[0]) and applies(spec.applies_to, tags):
                caps.append((f"limit {spec.name!r}{label}", max(0.0, float(spec.hi[0]) - mp.mass)))
    room = _room(c, row)
    if room is not None:
        caps.append((f"the room left in item {c.args.item!r}", room))
    if not caps:
        raise SteelyardError("no envelope or mass limit applies to this loadout at that station")
    name, best = min(caps, key=lambda t: t[1])
    rec = {"mode": "payload", "mass_kg": c.mass, "cg_m": c.cg, "axis": c.axis, "station_m": s,
           "payload_kg": best, "limited_by": name, "each": [{"by": n, "kg": v} for n, v in caps]}
    lines = [c.head(), f"Up to {c.m(best)} more at {c.l(s)}; the first limit reached is {name}."]
    lines += [f"  {n}: {c.m(v)}" for n, v in caps]
    if skipped:
        lines.append(f"  not considered (the payload's {', '.join(a for a in 'xyz' if a != c.axis)} position is not "
                     f"known; give --item): {', '.join(sorted(set(skipped)))}")
    return rec, lines


_WORDS = {"new_mass": "the new mass", "new_cg": "the new CG", "moved_kg": "the mass to move",
          "ballast_kg": "the ballast", "payload_kg": "the payload", "new_mass_kg": "the new mass",
          "new_cg_m": "the new CG", "target_cg_m": "the target CG", "kg": "a mass limit"}


def _finite(**values) -> None:
    """An answer that overflowed (1e308 lb at 1e308 in) is refused, not printed as "CG inf in"."""
    for key, v in values.items():
        if isinstance(v, dict):
            _finite(**v)
        elif isinstance(v, (list, tuple)):
            for x in v:
                _finite(**(x if isinstance(x, dict) else {key: x}))
        elif isinstance(v, float) and not math.isfinite(v):
            raise SteelyardError(f"{_WORDS.get(key, key)} comes out as {v}: the values given are too large "
                                 "to compute with")


def solve(ledger: Ledger, args) -> tuple[dict, list[str]]:
    c = _Ctx(ledger, args)
    # huge inputs may overflow inside the solvers; the answer is checked below instead of warned about
    with np.errstate(over="ignore", invalid="ignore", divide="ignore", under="ignore"):
        rec, lines = {"shift": _shift, "add": _add, "ballast": _ballast, "payload": _payload}[args.mode](c)
    _finite(**rec)
    rec["loadout"] = args.loadout
    return rec, lines
