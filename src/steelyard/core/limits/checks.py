"""The whole check of a ledger: every loadout (and its zero-fuel state) and every sequence
against every envelope and limit that applies to it.

Each check gives a `Finding`: whether it applies, whether it holds, the value,
the allowed range and the margins (SI). A state above an envelope's mass range
lies outside the polygon, so that envelope is broken for it, unless the
envelope's ``conditions`` / ``loadouts`` / ``sequences`` leave that state out (docs/check.md). Loadout
states are evaluated together, one `evaluate` per envelope; a sequence's path
is evaluated the same way, one call per envelope over all its states.

Each `[[allocation]]` (a group's not-to-exceed mass, core.control.growth) is
checked on the group's predicted mass (basic + growth allowance, the practice
of ANSI/AIAA S-120A-2015) at the checked loadout that loads the group most.

A roll-up whose figures overflow a float is refused (SteelyardError naming the
item and field), never reported as a state that meets its limits.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from steelyard.core.control.growth import allocation_margins, growth_fractions
from steelyard.core.errors import SteelyardError, item_subject
from steelyard.core.limits.rules import (REL_TOL, EnvelopeSpec, LimitSpec, MacRef, applies, envelope_specs, evaluate_limit,
                     fuel_rows, limit_specs, mac_reference, needs_inertia, said, zero_fuel_fill)
from steelyard.core.loading.loadout import fill_fractions, is_removable, loadout_condition, state_from_fill
from steelyard.core.document.model import Ledger
from steelyard.core.physics.rollup import check_finite_rollup, rollup_state
from steelyard.core.loading.sequence import sequence_specs
from steelyard.core.loading.sequence_path import Path, Step, build_path
from steelyard.core.limits.status import AXIS_INDEX, geometry
from steelyard.core.loading.tank import tank_tables


def _opt(x) -> float | None:
    x = float(x)
    return x if np.isfinite(x) else None


@dataclass(frozen=True)
class Finding:
    """One envelope or limit against one state, or the worst state of a path (SI)."""

    kind: str  # "envelope" | "mass" | "inertia" | "cg-offset"
    name: str
    dimension: str  # of value, limits and margins: "length" | "mass" | "inertia"
    applies: bool
    ok: bool  # True when it does not apply
    value: float | None = None  # CG on the axis, mass, inertia component, CG offset
    lo: float | None = None  # allowed range (None: no bound there, or off the envelope's mass range)
    hi: float | None = None
    margin: float | None = None  # the nearer side, negative when broken
    margin_lo: float | None = None
    margin_hi: float | None = None
    axis: str | None = None  # envelope axis; the line's axis (cg-offset); the component (inertia)
    mass_margin: float | None = None  # envelope: kg more at this CG before its edge
    note: str = ""  # envelope: "above range" / "below range" when the mass is off the envelope's mass range
    state: int | None = None  # path: the state with the least margin
    step: int | None = None  # path: the step that produced it (0: the start)
    first_broken_step: int | None = None
    last_broken_step: int | None = None
    broken_states: int = 0


@dataclass(frozen=True)
class StateCheck:
    name: str  # the loadout, or "<loadout> (zero fuel)"
    loadout: str | None
    kind: str  # "loadout" | "zero-fuel"
    condition: str
    mass: float
    cg: tuple[float, float, float]
    percent_mac: float | None
    findings: tuple[Finding, ...]

    @property
    def ok(self) -> bool:
        return all(f.ok for f in self.findings)


@dataclass(frozen=True)
class SequenceCheck:
    name: str
    loadout: str
    steps: tuple[Step, ...]
    path: Path
    findings: tuple[Finding, ...]

    @property
    def ok(self) -> bool:
        return all(f.ok for f in self.findings)


@dataclass(frozen=True)
class AllocationCheck:
    """One `[[allocation]]` against its group's predicted mass, at the checked loadout that loads it most (SI)."""

    group: str  # "" for the whole vehicle
    loadout: str | None  # that loadout (None: no loadouts, variable items empty)
    allocation: float  # the not-to-exceed mass
    basic: float
    predicted: float  # basic + growth allowance
    margin: float  # allocation − predicted: negative when broken

    @property
    def ok(self) -> bool:
        """Predicted at or below the not-to-exceed (on it is within, to rounding)."""
        return self.margin >= -REL_TOL * self.allocation


