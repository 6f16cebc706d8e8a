"""A sequence sampled into a path of states (mass, CG, and inertia on demand), all as arrays.

Only the few items a sequence touches change along it, so the path is built
from the loadout's roll-up without them (the "rest", one O(n) pass) plus
those k items: mass(t) and moment(t) are (p, k) array sums, never a (p, n)
fill matrix. Moments are taken about the rest's CG so a far datum costs no
digits.

Sampling: a gradual step (a burn) is sampled at ``samples`` even steps *plus*
every point where the path meets an envelope edge, solved exactly (within a
piece where each tank's CG table is linear, m·cg is quadratic in the step's
progress, and each edge gives a quadratic), plus halfway between such a point
and its neighbours. So an excursion outside an envelope, however brief, is
never stepped over. An instant step (remove, add) gives one state.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from steelyard.core.errors import SteelyardError
from steelyard.core.loading.loadout import fill_fractions, loadout_condition, state_from_fill
from steelyard.core.document.model import Ledger
from steelyard.core.physics.rollup import rollup_state
from steelyard.core.quadratic import quadratic_roots
from steelyard.core.loading.sequence import sequence_specs, step_change, step_row
from steelyard.core.loading.tank import tank_tables


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
    t = np.concatenate(quadratic_roots(qa, qb, qc))
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
        from steelyard.core.limits.rules import envelope_specs

        envelopes = [("xyz".index(e.axis), np.asarray(e.points, dtype=float)) for e in envelope_specs(ledger)]
    try:
        start = fill_fractions(ledger, spec.loadout)
        start_condition = loadout_condition(ledger, spec.loadout)
    except SteelyardError as exc:
        raise exc.located(subject=where, field="loadout")
    order: dict[int, int] = {}
    for st in spec.steps:
        for item_id, _ in st.targets:
            i = step_row(ledger, item_id, st.kind, where, f"step {st.index} {st.kind}.{item_id}")
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
        change = step_change(ledger, st, order, g, where)
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
