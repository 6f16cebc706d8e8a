"""Burn and drop sequences: ordered steps applied to a loadout, sampled into a path of states.

A ``[[sequence]]`` starts from a loadout and lists ``[[sequence.step]]``
tables, each doing one thing:

- ``burn``: fuel (any variable item) drains *gradually*; ``{ fuel-l = "8 gal",
  fuel-r = "8 gal" }`` drains the tanks together at steady rates, a list plus
  ``amount`` splits the amount over the tanks in proportion to what each holds;
  one tank after another is two steps;
- ``remove``: items come off at once (a payload dropped, a passenger leaving,
  a removable part taken off);
- ``add``: items go on at once (ballast, a passenger boarding).

Only the few items a sequence touches change along it, so the path is built
from the loadout's roll-up without them (the "rest", one O(n) pass) plus
those k items: mass(t) and moment(t) are (p, k) array sums, never a (p, n)
fill matrix. Moments are taken about the loadout's CG so a far datum costs
no digits.

Sampling: a gradual step is sampled at ``samples`` even steps *plus* every
point where the path meets an envelope edge (solved exactly: within a piece
where each tank's CG table is linear, m·cg is quadratic in the step's
progress and each edge gives a quadratic) and halfway between such a point
and its neighbours. So an excursion outside an envelope, however brief, is
never stepped over.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from .errors import SteelyardError
from .loadout import CONDITIONS, fill_fractions, is_removable, loadout_condition, state_from_fill
from .model import Ledger
from .rollup import rollup_state
from .tank import tank_tables
from .units import UnitError, parse_quantity

DEFAULT_SAMPLES = 100
MAX_SAMPLES = 1_000_000
_SEQ_KEYS = {"name", "loadout", "end_condition", "samples", "step"}
_STEP_KEYS = {"name", "samples", "burn", "remove", "add", "amount"}
_TOL = 1e-9  # fraction of an item's capacity treated as rounding when checking what a tank holds


@dataclass(frozen=True)
class Step:
    """One step as applied: which path states it produced (inclusive)."""

    index: int  # 1-based
    kind: str  # "burn" | "remove" | "add"
    label: str
    items: tuple[str, ...]
    first: int
    last: int


@dataclass(frozen=True, eq=False)
class Path:
    """The states a sequence passes through, SI. State 0 is the loadout; step[i] says which step made state i."""

    name: str
    loadout: str
    start_condition: str
    end_condition: str | None
    steps: tuple[Step, ...]
    items: tuple[str, ...]  # the items that change, in order of first use
    fill: np.ndarray  # (p, k) their fill fractions
    mass: np.ndarray  # (p,)
    cg: np.ndarray  # (p, 3)
    step: np.ndarray  # (p,) 0 for the start
    progress: np.ndarray  # (p,) 0..1 within the step
    _inertia: object = field(repr=False, default=None)

    def __len__(self) -> int:
        return len(self.mass)

    def inertia(self) -> np.ndarray:
        """Inertia about each state's CG (p, 3, 3), computed on first use."""
        if not isinstance(self._inertia, np.ndarray):
            object.__setattr__(self, "_inertia", self._inertia())
        return self._inertia

    @property
    def tags(self) -> frozenset:
        """Scope tags every state of the path carries: its loadout and its sequence."""
        return frozenset((("loadout", self.loadout), ("sequence", self.name)))

    def conditions(self) -> dict[int, str]:
        """Conditions of particular states: the start's, and the end's when the sequence names one."""
        out = {0: self.start_condition}
        if self.end_condition is not None:
            out[len(self) - 1] = self.end_condition
        return out


# --------------------------------------------------------------------------- reading


@dataclass(frozen=True)
class _StepSpec:
    index: int
    kind: str
    label: str
    samples: int
    targets: tuple[tuple[str, object], ...]  # (item id, raw amount) ; remove: amount None
    total: object = None  # burn over a list of tanks: the raw amount to split


def _samples(raw, where: str, field: str, default: int) -> int:
    if raw is None:
        return default
    if type(raw) is not int or not (1 <= raw <= MAX_SAMPLES):
        raise SteelyardError(f"must be a whole number 1..{MAX_SAMPLES:,}, got {raw!r}", subject=where, field=field)
    return raw