@dataclass(frozen=True)
class CheckReport:
    states: tuple[StateCheck, ...]
    sequences: tuple[SequenceCheck, ...]
    mac: MacRef | None
    allocations: tuple[AllocationCheck, ...] = ()

    @property
    def ok(self) -> bool:
        return (all(s.ok for s in self.states) and all(s.ok for s in self.sequences)
                and all(a.ok for a in self.allocations))

    @property
    def counts(self) -> tuple[int, int]:
        """(checks that apply, checks broken); each allocation is one check."""
        every = [f.ok for s in (*self.states, *self.sequences) for f in s.findings if f.applies]
        every += [a.ok for a in self.allocations]
        return len(every), sum(not ok for ok in every)


# --------------------------------------------------------------------------- one batch of states


def _range_note(mass: float, g) -> str:
    lo, hi = g.mass_range
    if mass > hi + g.tol_mass:
        return "above range"
    if mass < lo - g.tol_mass:
        return "below range"
    return ""


def _envelope_finding(env: EnvelopeSpec, st, g, i: int, cg: float, mass: float, applies_here: bool,
                      extra: dict) -> Finding:
    if not applies_here:
        return Finding("envelope", env.name, "length", False, True, axis=env.axis)
    return Finding("envelope", env.name, "length", True, bool(st.inside[i]), _opt(cg), _opt(st.lo[i]),
                   _opt(st.hi[i]), _opt(st.margin[i]), _opt(st.margin_lo[i]), _opt(st.margin_hi[i]), env.axis,
                   _opt(st.mass_margin[i]), _range_note(mass, g), **extra)


def _limit_finding(spec: LimitSpec, ls, i: int, applies_here: bool, extra: dict) -> Finding:
    axis = "xyz"[spec.axis] if spec.kind == "cg-offset" else None
    if not applies_here:
        return Finding(spec.kind, spec.name, spec.dimension, False, True, axis=axis)
    if spec.kind == "inertia":
        axis = spec.components[int(ls.component[i])]
    return Finding(spec.kind, spec.name, spec.dimension, True, bool(ls.ok[i]), _opt(ls.value[i]), _opt(ls.lo[i]),
                   _opt(ls.hi[i]), _opt(ls.margin[i]), _opt(ls.margin_lo[i]), _opt(ls.margin_hi[i]), axis, **extra)


def _relative(ls) -> np.ndarray:
    """Limit margins as fractions of their bound, to rank states; an undefined value ranks worst."""
    scale = np.fmax(np.abs(ls.lo), np.abs(ls.hi))
    score = ls.margin / np.where(scale > 0, scale, 1.0)
    return np.where(np.isnan(ls.value), -np.inf, np.where(np.isnan(score), np.inf, score))


# --------------------------------------------------------------------------- loadouts


@dataclass(frozen=True)
class _State:
    name: str
    loadout: str | None
    kind: str
    condition: str
    tags: frozenset
    mass: float
    cg: np.ndarray
    inertia: np.ndarray
    rows: np.ndarray | None = None  # each row's mass as carried (loadout states only)


def _frozen_loadout(ledger: Ledger) -> tuple[str | None, str | None] | None:
    """(loadout, condition) a snapshot froze, as its [snapshot] record names them; None for a ledger."""
    record = ledger.snapshot
    if not isinstance(record, dict):
        return None
    lo, cond = record.get("loadout"), record.get("condition")
    return (lo if isinstance(lo, str) else None, cond if cond in ("ramp", "takeoff", "landing") else None)


def _tags(ledger: Ledger, name: str | None, cond: str) -> tuple[str, frozenset]:
    """(condition, scope tags) of a loadout's state, as `read_scope` names states."""
    frozen = _frozen_loadout(ledger) if name is None else None
    if frozen is not None:  # a snapshot is its loadout's state: scopes apply as they did in the source
        cond = frozen[1] or cond
    as_loadout = name if frozen is None else frozen[0]
    return cond, frozenset([("condition", cond)] + ([("loadout", as_loadout)] if as_loadout is not None else []))


def _loadout_states(ledger: Ledger, names: list[str | None]) -> list[_State]:
    out = []
    for name in names:
        where = None if name is None else f"loadout {said(name)}"
        try:
            fill = fill_fractions(ledger, name)
            cond = loadout_condition(ledger, name)
        except SteelyardError as exc:
            raise exc.located(subject=where)
        label = name if name is not None else "(no loadout)"
        state = state_from_fill(ledger, fill, name)
        mp = rollup_state(state)
        check_finite_rollup(mp, ledger)
        cond, tags = _tags(ledger, name, cond)
        out.append(_State(label, name, "loadout", cond, tags, mp.mass, mp.cg, mp.inertia_cg, state.mass))
        zf = zero_fuel_fill(ledger, fill)
        if zf is not None:
            mz = rollup_state(state_from_fill(ledger, zf, name))
            check_finite_rollup(mz, ledger)
            ztags = frozenset([("condition", "zero-fuel")] + ([("loadout", name)] if name is not None else []))
            out.append(_State(f"{label} (zero fuel)", name, "zero-fuel", "zero-fuel", ztags, mz.mass, mz.cg,
                              mz.inertia_cg))
    return out


