"""CG envelopes as polygons in the (cg, mass) plane, evaluated for many states at once.

An envelope is a simple polygon of (cg [m], mass [kg]) vertices. For each
loading state we want: is it inside (the boundary counts as inside), which CG
range is allowed at its mass (the chord of the polygon at that mass), how far
the CG is from the nearer limit, and how much mass could still be added at the
same CG. A burn or drop sequence is thousands of states, so everything is
computed with numpy arrays over all states at once; nothing loops over
states. Between two vertex masses the polygon's crossing edges and their
order never change, so they are sorted once per envelope and each state only
looks up its band; states exactly on a vertex mass take a general
(states × edges) path.

Rounding: a state within ``REL_TOL`` × the envelope's span of the boundary
(CG span on the CG axis, mass span on the mass axis) counts as on it, so a
loading computed in pounds and inches that lands exactly on a limit is inside.
See docs/envelopes.md for the exact rules.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from steelyard.core.errors import SteelyardError

#: Boundary tolerance, as a fraction of the envelope's span on each axis.
REL_TOL = 1e-9


# --------------------------------------------------------------------------- validation


def _as_array(points) -> np.ndarray | str:
    try:
        p = np.asarray(points, dtype=float)
    except (TypeError, ValueError):
        return "points must be numbers: a list of [cg, mass] pairs"
    if p.ndim != 2 or p.shape[1] != 2:
        return "points must be a list of [cg, mass] pairs"
    return p


def _seg_dist(p: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Distance from points p to segments a-b (broadcast over leading axes)."""
    ab = b - a
    den = np.einsum("...i,...i->...", ab, ab)
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.einsum("...i,...i->...", p - a, ab) / den
    t = np.clip(np.nan_to_num(t, nan=0.0), 0.0, 1.0)
    d = p - (a + t[..., None] * ab)
    return np.sqrt(np.einsum("...i,...i->...", d, d))


