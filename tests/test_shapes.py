"""Shapes library: own inertia of standard solids, checked against outside sources.

Oracles: handbook closed forms (REFERENCES.md "Closed forms"), exact sympy
integration over the solid, trimesh mass properties of a tessellated mesh of
the same solid (tolerance derived from the tessellation), and scipy rotations.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp
import trimesh
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.spatial.transform import Rotation

from steelyard.core.errors import SteelyardError
from steelyard.core.physics.inertia import realisability_problem
from steelyard.core.document.model import Item, Shape
from steelyard.core.physics.shapes import SHAPE_PARAMS, shape_tensor, validate_shape

M = 3.7  # kg, arbitrary test mass

#: one set of dimensions per kind, all different so no term can hide behind another
DIMS = {
    "point": {},
    "rod": {"length": 1.3},
    "cylinder": {"radius": 0.21, "length": 0.8},
    "tube": {"outer_radius": 0.3, "inner_radius": 0.12, "length": 1.1},
    "thin_tube": {"radius": 0.25, "length": 0.9},
    "sphere": {"radius": 0.4},
    "shell": {"radius": 0.35},
    "hollow_sphere": {"outer_radius": 0.4, "inner_radius": 0.25},
    "hemisphere": {"radius": 0.3},
    "cone": {"radius": 0.2, "height": 0.7},
    "disc": {"radius": 0.45},
    "ring": {"radius": 0.33},
    "torus": {"major_radius": 0.5, "minor_radius": 0.12},
    "plate": {"size": (0.6, 0.25)},
    "box": {"size": (0.2, 0.5, 0.9)},
    "ellipsoid": {"semi_axes": (0.2, 0.5, 0.9)},
}


def local_to_body(axis: str) -> np.ndarray:
    """Columns: where local u, v, w (w = symmetry axis) land in the body frame (cyclic)."""
    k = "xyz".index(axis)
    return np.eye(3)[:, [(k + 1) % 3, (k + 2) % 3, k]]


def diag_uvw(t: np.ndarray, axis: str) -> np.ndarray:
    """Moments about local u, v, w read back out of a body-frame tensor."""
    p = local_to_body(axis)
    return np.diag(p.T @ t @ p)


def test_kind_table_covers_design_contract():
    # DESIGN.md "Contract v1: the ledger file", Shapes paragraph: these kinds and keys are fixed.
    contract = {
        "point": {}, "rod": {"length": "length"},
        "cylinder": {"radius": "length", "length": "length"},
        "tube": {"outer_radius": "length", "inner_radius": "length", "length": "length"},
        "sphere": {"radius": "length"}, "shell": {"radius": "length"},
        "box": {"size": "length3"},
    }
    for kind, params in contract.items():
        assert SHAPE_PARAMS[kind] == params
    assert set(DIMS) == set(SHAPE_PARAMS)
    assert all("axis" not in p for p in SHAPE_PARAMS.values())


# --- handbook closed forms ---------------------------------------------------

def handbook(kind: str, p: dict, m: float) -> tuple[float, float, float]:
    """(I_u, I_v, I_w) about the centroid from handbook tables; w = symmetry axis."""
    if kind == "point":
        return 0.0, 0.0, 0.0
    if kind == "rod":  # REFERENCES.md closed forms: slender rod mL²/12 about its centre
        t = m * p["length"] ** 2 / 12
        return t, t, 0.0
    if kind == "cylinder":  # REFERENCES.md: Iz = ½mr², Ix = m(3r² + h²)/12
        r, h = p["radius"], p["length"]
        return m * (3 * r**2 + h**2) / 12, m * (3 * r**2 + h**2) / 12, m * r**2 / 2
    if kind == "tube":  # REFERENCES.md: Iz = ½m(r1² + r2²), Ix = m[3(r1² + r2²) + h²]/12
        s, h = p["outer_radius"] ** 2 + p["inner_radius"] ** 2, p["length"]
        return m * (3 * s + h**2) / 12, m * (3 * s + h**2) / 12, m * s / 2
    if kind == "thin_tube":  # handbook table, thin cylindrical shell open ends: Iz = mr², Ix = m(6r² + h²)/12 (from memory; sympy below)
        r, h = p["radius"], p["length"]
        return m * (6 * r**2 + h**2) / 12, m * (6 * r**2 + h**2) / 12, m * r**2
    if kind == "sphere":  # REFERENCES.md: solid sphere ⅖mr²
        i = 0.4 * m * p["radius"] ** 2
        return i, i, i
    if kind == "shell":  # REFERENCES.md: thin spherical shell ⅔mr²
        i = 2 / 3 * m * p["radius"] ** 2
        return i, i, i
    if kind == "hollow_sphere":  # handbook table: ⅖m(R⁵ − r⁵)/(R³ − r³) (from memory; sympy below)
        ro, ri = p["outer_radius"], p["inner_radius"]
        i = 0.4 * m * (ro**5 - ri**5) / (ro**3 - ri**3)
        return i, i, i
    if kind == "hemisphere":  # derived in test_hemisphere_centroid_form_by_parallel_axis
        r = p["radius"]
        return 83 / 320 * m * r**2, 83 / 320 * m * r**2, 0.4 * m * r**2
    if kind == "cone":  # derived in test_cone_centroid_form_by_parallel_axis
        r, h = p["radius"], p["height"]
        t = m * (3 * r**2 / 20 + 3 * h**2 / 80)
        return t, t, 0.3 * m * r**2
    if kind == "disc":  # handbook table, thin disc: Iz = ½mr², diameter ¼mr² (from memory; sympy below)
        r = p["radius"]
        return m * r**2 / 4, m * r**2 / 4, m * r**2 / 2
    if kind == "ring":  # handbook table, thin hoop: Iz = mr², diameter ½mr² (from memory; sympy below)
        r = p["radius"]
        return m * r**2 / 2, m * r**2 / 2, m * r**2
    if kind == "torus":  # REFERENCES.md: I_axis = m(R² + ¾a²) (from memory); diameter m(R²/2 + ⅝a²) (from memory; sympy below)
        big, a = p["major_radius"], p["minor_radius"]
        return m * (big**2 / 2 + 5 * a**2 / 8), m * (big**2 / 2 + 5 * a**2 / 8), m * (big**2 + 0.75 * a**2)
    if kind == "plate":  # handbook table, thin rectangular plate a×b: normal m(a² + b²)/12, in-plane mb²/12, ma²/12 (from memory; sympy below)
        a, b = p["size"]
        return m * b**2 / 12, m * a**2 / 12, m * (a**2 + b**2) / 12
    if kind == "box":  # REFERENCES.md: box m(b² + c²)/12 and cyclic (body x y z, not u v w)
        a, b, c = p["size"]
        return m * (b**2 + c**2) / 12, m * (a**2 + c**2) / 12, m * (a**2 + b**2) / 12
    if kind == "ellipsoid":  # handbook table, solid ellipsoid: m(b² + c²)/5 and cyclic (from memory; trimesh below)
        a, b, c = p["semi_axes"]
        return m * (b**2 + c**2) / 5, m * (a**2 + c**2) / 5, m * (a**2 + b**2) / 5
    raise AssertionError(kind)


@pytest.mark.parametrize("kind", sorted(DIMS))
@pytest.mark.parametrize("axis", ["x", "y", "z"])
def test_handbook_closed_forms(kind, axis):
    t = shape_tensor(kind, DIMS[kind], axis, M)
    expected = handbook(kind, DIMS[kind], M)
    if kind in ("box", "ellipsoid"):  # dimensions are along body x y z; axis is ignored
        np.testing.assert_allclose(np.diag(t), expected, rtol=1e-13, atol=0)
    else:
        np.testing.assert_allclose(diag_uvw(t, axis), expected, rtol=1e-13, atol=0)
    # products of inertia vanish for these symmetric solids (handbook tables list none)
    assert np.count_nonzero(t - np.diag(np.diag(t))) == 0


def test_cone_centroid_form_by_parallel_axis():
    # Handbook (REFERENCES.md): solid cone about its apex Iz = 3/10 mr², Ix = 3/5 mh² + 3/20 mr²;
    # centroid h/4 above the base. Parallel axis (REFERENCES.md) moves Ix to the centroid.
    m, r, h, z = sp.symbols("m r h z", positive=True)
    # centroid re-derived by integration: disc slices of radius r·z/h at distance z from the apex
    area = sp.pi * (r * z / h) ** 2
    z_bar = sp.integrate(z * area, (z, 0, h)) / sp.integrate(area, (z, 0, h))
    assert sp.simplify(z_bar - 3 * h / 4) == 0  # i.e. h/4 above the base
    ix_cg = sp.Rational(3, 5) * m * h**2 + sp.Rational(3, 20) * m * r**2 - m * z_bar**2
    vals = {m: M, r: 0.2, h: 0.7}
    t = shape_tensor("cone", {"radius": 0.2, "height": 0.7}, "z", M)
    assert t[0, 0] == pytest.approx(float(ix_cg.subs(vals)), rel=1e-14)
    assert t[2, 2] == pytest.approx(float((sp.Rational(3, 10) * m * r**2).subs(vals)), rel=1e-14)


def test_hemisphere_centroid_form_by_parallel_axis():
    # About the flat-face centre a hemisphere has ⅖mr² on every axis (half of a solid sphere's
    # ⅖(2m)r², by the sphere's mirror symmetry; REFERENCES.md sphere form). Its centroid is 3r/8
    # from the flat face (REFERENCES.md); re-derived here by integration of disc slices.
    m, r, z = sp.symbols("m r z", positive=True)
    area = sp.pi * (r**2 - z**2)
    z_bar = sp.integrate(z * area, (z, 0, r)) / sp.integrate(area, (z, 0, r))
    assert sp.simplify(z_bar - 3 * r / 8) == 0
    ix_cg = sp.Rational(2, 5) * m * r**2 - m * z_bar**2
    assert sp.simplify(ix_cg - sp.Rational(83, 320) * m * r**2) == 0
    vals = {m: M, r: 0.3}
    t = shape_tensor("hemisphere", {"radius": 0.3}, "z", M)
    assert t[1, 1] == pytest.approx(float(ix_cg.subs(vals)), rel=1e-14)
    assert t[2, 2] == pytest.approx(float((sp.Rational(2, 5) * m * r**2).subs(vals)), rel=1e-14)


# --- exact integration (sympy) ---------------------------------------------

def sym_unit_tensor(point, jac, ranges):
    """Inertia per unit mass about the centroid: I = tr(S)E − S, S_ij = ∫x_i x_j dm / m."""
    def integral(f):
        return sp.integrate(sp.expand(f * jac), *ranges)

    m = integral(sp.Integer(1))
    c = [sp.simplify(integral(x) / m) for x in point]
    d = [x - ci for x, ci in zip(point, c)]
    s = sp.Matrix(3, 3, lambda i, j: integral(d[i] * d[j]) / m)
    return sp.simplify(s.trace() * sp.eye(3) - s), c


R_, P_, T_, Z_, U_, V_ = sp.symbols("rho phi theta z u v", real=True)
Q = sp.Rational


def _cyl(rho, phi, z):
    return [rho * sp.cos(phi), rho * sp.sin(phi), z]


def _sph(rho, theta, phi):
    return [rho * sp.sin(theta) * sp.cos(phi), rho * sp.sin(theta) * sp.sin(phi), rho * sp.cos(theta)]


#: kind -> (exact dimensions, point, jacobian, ranges innermost first); symmetry axis = local z
SYMPY_CASES = {
    # line, surface and volume integrals written from the definitions I = ∫ (r² E − r rᵀ) dm
    "rod": ({"length": Q(13, 10)}, [0, 0, Z_], 1, [(Z_, -Q(13, 20), Q(13, 20))]),
    "ring": ({"radius": Q(33, 100)}, _cyl(Q(33, 100), P_, 0), Q(33, 100), [(P_, 0, 2 * sp.pi)]),
    "disc": ({"radius": Q(9, 20)}, _cyl(R_, P_, 0), R_, [(R_, 0, Q(9, 20)), (P_, 0, 2 * sp.pi)]),
    "plate": ({"size": (Q(3, 5), Q(1, 4))}, [U_, V_, 0], 1,
              [(U_, -Q(3, 10), Q(3, 10)), (V_, -Q(1, 8), Q(1, 8))]),
    "thin_tube": ({"radius": Q(1, 4), "length": Q(9, 10)}, _cyl(Q(1, 4), P_, Z_), Q(1, 4),
                  [(P_, 0, 2 * sp.pi), (Z_, -Q(9, 20), Q(9, 20))]),
    "shell": ({"radius": Q(7, 20)}, _sph(Q(7, 20), T_, P_), Q(7, 20) ** 2 * sp.sin(T_),
              [(T_, 0, sp.pi), (P_, 0, 2 * sp.pi)]),
    "hollow_sphere": ({"outer_radius": Q(2, 5), "inner_radius": Q(1, 4)}, _sph(R_, T_, P_),
                      R_**2 * sp.sin(T_), [(R_, Q(1, 4), Q(2, 5)), (T_, 0, sp.pi), (P_, 0, 2 * sp.pi)]),
    "hemisphere": ({"radius": Q(3, 10)}, _sph(R_, T_, P_), R_**2 * sp.sin(T_),
                   [(R_, 0, Q(3, 10)), (T_, 0, sp.pi / 2), (P_, 0, 2 * sp.pi)]),
    "cone": ({"radius": Q(1, 5), "height": Q(7, 10)}, _cyl(R_, P_, Z_), R_,
             [(R_, 0, Q(1, 5) * (1 - Z_ / Q(7, 10))), (P_, 0, 2 * sp.pi), (Z_, 0, Q(7, 10))]),
    # torus in tube coordinates: rho = R + s·cos(theta), z = s·sin(theta), dV = s·rho ds dtheta dphi
    "torus": ({"major_radius": Q(1, 2), "minor_radius": Q(3, 25)},
              _cyl(Q(1, 2) + R_ * sp.cos(T_), P_, R_ * sp.sin(T_)), R_ * (Q(1, 2) + R_ * sp.cos(T_)),
              [(R_, 0, Q(3, 25)), (T_, 0, 2 * sp.pi), (P_, 0, 2 * sp.pi)]),
    "tube": ({"outer_radius": Q(3, 10), "inner_radius": Q(3, 25), "length": Q(11, 10)}, _cyl(R_, P_, Z_),
             R_, [(R_, Q(3, 25), Q(3, 10)), (P_, 0, 2 * sp.pi), (Z_, -Q(11, 20), Q(11, 20))]),
}


@pytest.mark.parametrize("kind", sorted(SYMPY_CASES))
def test_exact_integration(kind):
    # sympy exact integration of the defining integrals (outside oracle, exact rationals)
    dims, point, jac, ranges = SYMPY_CASES[kind]
    unit, centroid = sym_unit_tensor(point, jac, ranges)
    if kind == "cone":  # the base sits at z = 0: centroid h/4 above it (REFERENCES.md)
        assert centroid[2] == Q(7, 40)
    if kind == "hemisphere":  # centroid 3r/8 from the flat face (REFERENCES.md)
        assert centroid[2] == Q(9, 80)
    expected = np.array(unit.evalf(30).tolist(), dtype=float) * M
    floats = {k: tuple(float(x) for x in v) if isinstance(v, tuple) else float(v) for k, v in dims.items()}
    np.testing.assert_allclose(shape_tensor(kind, floats, "z", M), expected, rtol=1e-12, atol=1e-15)


# --- tessellated meshes (trimesh) ------------------------------------------

def polygon_deficit(n: int) -> float:
    """Relative loss of J/A when a circle is replaced by its inscribed regular n-gon.

    Fan the n-gon into n triangles from the centre (apex angle α = 2π/n, sides R):
    a triangle's polar moment about that vertex is A R²(2 + cos α)/6, so J/A =
    R²(2 + cos α)/6 against R²/2 for the circle: a factor (2 + cos α)/3, i.e. a
    deficit ≈ 2π²/(3n²) (4.0e-4 at n = 128). Any solid whose cross-sections are
    scaled copies of one n-gon (prism, annulus, cone, revolved profile) loses
    exactly this fraction of the radial part of I/m once the mass is matched.
    """
    return 1.0 - (2.0 + math.cos(2.0 * math.pi / n)) / 3.0


def icosphere_deficit(mesh: trimesh.Trimesh, radius: float) -> float:
    """Rigorous bound on the relative error of I/m for a convex mesh with vertices on a sphere.

    The mesh holds the ball of its in-radius ρ (least face-plane distance) and lies in
    the ball of radius R, and its second moment is isotropic (icosahedral symmetry), so
    I/m = ⅔⟨s²⟩ lies between ⅖ρ² and ⅖R² (adding mass beyond ρ only raises the mean s²,
    removing it beyond ρ > R√0.6 only lowers it): error ≤ 1 − (ρ/R)².
    """
    rho = np.abs(np.einsum("ij,ij->i", mesh.face_normals, mesh.triangles[:, 0])).min()
    return 1.0 - (rho / radius) ** 2


def hollow(outer: trimesh.Trimesh, inner: trimesh.Trimesh) -> trimesh.Trimesh:
    """Outer solid minus inner solid: inverted inner faces subtract in the volume integrals."""
    inner = inner.copy()
    inner.invert()
    return trimesh.util.concatenate([outer, inner])


def _ico(r, sub=5):
    return trimesh.creation.icosphere(sub, r)


def _hemisphere_mesh(r, sections, arc):
    theta = np.linspace(0.0, np.pi / 2, arc + 1)
    profile = np.vstack([[0.0, 0.0], np.column_stack([np.cos(theta), np.sin(theta)]) * r])
    return trimesh.creation.revolve(profile, sections=sections)


def _ellipsoid_mesh(a, b, c):
    mesh = _ico(1.0)
    mesh.apply_scale([a, b, c])  # affine image: each ∫x_i² dm scales by the same factor as the sphere's
    return mesh


N = 128
THIN = 1e-3  # thickness / size of the thin solids standing in for shells, plates, rods
SPHERE_TOL = icosphere_deficit(_ico(1.0), 1.0)  # ≈ 5.7e-4 for 5 subdivisions

#: kind -> (mesh in the local frame, rtol on each moment, atol as a fraction of m·size²)
MESH_CASES = {
    # solid polygon prisms / cones: exact deficit of the n-gon (docstring above), 1.5× margin
    "cylinder": (lambda: trimesh.creation.cylinder(0.21, 0.8, sections=N), 1.5 * polygon_deficit(N), 0),
    "tube": (lambda: trimesh.creation.annulus(0.12, 0.3, 1.1, sections=N), 1.5 * polygon_deficit(N), 0),
    "cone": (lambda: trimesh.creation.cone(0.2, 0.7, sections=N), 1.5 * polygon_deficit(N), 0),
    # spheres: rigorous in-radius bound (icosphere_deficit); hollow = outer minus a scaled copy,
    # same relative error since both parts scale alike
    "sphere": (lambda: _ico(0.4), SPHERE_TOL, 0),
    "hollow_sphere": (lambda: hollow(_ico(0.4), _ico(0.25)), SPHERE_TOL, 0),
    "ellipsoid": (lambda: _ellipsoid_mesh(0.2, 0.5, 0.9), SPHERE_TOL, 0),
    # box is a polyhedron: trimesh is exact (REFERENCES.md)
    "box": (lambda: trimesh.creation.box([0.2, 0.5, 0.9]), 1e-12, 0),
    # revolved profiles: sections give the n-gon deficit; the profile polyline (arc of 64 chords,
    # or a 128-gon for the torus tube) costs at most its own chord deficit; sum, 1.5× margin (estimate)
    "hemisphere": (lambda: _hemisphere_mesh(0.3, N, 64),
                   1.5 * (polygon_deficit(N) + (1 - math.cos(math.pi / 256) ** 2)), 0),
    "torus": (lambda: trimesh.creation.torus(0.5, 0.12, N, N), 1.5 * 2 * polygon_deficit(N), 0),
    # thin kinds as the limit of a thin solid: the neglected thickness t enters as (t/size)²
    "rod": (lambda: trimesh.creation.cylinder(1.3 * THIN, 1.3, sections=64), 4 * THIN**2, THIN**2),
    "disc": (lambda: trimesh.creation.cylinder(0.45, 0.45 * THIN, sections=N),
             1.5 * polygon_deficit(N) + THIN**2, 0),
    "thin_tube": (lambda: trimesh.creation.annulus(0.25 * (1 - THIN / 2), 0.25 * (1 + THIN / 2), 0.9,
                                                   sections=N), 1.5 * polygon_deficit(N) + THIN**2, 0),
    "shell": (lambda: hollow(_ico(0.35 * (1 + THIN / 2)), _ico(0.35 * (1 - THIN / 2))),
              SPHERE_TOL + THIN**2, 0),
    "ring": (lambda: trimesh.creation.torus(0.33, 0.33 * THIN, N, 16),
             1.5 * polygon_deficit(N) + THIN**2, 0),
    # plate: the box's thickness t = b·THIN adds m t²/12 to I_u = m b²/12, i.e. THIN² relative
    "plate": (lambda: trimesh.creation.box([0.6, 0.25, 0.25 * THIN]), THIN**2, 0),
}

def test_mesh_cases_cover_every_solid_kind():
    assert set(MESH_CASES) == set(SHAPE_PARAMS) - {"point"}


@pytest.mark.parametrize("kind", sorted(MESH_CASES))
@pytest.mark.parametrize("axis", ["x", "y", "z"])
def test_against_trimesh(kind, axis):
    build, rtol, atol_frac = MESH_CASES[kind]
    mesh = build()
    assert mesh.is_watertight
    if kind not in ("box", "ellipsoid"):  # lay local z along `axis` (cyclic, a proper rotation)
        transform = np.eye(4)
        transform[:3, :3] = local_to_body(axis)
        mesh.apply_transform(transform)
    mesh.density = M / mesh.volume  # match the mass; moment_inertia is about center_mass (trimesh docs)
    ref = mesh.moment_inertia
    ours = shape_tensor(kind, DIMS[kind], axis, M)
    scale = M * max(mesh.extents) ** 2
    np.testing.assert_allclose(ours, ref, rtol=rtol, atol=atol_frac * scale + 1e-12 * np.trace(ref))


def test_trimesh_cone_centroid_quarter_height():
    # trimesh cone has its base at z = 0; its slices are scaled n-gons, so the centroid height is
    # exact: h/4 (REFERENCES.md), which is where the ledger's cg must sit for a cone.
    mesh = trimesh.creation.cone(0.2, 0.7, sections=N)
    assert mesh.center_mass[2] == pytest.approx(0.7 / 4, rel=1e-12)


# --- rotation, realisability ------------------------------------------------

@pytest.mark.parametrize("kind", sorted(DIMS))
@pytest.mark.parametrize("axis", ["x", "y", "z"])
def test_rotated_item_matches_scipy(kind, axis):
    # scipy Rotation.from_euler, lower-case sequence = extrinsic (fixed body axes), left to right
    r = Rotation.from_euler("zx", [30.0, -10.0], degrees=True).as_matrix()
    local = shape_tensor(kind, DIMS[kind], axis, M)
    item = Item(id="a", mass=M, cg=(0.0, 0.0, 0.0), shape=Shape(kind, DIMS[kind], axis),
                rotate=(("z", 30.0), ("x", -10.0)))
    # REFERENCES.md rotation: v_body = R v_local  =>  I_body = R I_local Rᵀ
    np.testing.assert_allclose(item.own_tensor(), r @ local @ r.T, rtol=0, atol=1e-14 * max(1.0, np.trace(local)))


def test_rotated_plate_against_rotated_mesh():
    # trimesh: rotating the mesh itself by the same turns gives the same tensor (moments are frame-true)
    r = Rotation.from_euler("zx", [30.0, -10.0], degrees=True).as_matrix()
    mesh = trimesh.creation.box([0.25 * THIN, 0.6, 0.25])  # plate, axis x: size[0] along y, size[1] along z
    transform = np.eye(4)
    transform[:3, :3] = r
    mesh.apply_transform(transform)
    mesh.density = M / mesh.volume
    item = Item(id="p", mass=M, cg=(0.0, 0.0, 0.0), shape=Shape("plate", {"size": (0.6, 0.25)}, "x"),
                rotate=(("z", 30.0), ("x", -10.0)))
    np.testing.assert_allclose(item.own_tensor(), mesh.moment_inertia, rtol=0, atol=THIN**2 * M * 0.6**2)


@pytest.mark.parametrize("kind", sorted(DIMS))
@pytest.mark.parametrize("axis", ["x", "y", "z"])
def test_every_result_realisable(kind, axis):
    # REFERENCES.md physical realisability: PSD and each principal moment ≤ sum of the other two
    assert realisability_problem(shape_tensor(kind, DIMS[kind], axis, M)) is None
    item = Item(id="a", mass=M, cg=(1.0, 2.0, 3.0), shape=Shape(kind, DIMS[kind], axis),
                rotate=(("y", 47.0), ("z", -120.0)))
    assert realisability_problem(item.own_tensor()) is None


_len = st.floats(1e-3, 1e3)


@st.composite
def any_shape(draw):
    kind = draw(st.sampled_from(sorted(SHAPE_PARAMS)))
    params = {}
    for name, dim in SHAPE_PARAMS[kind].items():
        params[name] = draw(_len) if dim == "length" else tuple(draw(_len) for _ in range(int(dim[-1])))
    if "inner_radius" in params:
        params["inner_radius"] = params["outer_radius"] * draw(st.floats(0.0, 0.999))
    if kind == "torus":
        params["minor_radius"] = params["major_radius"] * draw(st.floats(1e-6, 1.0))
    return kind, params, draw(st.sampled_from("xyz")), draw(st.floats(0.0, 1e4))


@settings(max_examples=300, deadline=None)
@given(any_shape())
def test_realisable_for_any_valid_dimensions(case):
    # REFERENCES.md realisability (each moment is ∫ of a square sum, so every real solid passes)
    kind, params, axis, mass = case
    t = shape_tensor(kind, params, axis, mass)
    assert t.shape == (3, 3)
    assert realisability_problem(t) is None


# --- bad input ---------------------------------------------------------------

BAD = [
    ("sphr", {"radius": 1.0}, "shape.kind"),
    (None, {}, "shape.kind"),
    ("cylinder", {"radius": 0.1}, "shape.length"),
    ("cylinder", {"radius": 0.1, "length": 1.0, "height": 2.0}, "shape.height"),
    ("point", {"radius": 1.0}, "shape.radius"),
    ("cylinder", {"radius": -0.1, "length": 1.0}, "shape.radius"),
    ("cylinder", {"radius": 0.0, "length": 1.0}, "shape.radius"),
    ("cylinder", {"radius": 0.1, "length": float("nan")}, "shape.length"),
    ("sphere", {"radius": float("inf")}, "shape.radius"),
    ("rod", {"length": "1 m"}, "shape.length"),
    ("rod", {"length": True}, "shape.length"),
    ("tube", {"outer_radius": 0.1, "inner_radius": 0.1, "length": 1.0}, "shape.inner_radius"),
    ("tube", {"outer_radius": 0.1, "inner_radius": 0.2, "length": 1.0}, "shape.inner_radius"),
    ("tube", {"outer_radius": 0.1, "inner_radius": -0.01, "length": 1.0}, "shape.inner_radius"),
    ("hollow_sphere", {"outer_radius": 0.3, "inner_radius": 0.3}, "shape.inner_radius"),
    ("torus", {"major_radius": 0.2, "minor_radius": 0.21}, "shape.minor_radius"),
    ("torus", {"major_radius": 0.0, "minor_radius": 0.0}, "shape.major_radius"),
    ("cone", {"radius": 0.2, "height": 0.0}, "shape.height"),
    ("box", {"size": (0.1, 0.2)}, "shape.size"),
    ("box", {"size": (0.1, 0.0, 0.3)}, "shape.size"),
    ("box", {"size": 0.1}, "shape.size"),
    ("box", {"size": "abc"}, "shape.size"),
    ("box", {"size": (0.1, "x", 0.3)}, "shape.size"),
    ("plate", {"size": (0.1, 0.2, 0.3)}, "shape.size"),
    ("ellipsoid", {"semi_axes": (0.1, float("nan"), 0.3)}, "shape.semi_axes"),
    ("cylinder", {"radius": 0.1, "length": 1.0, "axis": "w"}, "shape.axis"),
    ("cylinder", [0.1, 1.0], "shape"),
]


@pytest.mark.parametrize("kind, params, field", BAD)
def test_bad_dimensions_raise_with_field(kind, params, field):
    # common practice: bad input is reported, located at the field, never crashes
    with pytest.raises(SteelyardError) as info:
        validate_shape(kind, params)
    assert info.value.field == field
    assert "\n" not in str(info.value) and field in str(info.value)
    with pytest.raises(SteelyardError):  # shape_tensor validates first
        shape_tensor(kind, params, "z", M)


def test_unknown_kind_lists_known_kinds():
    with pytest.raises(SteelyardError) as info:
        validate_shape("cilinder", {})
    assert all(k in info.value.message for k in SHAPE_PARAMS)


def test_bad_axis_and_mass():
    with pytest.raises(SteelyardError) as info:
        shape_tensor("sphere", {"radius": 0.1}, "q", M)
    assert info.value.field == "shape.axis"
    with pytest.raises(SteelyardError) as info:
        shape_tensor("sphere", {"radius": 0.1}, "z", -1.0)
    assert info.value.field == "mass"


def test_zero_where_physical():
    # tube with no bore is a solid cylinder (REFERENCES.md forms with r1 = 0); torus with a = R
    # (horn torus) is a real solid; a point has no dimensions.
    tube = shape_tensor("tube", {"outer_radius": 0.2, "inner_radius": 0.0, "length": 0.5}, "y", M)
    np.testing.assert_allclose(diag_uvw(tube, "y"), handbook("cylinder", {"radius": 0.2, "length": 0.5}, M),
                               rtol=1e-14)
    validate_shape("torus", {"major_radius": 0.2, "minor_radius": 0.2})
    validate_shape("hollow_sphere", {"outer_radius": 0.2, "inner_radius": 0.0})
    assert not shape_tensor("point", {}, "z", M).any()
    validate_shape("box", {"size": [0.1, 0.2, 0.3]})  # a list is as good as a tuple
    validate_shape("box", {"size": np.array([0.1, 0.2, 0.3])})


def test_a_shape_of_subnormal_mass_is_not_called_impossible():
    # float arithmetic (IEEE 754): 5e-324 is the smallest subnormal; a disc that light has a tensor of
    # rounded subnormals, which is zero for any physical purpose, never "not physically possible"
    for kind, mass, radius in (("disc", 1e-323, 7.0), ("disc", 3e-322, 0.3), ("ring", 5e-324, 7.0)):
        t = shape_tensor(kind, {"radius": radius}, "x", mass)
        assert realisability_problem(t) is None, (kind, mass)
    assert realisability_problem(np.diag([1.0, 1.0, 3.0])) is not None  # the check still bites