def _read_step(raw, k: int, where: str, samples: int) -> _StepSpec:
    f = f"step {k}"
    if type(raw) is not dict:
        raise SteelyardError("must be a table", subject=where, field=f)
    unknown = sorted(set(raw) - _STEP_KEYS)
    if unknown:
        raise SteelyardError(f"unknown key {unknown[0]!r} (a step does one of burn, remove, add)", subject=where,
                             field=f"{f} {unknown[0]}")
    kinds = [x for x in ("burn", "remove", "add") if x in raw]
    if len(kinds) != 1:
        raise SteelyardError("a step does exactly one of burn, remove, add", subject=where, field=f)
    kind = kinds[0]
    label = raw.get("name", "")
    if type(label) is not str:
        raise SteelyardError(f"must be a string, got {label!r}", subject=where, field=f"{f} name")
    n = _samples(raw.get("samples"), where, f"{f} samples", samples)
    body = raw[kind]
    if "amount" in raw and not (kind == "burn" and isinstance(body, list)):
        raise SteelyardError("amount goes with burn = [tanks]: it is split over them", subject=where,
                             field=f"{f} amount")
    if isinstance(body, str):
        body = [body]
    if kind == "remove" or (kind == "burn" and isinstance(body, list)):
        if type(body) is not list or not body or not all(isinstance(x, str) for x in body):
            raise SteelyardError(f"must be a list of item ids, got {body!r}"[:160], subject=where, field=f"{f} {kind}")
        if kind == "burn" and "amount" not in raw:
            raise SteelyardError("burn = [tanks] needs amount = (a mass, a volume or \"all\")", subject=where,
                                 field=f"{f} amount")
        targets = tuple((x, None) for x in body)
        total = raw.get("amount")
    else:
        if type(body) is not dict or not body:
            raise SteelyardError(f"must be a table of item id = amount, got {body!r}"[:160], subject=where,
                                 field=f"{f} {kind}")
        targets, total = tuple(body.items()), None
    ids = [t[0] for t in targets]
    dup = sorted({x for x in ids if ids.count(x) > 1})
    if dup:
        raise SteelyardError(f"names item {dup[0]!r} twice", subject=where, field=f"{f} {kind}")
    return _StepSpec(k, kind, label or f"{kind} {', '.join(ids)}", n, targets, total)


@dataclass(frozen=True)
class SequenceSpec:
    name: str
    loadout: str
    end_condition: str | None
    steps: tuple[_StepSpec, ...]

    @property
    def subject(self) -> str:
        return f"sequence {self.name!r}"


def _read_sequence(raw, k: int, ledger: Ledger) -> SequenceSpec:
    if type(raw) is not dict:
        raise SteelyardError("must be a table", subject=f"sequence #{k}")
    name = raw.get("name")
    if type(name) is not str or not name.strip():
        raise SteelyardError("required: a non-empty string", subject=f"sequence #{k}", field="name")
    where = f"sequence {name!r}"
    unknown = sorted(set(raw) - _SEQ_KEYS)
    if unknown:
        raise SteelyardError(f"unknown key {unknown[0]!r} (known: {', '.join(sorted(_SEQ_KEYS))})", subject=where,
                             field=unknown[0])
    lo = raw.get("loadout")
    if type(lo) is not str:
        raise SteelyardError("required: the loadout the sequence starts from", subject=where, field="loadout")
    if lo not in {x.name for x in ledger.loadouts}:
        raise SteelyardError(f"no loadout named {lo!r}", subject=where, field="loadout")
    end = raw.get("end_condition")
    if end is not None and end not in CONDITIONS:
        raise SteelyardError(f"must be one of {', '.join(CONDITIONS)}, got {end!r}", subject=where,
                             field="end_condition")
    samples = _samples(raw.get("samples"), where, "samples", DEFAULT_SAMPLES)
    steps = raw.get("step")
    if type(steps) is not list or not steps:
        raise SteelyardError("has no steps: add [[sequence.step]] tables", subject=where, field="step")
    return SequenceSpec(name, lo, end, tuple(_read_step(s, j, where, samples) for j, s in enumerate(steps, 1)))