def _check_states(ledger: Ledger, states: list[_State], mac: MacRef | None) -> tuple[StateCheck, ...]:
    if not states:
        return ()
    mass = np.array([s.mass for s in states])
    cg = np.array([s.cg for s in states]).reshape(-1, 3)
    inertia = np.array([s.inertia for s in states]).reshape(-1, 3, 3)
    rows: list[list[Finding]] = [[] for _ in states]
    for env in envelope_specs(ledger):
        mask = [applies(env.applies_to, s.tags) for s in states]
        g = geometry(env.points, env.name)
        c = cg[:, AXIS_INDEX[env.axis]]
        st = g.evaluate(c, mass)
        for i, s in enumerate(states):
            rows[i].append(_envelope_finding(env, st, g, i, c[i], s.mass, mask[i], {}))
    for spec in limit_specs(ledger):
        mask = [applies(spec.applies_to, s.tags) for s in states]
        ls = evaluate_limit(spec, mass, cg, inertia)
        for i in range(len(states)):
            rows[i].append(_limit_finding(spec, ls, i, mask[i], {}))
    out = []
    for s, found in zip(states, rows):
        pm = None if mac is None or not np.isfinite(s.cg[0]) else float(mac.percent(s.cg[0]))
        out.append(StateCheck(s.name, s.loadout, s.kind, s.condition, s.mass, tuple(map(float, s.cg)), pm,
                              tuple(found)))
    return tuple(out)


# --------------------------------------------------------------------------- sequences


def _path_mask(scope, path: Path) -> np.ndarray:
    p = len(path)
    if applies(scope, path.tags):
        return np.ones(p, bool)
    mask = np.zeros(p, bool)
    for i, cond in path.conditions().items():
        mask[i] = ("condition", cond) in scope
    return mask


def _worst(score: np.ndarray, mask: np.ndarray) -> int:
    """The applicable state with the least margin (broken states have negative margins)."""
    return int(np.argmin(np.where(mask, score, np.inf)))


def _path_extra(path: Path, ok: np.ndarray, mask: np.ndarray, i: int) -> dict:
    broken = mask & ~ok
    first = last = None
    if broken.any():
        where = np.flatnonzero(broken)
        first, last = int(path.step[where[0]]), int(path.step[where[-1]])
    return {"state": i, "step": int(path.step[i]), "first_broken_step": first, "last_broken_step": last,
            "broken_states": int(broken.sum())}


def _refuse_overflow(ledger: Ledger, path: Path, what: str) -> None:
    """A path state beyond a float: name the moving item with the largest mass × CG term."""
    rows = [ledger.index[i] for i in path.items]
    a = ledger.arrays
    with np.errstate(divide="ignore", over="ignore"):
        term = np.log10(a.unit_mass[rows] * a.quantity[rows]) + np.log10(np.abs(a.cg[rows]).max(axis=1))
    k = int(np.argmax(term)) if len(rows) else 0
    size = f" (mass × CG about 1e{term[k]:.0f} kg·m)" if len(rows) and np.isfinite(term[k]) else ""
    subject = item_subject(path.items[k]) if len(rows) else f"sequence {said(path.name)}"
    raise SteelyardError(f"too large: along sequence {said(path.name)} the {what} overflows in SI units{size}",
                         subject=subject, field="cg")


def check_finite_path(ledger: Ledger, path: Path, inertia: np.ndarray | None = None) -> None:
    """Refuse a sequence path with a state (or, given, an inertia) beyond a float, naming the item."""
    with np.errstate(invalid="ignore"):
        bad = ~np.isfinite(path.mass) | ((path.mass > 0) & ~np.isfinite(path.cg).all(axis=1))
    if bad.any():
        _refuse_overflow(ledger, path, "roll-up")
    if inertia is not None and not np.isfinite(inertia[path.mass > 0]).all():
        _refuse_overflow(ledger, path, "inertia tensor")