def _cross(o: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    return (a[..., 0] - o[..., 0]) * (b[..., 1] - o[..., 1]) - (a[..., 1] - o[..., 1]) * (b[..., 0] - o[..., 0])


def envelope_problem(points) -> str | None:
    """Why these vertices are not a usable envelope, or None if they are.

    Needs at least 3 finite points with mass > 0, no zero-length edge, a
    non-zero area, and a simple outline: edges that are not neighbours must
    not cross or touch, and neighbours must not fold back onto each other.
    The outline may be given open or closed (last point equal to the first).
    Point numbers in messages count from 1, in the order given.
    """
    p = _as_array(points)
    if isinstance(p, str):
        return p
    bad = ~np.isfinite(p).all(axis=1)
    if bad.any():
        return f"point {int(np.argmax(bad)) + 1} is not a finite number"
    if len(p) >= 2 and np.array_equal(p[0], p[-1]):
        p = p[:-1]
    k = len(p)
    if k < 3:
        return f"an envelope needs at least 3 points, got {k}"
    low = p[:, 1] <= 0
    if low.any():
        return f"point {int(np.argmax(low)) + 1} has a mass <= 0; masses must be positive"
    with np.errstate(over="ignore", invalid="ignore"):
        span = np.ptp(p, axis=0)
        extent = span[0] * span[1]  # the bounding box's area bounds every cross product of the outline
    if not (np.isfinite(span).all() and np.isfinite(extent)):
        (c0, m0), (c1, m1) = p.min(axis=0), p.max(axis=0)
        return (f"too large: the outline runs from {c0:.6g} to {c1:.6g} m and from {m0:.6g} to {m1:.6g} kg; "
                "its area overflows in SI units")
    if (span == 0).any():
        return "all points lie on one line: the envelope has no area"
    q = (p - p.min(axis=0)) / span  # unit box: one tolerance fits both axes
    sv = np.linalg.svd(q - q.mean(axis=0), compute_uv=False)
    if sv[-1] <= REL_TOL * sv[0]:
        return "all points lie on one line: the envelope has no area"
    a, b = q, np.roll(q, -1, axis=0)
    n = lambda i: i % k + 1  # noqa: E731 - 1-based point number
    short = np.hypot(*(b - a).T) <= REL_TOL
    if short.any():
        i = int(np.argmax(short))
        return f"points {n(i)} and {n(i + 1)} are the same: zero-length edge"
    # Neighbouring edges i and i+1 share point i+1; they overlap if either far end lies on the other.
    a2, b2 = np.roll(a, -1, axis=0), np.roll(b, -1, axis=0)
    fold = (_seg_dist(a, a2, b2) <= REL_TOL) | (_seg_dist(b2, a, b) <= REL_TOL)
    if fold.any():
        i = int(np.argmax(fold))
        return f"the edges meeting at point {n(i + 1)} fold back onto each other"
    i, j = np.triu_indices(k, 2)
    keep = ~((i == 0) & (j == k - 1))
    i, j = i[keep], j[keep]
    if len(i):
        p1, p2, p3, p4 = a[i], b[i], a[j], b[j]
        o1, o2 = _cross(p1, p2, p3), _cross(p1, p2, p4)
        o3, o4 = _cross(p3, p4, p1), _cross(p3, p4, p2)
        proper = (o1 * o2 < 0) & (o3 * o4 < 0)
        near = np.minimum.reduce([_seg_dist(p3, p1, p2), _seg_dist(p4, p1, p2),
                                  _seg_dist(p1, p3, p4), _seg_dist(p2, p3, p4)]) <= REL_TOL
        hit = proper | near
        if hit.any():
            h = int(np.argmax(hit))
            return (f"the outline crosses or touches itself: edge {n(i[h])}-{n(i[h] + 1)} "
                    f"meets edge {n(j[h])}-{n(j[h] + 1)}")
    area = 0.5 * np.sum(a[:, 0] * b[:, 1] - b[:, 0] * a[:, 1])
    if abs(area) <= REL_TOL:
        return "the envelope has no area"
    return None


# --------------------------------------------------------------------------- geometry


@dataclass(frozen=True, eq=False)
class EnvelopeStatus:
    """Per-state envelope figures (one array entry per state), SI.

    inside: in the polygon, boundary included. lo, hi: the allowed CG range at
    the state's mass (NaN outside the envelope's mass range). margin: signed
    distance to the nearer of lo, hi (>= 0 inside, < 0 outside). margin_lo =
    cg − lo, margin_hi = hi − cg. mass_margin: mass that can be added at the
    same CG before the envelope's edge is reached (>= 0 inside; <= 0 outside,
    minus the excess when the state is above the envelope at its CG; NaN when
    no part of the envelope lies at or below it at that CG).
    """

    inside: np.ndarray
    lo: np.ndarray
    hi: np.ndarray
    margin: np.ndarray
    margin_lo: np.ndarray
    margin_hi: np.ndarray
    mass_margin: np.ndarray

    def __len__(self) -> int:
        return len(self.inside)


def _general_pieces(x0, y0, x1, y1, level, tol_pos):
    """The polygon's slice along each line y = level[i], for lines through vertex levels.

    Returns (plo, phi), each (n, J): sorted pieces, an entry repeated for
    every raw interval it merged (padding: +inf). The slice of the closed
    polygon is the union of the slices just above and just below the line,
    each found with a half-open crossing rule so a vertex is counted once; a
    horizontal edge on the line is always covered by one of the two.
    """
    k = len(x0)
    lv = level[:, None]
    dy = y1 - y0
    with np.errstate(divide="ignore", invalid="ignore"):
        x = x0 + (lv - y0) / dy * (x1 - x0)
    x = np.where(lv == y0, x0, np.where(lv == y1, x1, x))  # exact at vertices
    ymin, ymax = np.minimum(y0, y1), np.maximum(y0, y1)
    above = (ymin <= lv) & (lv < ymax)
    below = (ymin < lv) & (lv <= ymax)
    xa = np.sort(np.where(above, x, np.inf), axis=1)
    xb = np.sort(np.where(below, x, np.inf), axis=1)
    m = 2 * (k // 2)
    lo = np.concatenate([xa[:, 0:m:2], xb[:, 0:m:2]], axis=1)
    hi = np.concatenate([xa[:, 1:m:2], xb[:, 1:m:2]], axis=1)
    hi = np.where(np.isinf(lo), -np.inf, hi)
    order = np.argsort(lo, axis=1, kind="stable")
    lo = np.take_along_axis(lo, order, axis=1)
    hi = np.take_along_axis(hi, order, axis=1)
    run = np.maximum.accumulate(hi, axis=1)
    prev = np.concatenate([np.full((len(lo), 1), -np.inf), run[:, :-1]], axis=1)
    start = lo > prev + tol_pos  # a gap wider than the tolerance starts a new piece
    plo = np.maximum.accumulate(np.where(start, lo, -np.inf), axis=1)
    end = np.concatenate([start[:, 1:], np.ones((len(lo), 1), bool)], axis=1)
    phi = np.minimum.accumulate(np.where(end, run, np.inf)[:, ::-1], axis=1)[:, ::-1]
    return plo, phi


def _snap(value: np.ndarray, levels: np.ndarray, tol: float) -> tuple[np.ndarray, np.ndarray]:
    """Values within tol of a vertex level moved onto it, and which ones are on a level.

    `levels` is sorted. This absorbs rounding at vertices and on flat edges.
    """
    i = np.searchsorted(levels, value)
    below = levels[np.clip(i - 1, 0, len(levels) - 1)]
    above = levels[np.clip(i, 0, len(levels) - 1)]
    d_below, d_above = np.abs(value - below), np.abs(above - value)
    nearest = np.where(d_above < d_below, above, below)
    at = np.minimum(d_below, d_above) <= tol
    return np.where(at, nearest, value), at


@dataclass(frozen=True, eq=False)
class _Slicer:
    """Cuts the polygon along lines of constant `level` (mass, or CG for the vertical cut).

    Between two consecutive vertex levels (a slab) the same edges cross every
    line, always in the same order, since edges of a simple polygon never
    cross. So the crossing edges of each slab are sorted once, here, and a
    state strictly inside a slab needs one lookup and one multiply-add per
    crossing: its pieces are consecutive pairs. States exactly on a vertex
    level take the general path.
    """

    edges: tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]  # x0, y0, x1, y1
    levels: np.ndarray  # sorted distinct vertex levels; slab s is [levels[s], levels[s+1])
    ax: np.ndarray  # (slabs + 1, K) x of each crossing edge's lower end; last row empty
    ay: np.ndarray  # (slabs + 1, K) y of that end
    slope: np.ndarray  # (slabs + 1, K) dx/dy

    @classmethod
    def build(cls, pos: np.ndarray, lev: np.ndarray) -> "_Slicer":
        x0, y0, x1, y1 = pos, lev, np.roll(pos, -1), np.roll(lev, -1)
        levels = np.sort(lev)  # np.unique's result, without its import of numpy.ma (10 ms at start-up)
        levels = levels[np.concatenate(([True], levels[1:] != levels[:-1]))]
        ymin, ymax = np.minimum(y0, y1), np.maximum(y0, y1)
        low0 = y0 <= y1
        lx, ly = np.where(low0, x0, x1), np.where(low0, y0, y1)
        with np.errstate(divide="ignore", invalid="ignore"):
            sl = np.where(y1 != y0, (x1 - x0) / (y1 - y0), 0.0)
        slabs = []
        for a, b in zip(levels[:-1], levels[1:]):  # once per envelope, over its few slabs
            e = np.nonzero((ymin <= a) & (ymax >= b))[0]
            e = e[np.argsort(lx[e] + (0.5 * (a + b) - ly[e]) * sl[e])]
            slabs.append(e)
        width = max(len(e) for e in slabs)
        shape = (len(slabs) + 1, width)
        ax, ay, slope = np.full(shape, np.inf), np.zeros(shape), np.zeros(shape)
        for s, e in enumerate(slabs):
            ax[s, : len(e)], ay[s, : len(e)], slope[s, : len(e)] = lx[e], ly[e], sl[e]
        return cls((x0, y0, x1, y1), levels, ax, ay, slope)

    def groups(self, level: np.ndarray, tol_level: float, tol_pos: float):
        """[(rows, plo, phi)]: sorted pieces of the cut at each state's level, by group of rows."""
        lev, at = _snap(level, self.levels, tol_level)
        some = bool(at.any())
        fast = ~at if some else slice(None)  # the usual case: no state on a vertex level
        lv = lev[fast]
        out = []
        if len(lv):
            last = len(self.levels) - 1
            s = np.searchsorted(self.levels, lv, side="right") - 1
            ok = np.isfinite(lv) & (s >= 0) & (s < last)
            s = np.where(ok, s, last)
            lv = np.where(ok, lv, 0.0)
            x = np.take(self.ax, s, axis=0)
            x += (lv[:, None] - np.take(self.ay, s, axis=0)) * np.take(self.slope, s, axis=0)
            out.append((fast, x[:, 0::2], x[:, 1::2]))
        if some:
            out.append((at, *_general_pieces(*self.edges, lev[at], tol_pos)))
        return out


def _holding(plo: np.ndarray, phi: np.ndarray, v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(lo, hi) of the piece holding v, else the nearest (the lower on a tie); NaN if none."""
    good = np.isfinite(v)
    vv = np.where(good, v, 0.0)[:, None]
    if plo.shape[1] == 1:
        j = np.zeros(len(v), dtype=np.intp)
    else:
        j = np.argmin(np.maximum(np.maximum(plo - vv, vv - phi), 0.0), axis=1)
    flat = np.arange(len(v)) * plo.shape[1] + j
    lo, hi = np.take(plo, flat), np.take(phi, flat)
    ok = good & np.isfinite(lo)
    return np.where(ok, lo, np.nan), np.where(ok, hi, np.nan)


def _top_below(plo: np.ndarray, phi: np.ndarray, v: np.ndarray, tol: float) -> np.ndarray:
    """Top of the highest piece that starts at or below v (+tol); NaN if none."""
    count = (plo <= v[:, None] + tol).sum(axis=1)
    top = np.take(phi, np.arange(len(v)) * phi.shape[1] + np.maximum(count - 1, 0))
    return np.where(count > 0, top, np.nan)


@dataclass(frozen=True, eq=False)
class EnvelopeGeometry:
    """A validated envelope polygon, ready to evaluate many times (open ring, SI)."""

    vertices: np.ndarray  # (k, 2) [cg, mass], last != first
    tol_cg: float
    tol_mass: float
    across: _Slicer | None = field(default=None, repr=False)  # lines of constant mass
    upward: _Slicer | None = field(default=None, repr=False)  # lines of constant CG

    def __post_init__(self) -> None:
        if self.across is None:
            object.__setattr__(self, "across", _Slicer.build(self.vertices[:, 0], self.vertices[:, 1]))
        if self.upward is None:
            object.__setattr__(self, "upward", _Slicer.build(self.vertices[:, 1], self.vertices[:, 0]))

    @classmethod
    def from_points(cls, points) -> "EnvelopeGeometry":
        problem = envelope_problem(points)
        if problem is not None:
            raise SteelyardError(problem, field="points")
        p = np.array(points, dtype=float)
        if np.array_equal(p[0], p[-1]):
            p = p[:-1]
        span = np.ptp(p, axis=0)
        p.setflags(write=False)
        return cls(p, float(REL_TOL * span[0]), float(REL_TOL * span[1]))

    def without_tolerance(self) -> "EnvelopeGeometry":
        """The same polygon with a zero boundary tolerance (solvers narrow onto exact crossings)."""
        return EnvelopeGeometry(self.vertices, 0.0, 0.0, self.across, self.upward)

    @property
    def mass_range(self) -> tuple[float, float]:
        return float(self.vertices[:, 1].min()), float(self.vertices[:, 1].max())

    @property
    def cg_range(self) -> tuple[float, float]:
        return float(self.vertices[:, 0].min()), float(self.vertices[:, 0].max())

    def evaluate(self, cg, mass) -> EnvelopeStatus:
        try:
            c = np.atleast_1d(np.asarray(cg, dtype=float))
            m = np.atleast_1d(np.asarray(mass, dtype=float))
        except (TypeError, ValueError):
            raise SteelyardError("cg and mass must be numbers") from None
        if c.ndim != 1 or c.shape != m.shape:
            raise SteelyardError(f"cg and mass must be 1-D and the same length, got shapes "
                                 f"{c.shape} and {m.shape}")
        with np.errstate(over="ignore", invalid="ignore"):  # far-off states: margins may be ±inf, no warning
            return self._evaluate(c, m)

    def _evaluate(self, c: np.ndarray, m: np.ndarray) -> EnvelopeStatus:
        n = len(c)
        # Chord at each state's mass: the piece holding the CG, else the nearest.
        lo, hi = np.full(n, np.nan), np.full(n, np.nan)
        for rows, plo, phi in self.across.groups(m, self.tol_mass, self.tol_cg):
            lo[rows], hi[rows] = _holding(plo, phi, c[rows])
        inside = (c >= lo - self.tol_cg) & (c <= hi + self.tol_cg)  # False where NaN
        margin_lo, margin_hi = c - lo, hi - c
        margin = np.minimum(margin_lo, margin_hi)
        margin = np.where(inside, np.maximum(margin, 0.0), margin)

        # Vertical cut at each CG: the piece holding the state, else the nearest one below it.
        top = np.full(n, np.nan)
        for rows, plo, phi in self.upward.groups(c, self.tol_cg, self.tol_mass):
            top[rows] = _top_below(plo, phi, m[rows], self.tol_mass)
        mass_margin = top - m
        mass_margin = np.where(inside, np.maximum(mass_margin, 0.0), np.minimum(mass_margin, 0.0))
        return EnvelopeStatus(inside, lo, hi, margin, margin_lo, margin_hi, mass_margin)


def as_geometry(points) -> EnvelopeGeometry:
    """Accept vertices or an already prepared geometry."""
    return points if isinstance(points, EnvelopeGeometry) else EnvelopeGeometry.from_points(points)


def evaluate(points, cg, mass) -> EnvelopeStatus:
    """Envelope status of n states (cg (n,), mass (n,)) against one polygon (k, 2).

    Raises SteelyardError (field "points") for an unusable polygon; the
    caller adds which envelope it was with ``.located(subject=...)``.
    """
    return as_geometry(points).evaluate(cg, mass)


def _opt(value: float) -> float | None:
    return float(value) if np.isfinite(value) else None


def evaluate_one(points, cg: float, mass: float) -> dict:
    """One state: {inside, limits: (lo, hi) or None, margin, mass_margin}; None for undefined numbers."""
    s = evaluate(points, [cg], [mass])
    lo, hi = s.lo[0], s.hi[0]
    limits = (float(lo), float(hi)) if np.isfinite(lo) else None
    return {"inside": bool(s.inside[0]), "limits": limits,
            "margin": _opt(s.margin[0]), "mass_margin": _opt(s.mass_margin[0])}