def _read_all(ledger: Ledger) -> tuple[SequenceSpec, ...]:
    raw = ledger.extra.get("sequence")
    if raw is None:
        return ()
    if type(raw) is not list:
        raise SteelyardError("must be an array of tables [[sequence]]", subject="sequence")
    out = tuple(_read_sequence(s, k, ledger) for k, s in enumerate(raw, 1))
    names = [s.name for s in out]
    for s in out:
        if names.count(s.name) > 1:
            raise SteelyardError("duplicate sequence name", subject=s.subject, field="name")
    return out


def sequence_specs(ledger: Ledger) -> tuple[SequenceSpec, ...]:
    cached = ledger.__dict__.get("_sequence_specs")
    if cached is None:
        cached = ledger.__dict__["_sequence_specs"] = _read_all(ledger)
    return cached


# --------------------------------------------------------------------------- amounts


def _amount_fraction(ledger: Ledger, row: int, raw, where: str, field: str) -> float:
    """A step amount as a fraction of the item's capacity: bare number = fraction, or a mass / volume."""
    item = ledger.items[row]
    full = item.mass * item.quantity
    if type(raw) is bool or raw is None:
        raise SteelyardError(f"must be a fraction, a mass or a volume, got {raw!r}", subject=where, field=field)
    if isinstance(raw, (int, float)):
        if not 0.0 <= raw <= 1.0:
            raise SteelyardError(f"fraction must be within 0..1, got {raw!r}", subject=where, field=field)
        return float(raw)
    if not isinstance(raw, str):
        raise SteelyardError(f"must be a fraction, a mass or a volume, got {raw!r}", subject=where, field=field)
    mass = _mass_of(ledger, row, raw, where, field)
    if full <= 0:
        raise SteelyardError(f"item {item.id!r} has no capacity (mass 0)", subject=where, field=field)
    return mass / full


def _mass_of(ledger: Ledger, row: int, text: str, where: str, field: str) -> float:
    try:
        m = parse_quantity(text, "mass")
    except UnitError:
        try:
            v = parse_quantity(text, "volume")
        except UnitError:
            raise SteelyardError(f"cannot read {text!r} as a mass or a volume", subject=where, field=field) from None
        density = ledger.items[row].density
        if density is None:
            raise SteelyardError(f"{text} needs a density on item {ledger.items[row].id!r}", subject=where,
                                 field=field) from None
        m = v * density
    if m < 0:
        raise SteelyardError(f"must not be negative, got {text!r}", subject=where, field=field)
    return m


def _row(ledger: Ledger, item_id: str, kind: str, where: str, field: str) -> int:
    i = ledger.index.get(item_id)
    if i is None:
        raise SteelyardError(f"names unknown item {item_id!r}", subject=where, field=field)
    item = ledger.items[i]
    if not item.variable and (kind == "burn" or not is_removable(item)):
        what = "burnt" if kind == "burn" else ("removed" if kind == "remove" else "added")
        hint = "" if kind == "burn" else " (or a fixed item marked removable = true)"
        raise SteelyardError(f"item {item_id!r} is fixed and cannot be {what}: name a variable item{hint}",
                             subject=where, field=field)
    return i


def _shown(ledger: Ledger, row: int, fraction: float) -> str:
    from .display import fmt
    from .units import from_si

    item = ledger.items[row]
    unit = ledger.units.mass
    return f"{fmt(from_si(fraction * item.mass * item.quantity, 'mass', unit), 2)} {unit}"