def _check_path(ledger: Ledger, path: Path) -> tuple[Finding, ...]:
    specs = limit_specs(ledger)
    inertia = path.inertia() if needs_inertia(specs) else None
    check_finite_path(ledger, path, inertia)
    out = []
    for env in envelope_specs(ledger):
        mask = _path_mask(env.applies_to, path)
        if not mask.any():
            out.append(Finding("envelope", env.name, "length", False, True, axis=env.axis))
            continue
        g = geometry(env.points, env.name)
        c = path.cg[:, AXIS_INDEX[env.axis]]
        st = g.evaluate(c, path.mass)
        i = _worst(np.where(np.isnan(st.margin), -np.inf, st.margin), mask)
        out.append(_envelope_finding(env, st, g, i, c[i], float(path.mass[i]), True,
                                     _path_extra(path, st.inside, mask, i)))
    for spec in specs:
        mask = _path_mask(spec.applies_to, path)
        if not mask.any():
            out.append(_limit_finding(spec, None, 0, False, {}))
            continue
        ls = evaluate_limit(spec, path.mass, path.cg, inertia)
        i = _worst(_relative(ls), mask)
        out.append(_limit_finding(spec, ls, i, True, _path_extra(path, ls.ok, mask, i)))
    return tuple(out)


# --------------------------------------------------------------------------- allocations


def _check_allocations(ledger: Ledger, states: list[_State]) -> tuple[AllocationCheck, ...]:
    """Each allocation on its group's predicted mass, at the loadout state that loads the group most.

    Predicted = basic × (1 + growth allowance) per item, summed over the group
    and its subgroups (core.control.growth.allocation_margins); a group made
    only of fixed items has the same figure in every loadout.
    """
    loaded = [s for s in states if s.rows is not None]
    if not ledger.allocations or not loaded:
        return ()
    fractions = growth_fractions(ledger)
    worst: dict[str, AllocationCheck] = {}
    for s in loaded:
        for a in allocation_margins(ledger, s.rows, fractions):
            held = worst.get(a["group"])
            if held is None or a["margin_kg"] < held.margin:
                worst[a["group"]] = AllocationCheck(a["group"], s.loadout, a["allocation_kg"], a["basic_kg"],
                                                    a["predicted_kg"], a["margin_kg"])
    return tuple(worst.values())


# --------------------------------------------------------------------------- the whole ledger


def validate(ledger: Ledger) -> None:
    """Read every key the checks use, so bad input fails before any figure is shown."""
    mac_reference(ledger)
    fuel_rows(ledger)
    envelope_specs(ledger)
    limit_specs(ledger)
    sequence_specs(ledger)
    tank_tables(ledger)
    for it in ledger.items:
        if it.removable:
            is_removable(it)


def check_rollup(ledger: Ledger, name: str | None, mp) -> StateCheck:
    """One loadout's state, already rolled up (`mp`), checked exactly as `check_ledger` checks it.

    For whoever already holds the roll-up (the editor repaints on every edit):
    the same scope rules and findings as `steelyard check`, without rolling
    the ledger up again. Its zero-fuel state and sequences are not included.
    """
    try:
        cond = loadout_condition(ledger, name)
    except SteelyardError as exc:
        raise exc.located(subject=None if name is None else f"loadout {said(name)}")
    check_finite_rollup(mp, ledger)
    cond, tags = _tags(ledger, name, cond)
    label = name if name is not None else "(no loadout)"
    state = _State(label, name, "loadout", cond, tags, mp.mass, mp.cg, mp.inertia_cg)
    return _check_states(ledger, [state], mac_reference(ledger))[0]


def check_ledger(ledger: Ledger, loadout: str | None = None) -> CheckReport:
    """Check every loadout and sequence (or one loadout and the sequences that start from it)."""
    validate(ledger)
    mac = mac_reference(ledger)
    if loadout is not None:
        known = [lo.name for lo in ledger.loadouts]
        if loadout not in known:
            names = ", ".join(repr(n) for n in known) or "none"
            raise SteelyardError(f"no loadout named {said(loadout)} (loadouts: {names})", field="--loadout")
        names: list[str | None] = [loadout]
    else:
        names = [lo.name for lo in ledger.loadouts] or [None]
    loaded = _loadout_states(ledger, names)
    states = _check_states(ledger, loaded, mac)
    allocations = _check_allocations(ledger, loaded)
    seqs = []
    for spec in sequence_specs(ledger):
        if loadout is not None and spec.loadout != loadout:
            continue
        path = build_path(ledger, spec.name)
        seqs.append(SequenceCheck(spec.name, spec.loadout, path.steps, path, _check_path(ledger, path)))
    return CheckReport(states, tuple(seqs), mac, allocations)