def _apply(ledger: Ledger, spec: _StepSpec, rows: dict[int, int], g: np.ndarray, where: str) -> np.ndarray:
    """The change of the k changing fills this step makes (new fill = g + change); validates amounts."""
    change = np.zeros_like(g)
    f = f"step {spec.index}"
    if spec.kind == "burn" and spec.total is not None:
        idx = [ledger.index[i] for i, _ in spec.targets]
        rs = [rows[i] for i in idx]
        a = ledger.arrays
        full = a.unit_mass[idx] * a.quantity[idx]
        have = g[rs] * full  # kg on board in each tank
        raw, field = spec.total, f"{f} amount"
        if raw == "all":
            take = have
        elif not isinstance(raw, str):
            raise SteelyardError(f"must be a mass, a volume or \"all\", got {raw!r}", subject=where, field=field)
        else:
            try:
                total, weights, dens = parse_quantity(raw, "mass"), have, np.ones(len(idx))
            except UnitError:
                try:
                    total = parse_quantity(raw, "volume")
                except UnitError:
                    raise SteelyardError(f"cannot read {raw!r} as a mass or a volume", subject=where,
                                         field=field) from None
                d = [ledger.items[i].density for i in idx]
                if any(x is None for x in d):
                    raise SteelyardError(f"{raw} needs a density on every tank named", subject=where,
                                         field=field) from None
                dens = np.array(d)
                weights = have / dens  # volume on board in each tank
            held = weights.sum()
            if total > held * (1 + _TOL):
                shown = _shown_mass(ledger, have.sum())
                raise SteelyardError(f"burns {raw}, more than the {shown} the tanks hold at that point",
                                     subject=where, field=field)
            take = (total * weights / held if held > 0 else np.zeros(len(idx))) * dens
        frac = np.divide(take, full, out=np.zeros(len(idx)), where=full > 0)
        change[rs] = -np.minimum(frac, g[rs])
        return change
    for item_id, raw in spec.targets:
        field = f"{f} {spec.kind}.{item_id}"
        r = rows[ledger.index[item_id]]
        i = ledger.index[item_id]
        fixed = not ledger.items[i].variable
        if spec.kind == "remove":
            if g[r] <= 0:
                raise SteelyardError(f"item {item_id!r} is not on board at that point", subject=where, field=field)
            change[r] = -g[r]
        elif spec.kind == "add":
            if fixed:
                if raw not in ("full", 1, 1.0):
                    raise SteelyardError(f"a removable item goes on whole: write {item_id} = \"full\"",
                                         subject=where, field=field)
                if g[r] >= 1:
                    raise SteelyardError(f"item {item_id!r} is already on board", subject=where, field=field)
                change[r] = 1.0 - g[r]
                continue
            d = 1.0 - g[r] if raw == "full" else _amount_fraction(ledger, i, raw, where, field)
            if g[r] + d > 1 + _TOL:
                raise SteelyardError(f"adds {raw}, more than item {item_id!r} has room for "
                                     f"({_shown(ledger, i, 1 - g[r])} at that point)", subject=where, field=field)
            change[r] = min(d, 1.0 - g[r])
        else:
            d = g[r] if raw == "all" else _amount_fraction(ledger, i, raw, where, field)
            if d > g[r] + _TOL:
                raise SteelyardError(f"burns {raw}, more than the {_shown(ledger, i, g[r])} item {item_id!r} "
                                     "holds at that point", subject=where, field=field)
            change[r] = -min(d, g[r])
    return change


def _shown_mass(ledger: Ledger, kg: float) -> str:
    from .display import fmt
    from .units import from_si

    return f"{fmt(from_si(kg, 'mass', ledger.units.mass), 2)} {ledger.units.mass}"


# --------------------------------------------------------------------------- the path


@dataclass(frozen=True, eq=False)
class _Movers:
    """The k items a sequence changes, SI, at full capacity."""

    rows: np.ndarray  # (k,)
    full: np.ndarray  # (k,) kg
    cg: np.ndarray  # (k, 3) m
    own: np.ndarray  # (k, 3, 3) own inertia at fill 1
    tables: tuple  # TankTable or None per mover

    @classmethod
    def of(cls, ledger: Ledger, rows: list[int]) -> "_Movers":
        a, tables = ledger.arrays, tank_tables(ledger)
        r = np.array(rows, dtype=np.intp)
        return cls(r, a.unit_mass[r] * a.quantity[r], a.cg[r], a.own[r] * a.quantity[r][:, None, None],
                   tuple(tables.get(i) for i in rows))

    def positions(self, fill: np.ndarray) -> np.ndarray:
        """CG of each mover at each state's fill (p, k, 3)."""
        pos = np.broadcast_to(self.cg, fill.shape + (3,)).copy()
        for j, t in enumerate(self.tables):
            if t is not None:
                pos[:, j] = t.at(fill[:, j])
        return pos

    def pieces(self, fill: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(c, d) per mover with cg = c + d·f on the table piece holding `fill` (k, 3) each."""
        c, d = self.cg.copy(), np.zeros_like(self.cg)
        for j, t in enumerate(self.tables):
            if t is not None:
                c[j], d[j] = t.linear_piece(float(fill[j]))
        return c, d


def _roots(qa: np.ndarray, qb: np.ndarray, qc: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Both real roots of qa t² + qb t + qc per row (NaN where none), in the stable form."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        disc = qb * qb - 4.0 * qa * qc
        q = -0.5 * (qb + np.copysign(np.sqrt(np.maximum(disc, 0.0)), qb))
        lin = qa == 0
        r1 = np.where(lin, -qc / qb, q / qa)
        r2 = np.where(lin, np.nan, qc / q)
        real = lin | (disc >= 0)
    return np.where(real, r1, np.nan), np.where(real, r2, np.nan)


def _edge_hits(env, lo: float, hi: float, m0: float, m1: float, s: np.ndarray) -> np.ndarray:
    """Progress values in [lo, hi] where mass m0 + m1 t, moment s0 + s1 t + s2 t² (about the
    reference point, on the envelope's axis) meet an edge of the envelope.

    A point is on the edge's line when (cg − xe)·dm − (m − me)·dx = 0; times m
    that is a quadratic in t. A root counts when it falls on the edge itself.
    """
    axis, verts = env
    xe, me = verts[:, 0], verts[:, 1]
    dx, dm = np.roll(xe, -1) - xe, np.roll(me, -1) - me
    s0, s1, s2 = s
    qa = s2 * dm - m1 * m1 * dx
    qb = (s1 - xe * m1) * dm - (2.0 * m0 * m1 - me * m1) * dx
    qc = (s0 - xe * m0) * dm - (m0 * m0 - me * m0) * dx
    t = np.concatenate(_roots(qa, qb, qc))
    edge = np.concatenate([np.arange(len(xe))] * 2)
    keep = np.isfinite(t) & (t >= lo) & (t <= hi)
    t, edge = t[keep], edge[keep]
    if not len(t):
        return t
    m = m0 + m1 * t
    with np.errstate(divide="ignore", invalid="ignore"):
        cg = (s0 + s1 * t + s2 * t * t) / m
        span_c, span_m = np.ptp(xe) or 1.0, np.ptp(me) or 1.0
        by_mass = np.abs(dm[edge]) / span_m >= np.abs(dx[edge]) / span_c
        u = np.where(by_mass, (m - me[edge]) / dm[edge], (cg - xe[edge]) / dx[edge])
    return t[(u >= -1e-9) & (u <= 1 + 1e-9)]


def _burn_progress(movers: _Movers, g: np.ndarray, change: np.ndarray, samples: int, m_rest: float,
                   c_ref: np.ndarray, envelopes) -> np.ndarray:
    """Progress values (0, 1] to sample a gradual step at: an even grid, every edge crossing, and midpoints."""
    grid = np.linspace(0.0, 1.0, samples + 1)[1:]
    if not envelopes:
        return grid
    cuts = [0.0, 1.0]
    for j, t in enumerate(movers.tables):
        if t is not None and change[j] != 0:
            b = (t.fraction - g[j]) / change[j]
            cuts.extend(b[(b > 0) & (b < 1)].tolist())
    cuts = np.unique(cuts)
    full, hits = movers.full, []
    for lo, hi in zip(cuts[:-1], cuts[1:]):
        c, d = movers.pieces(g + change * (0.5 * (lo + hi)))
        c = c - c_ref
        a, b = g[:, None], change[:, None]
        s0 = (full[:, None] * a * (c + a * d)).sum(axis=0)
        s1 = (full[:, None] * (b * c + 2.0 * a * b * d)).sum(axis=0)
        s2 = (full[:, None] * b * b * d).sum(axis=0)
        m0, m1 = m_rest + float(full @ g), float(full @ change)
        for axis, verts in envelopes:
            v = np.column_stack([verts[:, 0] - c_ref[axis], verts[:, 1]])
            hits.append(_edge_hits((axis, v), lo, hi, m0, m1, (s0[axis], s1[axis], s2[axis])))
    roots = np.concatenate(hits) if hits else np.zeros(0)
    roots = roots[(roots > 0) & (roots <= 1)]
    if not len(roots):
        return grid
    pts = np.unique(np.concatenate([grid, roots]))
    ext = np.concatenate([[0.0], pts])
    near = np.isin(ext, roots)
    pair = near[:-1] | near[1:]
    mids = 0.5 * (ext[:-1] + ext[1:])[pair]
    return np.unique(np.concatenate([pts, mids]))


def build_path(ledger: Ledger, name: str, envelopes: Sequence | None = None) -> Path:
    """The path of sequence `name`. `envelopes`: [(axis index, vertices (k, 2) SI)] whose edge
    crossings are sampled exactly; None: every envelope of the ledger."""
    specs = {s.name: s for s in sequence_specs(ledger)}
    if name not in specs:
        known = ", ".join(repr(x) for x in specs) or "none"
        raise SteelyardError(f"no sequence named {name!r} (sequences: {known})", field="--sequence")
    spec = specs[name]
    where = spec.subject
    if envelopes is None:
        from .limits import envelope_specs

        envelopes = [("xyz".index(e.axis), np.asarray(e.points, dtype=float)) for e in envelope_specs(ledger)]
    try:
        start = fill_fractions(ledger, spec.loadout)
        start_condition = loadout_condition(ledger, spec.loadout)
    except SteelyardError as exc:
        raise exc.located(subject=where, field="loadout")
    order: dict[int, int] = {}
    for st in spec.steps:
        for item_id, _ in st.targets:
            i = _row(ledger, item_id, st.kind, where, f"step {st.index} {st.kind}.{item_id}")
            order.setdefault(i, len(order))
    movers = _Movers.of(ledger, list(order))
    rest_fill = start.copy()
    rest_fill[movers.rows] = 0.0
    rest = rollup_state(state_from_fill(ledger, rest_fill))
    m_rest = rest.mass
    c_ref = rest.cg if m_rest > 0 else movers.cg[0].copy()

    g = start[movers.rows].copy()
    fills, step_no, progress, steps = [g[None, :]], [np.zeros(1, np.intp)], [np.zeros(1)], []
    count = 1
    for st in spec.steps:
        change = _apply(ledger, st, order, g, where)
        if st.kind == "burn":
            t = _burn_progress(movers, g, change, st.samples, m_rest, c_ref, envelopes)
        else:
            t = np.ones(1)
        f = np.clip(g[None, :] + t[:, None] * change[None, :], 0.0, 1.0)
        f[-1] = np.clip(g + change, 0.0, 1.0)  # the step ends exactly where its amounts say
        fills.append(f)
        step_no.append(np.full(len(t), st.index, np.intp))
        progress.append(t)
        steps.append(Step(st.index, st.kind, st.label, tuple(i for i, _ in st.targets), count, count + len(t) - 1))
        count += len(t)
        g = f[-1].copy()
    fill = np.concatenate(fills)
    full = movers.full
    pos = movers.positions(fill)
    mass = m_rest + fill @ full
    moment = np.einsum("pk,k,pkd->pd", fill, full, pos - c_ref)
    with np.errstate(divide="ignore", invalid="ignore"):
        cg = np.where(mass[:, None] > 0, c_ref + moment / mass[:, None], np.nan)

    def inertia() -> np.ndarray:
        d = pos - c_ref  # (p, k, 3)
        w = fill * full  # (p, k)
        eye = np.eye(3)
        own = np.einsum("pk,kab->pab", fill, movers.own)
        par = (np.einsum("pk,pkd,pkd->p", w, d, d)[:, None, None] * eye
               - np.einsum("pk,pka,pkb->pab", w, d, d))
        e = cg - c_ref
        shift = mass[:, None, None] * (np.einsum("pd,pd->p", e, e)[:, None, None] * eye
                                       - np.einsum("pa,pb->pab", e, e))
        out = rest.inertia_cg[None] + own + par - shift
        return 0.5 * (out + np.swapaxes(out, 1, 2))

    ids = tuple(ledger.items[i].id for i in order)
    return Path(spec.name, spec.loadout, start_condition, spec.end_condition, tuple(steps), ids, fill, mass, cg,
                np.concatenate(step_no), np.concatenate(progress), inertia)


def sequence_path(ledger: Ledger, name: str) -> Path:
    """The path of a sequence, its envelope crossings sampled exactly (for charts and checks)."""
    return build_path(ledger, name)
