"""Roll-ups against exact references.

- sympy.physics.mechanics with exact rationals (inertia_of_point_mass,
  dyadic sums) for random ledgers;
- exact fractions for a cluster 5 km from the datum (DESIGN.md: two passes,
  never Σ m r² − M r_cg²);
- invariants (hypothesis): additivity, order, translation, rotation.
"""

from fractions import Fraction as F

import numpy as np
import pytest
import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st
from sympy.physics.mechanics import ReferenceFrame, inertia, inertia_of_point_mass

from steelyard.core.physics.groups import subtotals
from steelyard.core.physics.inertia import tensor_from_six
from steelyard.core.document.model import Item, Ledger
from steelyard.core.loading.loadout import resolve
from steelyard.core.physics.rollup import rollup, rollup_state

N = ReferenceFrame("N")


def exact_rollup(ms, rs, sixes):
    """sympy: M, CG and the tensor about the CG, all rational."""
    M = sum(ms)
    cg = [sum(m * r[k] for m, r in zip(ms, rs)) / M for k in range(3)]
    total = 0 * N.x | N.x
    for m, r, (xx, yy, zz, xy, xz, yz) in zip(ms, rs, sixes):
        d = (r[0] - cg[0]) * N.x + (r[1] - cg[1]) * N.y + (r[2] - cg[2]) * N.z
        total = total + inertia(N, xx, yy, zz, -xy, -yz, -xz) + inertia_of_point_mass(m, d, N)
    return M, cg, total.to_matrix(N)


def random_items(rng, n):
    ms, rs, sixes = [], [], []
    for _ in range(n):
        ms.append(sp.Rational(int(rng.integers(1, 500)), int(rng.integers(1, 9))))
        rs.append([sp.Rational(int(rng.integers(-3000, 3000)), 100) for _ in range(3)])
        a, b, c = (sp.Rational(int(rng.integers(10, 99)), 10) for _ in range(3))
        # point masses of a body: S = diag(a, b, c) second moments, I = tr(S)E - S, products 0..
        pxy = sp.Rational(int(rng.integers(-5, 5)), 100)
        sixes.append((b + c, a + c, a + b, pxy, 0, 0))
    return ms, rs, sixes


@pytest.mark.parametrize("seed", range(5))
def test_random_ledgers_match_sympy(seed):
    rng = np.random.default_rng(seed)
    ms, rs, sixes = random_items(rng, 12)
    M, cg, tensor = exact_rollup(ms, rs, sixes)
    mp = rollup(np.array([float(m) for m in ms]), np.array([[float(v) for v in r] for r in rs]),
                tensor_from_six(np.array([[float(v) for v in s] for s in sixes])))
    assert mp.mass == pytest.approx(float(M), rel=1e-15)
    assert np.allclose(mp.cg, [float(c) for c in cg], rtol=1e-14, atol=1e-14)
    ref = np.array(tensor, dtype=float)
    assert np.allclose(mp.inertia_cg, ref, rtol=1e-12, atol=1e-12 * np.abs(ref).max())
    # about the datum: parallel axis from the CG to the origin, exact
    d = [-c for c in cg]
    datum = tensor + inertia_of_point_mass(M, -(d[0] * N.x + d[1] * N.y + d[2] * N.z), N).to_matrix(N)
    ref_d = np.array(datum, dtype=float)
    assert np.allclose(mp.inertia_datum, ref_d, rtol=1e-12, atol=1e-12 * np.abs(ref_d).max())


def test_far_datum_keeps_its_digits():
    # A cluster 5 km from the datum with centimetre spread (DESIGN.md, REFERENCES.md
    # "Far-datum cancellation"): exact reference by fractions.
    rng = np.random.default_rng(7)
    n = 200
    base = np.array([5000.0, 3000.0, -4000.0])
    cg = base + rng.uniform(-0.01, 0.01, size=(n, 3))
    m = rng.uniform(0.5, 5.0, size=n)
    mf = [F(x) for x in m]
    rf = [[F(v) for v in row] for row in cg]
    M = sum(mf)
    c = [sum(mi * r[k] for mi, r in zip(mf, rf)) / M for k in range(3)]
    s = [[sum(mi * (r[j] - c[j]) * (r[k] - c[k]) for mi, r in zip(mf, rf)) for k in range(3)] for j in range(3)]
    tr = s[0][0] + s[1][1] + s[2][2]
    exact = np.array([[float((tr if j == k else 0) - s[j][k]) for k in range(3)] for j in range(3)])
    mp = rollup(m, cg, np.zeros((n, 3, 3)))
    rel = np.abs(mp.inertia_cg - exact).max() / np.abs(exact).max()
    assert rel < 1e-9
    # the naive formula loses about 1e-4 here: the test would catch a regression to it
    r2 = (m[:, None, None] * (np.einsum("ij,ij->i", cg, cg)[:, None, None] * np.eye(3)
                              - cg[:, :, None] * cg[:, None, :])).sum(axis=0)
    cn = (m @ cg) / m.sum()
    naive = r2 - m.sum() * (cn @ cn * np.eye(3) - np.outer(cn, cn))
    assert np.abs(naive - exact).max() / np.abs(exact).max() > 1e-7


finite = st.floats(-100, 100, allow_nan=False)
masses = st.floats(0.01, 1000, allow_nan=False)


@st.composite
def item_arrays(draw, n_min=1, n_max=12):
    n = draw(st.integers(n_min, n_max))
    m = np.array(draw(st.lists(masses, min_size=n, max_size=n)))
    cg = np.array(draw(st.lists(st.lists(finite, min_size=3, max_size=3), min_size=n, max_size=n)))
    diag = np.array(draw(st.lists(st.lists(st.floats(0.0, 10.0), min_size=3, max_size=3), min_size=n, max_size=n)))
    s = np.zeros((n, 3, 3))
    s[:, [0, 1, 2], [0, 1, 2]] = diag
    own = np.trace(s, axis1=1, axis2=2)[:, None, None] * np.eye(3) - s
    return m, cg, own


def close(a, b, scale):
    return np.allclose(a, b, rtol=1e-9, atol=1e-9 * scale)


@given(item_arrays(), item_arrays())
def test_mass_additivity(a, b):
    # invariant: the roll-up of two parts equals the roll-up of their sub-totals as point bodies + own
    ma, mb = rollup(*a), rollup(*b)
    both = rollup(np.concatenate([a[0], b[0]]), np.concatenate([a[1], b[1]]), np.concatenate([a[2], b[2]]))
    parts = rollup(np.array([ma.mass, mb.mass]), np.array([ma.cg, mb.cg]), np.array([ma.inertia_cg, mb.inertia_cg]))
    assert both.mass == pytest.approx(ma.mass + mb.mass, rel=1e-12)
    scale = np.abs(both.inertia_cg).max() + 1.0
    assert close(both.cg, parts.cg, 100) and close(both.inertia_cg, parts.inertia_cg, scale)


@given(item_arrays(), st.randoms(use_true_random=False))
def test_item_order_irrelevant(a, rnd):
    m, cg, own = a
    perm = list(range(len(m)))
    rnd.shuffle(perm)
    r1, r2 = rollup(m, cg, own), rollup(m[perm], cg[perm], own[perm])
    assert close(r1.cg, r2.cg, 100) and close(r1.inertia_cg, r2.inertia_cg, np.abs(r1.inertia_cg).max() + 1)


@given(item_arrays(), st.lists(st.floats(-1e4, 1e4), min_size=3, max_size=3))
def test_translation_moves_cg_and_keeps_inertia(a, shift):
    m, cg, own = a
    r1, r2 = rollup(m, cg, own), rollup(m, cg + np.array(shift), own)
    assert np.allclose(r2.cg, r1.cg + np.array(shift), rtol=1e-12, atol=1e-9)
    assert close(r2.inertia_cg, r1.inertia_cg, np.abs(r1.inertia_cg).max() + 1)


@given(item_arrays(), st.lists(st.floats(-180, 180), min_size=3, max_size=3))
def test_rotation_rotates_the_tensor(a, angles):
    from scipy.spatial.transform import Rotation

    m, cg, own = a
    r = Rotation.from_euler("xyz", angles, degrees=True).as_matrix()  # reference: scipy
    r1 = rollup(m, cg, own)
    r2 = rollup(m, cg @ r.T, r @ own @ r.T)
    assert np.allclose(r2.cg, r @ r1.cg, atol=1e-9)
    assert close(r2.inertia_cg, r @ r1.inertia_cg @ r.T, np.abs(r1.inertia_cg).max() + 1)


def test_quantity_and_loadout_fractions():
    # quantity q: q identical units at one CG (DESIGN.md contract); fraction f of a variable item.
    items = (Item("a", 2.0, (1.0, 0.0, 0.0), quantity=3), Item("t", 10.0, (3.0, 0.0, 0.0), variable=True))
    from steelyard.core.document.model import Amount, Loadout

    ledger = Ledger(items, loadouts=(Loadout("half", {"t": Amount("fraction", 0.5)}),))
    empty = rollup_state(resolve(ledger, None))
    half = rollup_state(resolve(ledger, "half"))
    assert empty.mass == 6.0 and empty.cg[0] == 1.0
    # CG = Σ m x / Σ m (FAA-H-8083-1): (6·1 + 5·3)/11
    assert half.mass == 11.0 and half.cg[0] == pytest.approx(21.0 / 11.0, rel=1e-15)


def test_group_subtotals_match_independent_rollups():
    rng = np.random.default_rng(3)
    groups = ["a/b", "a", "a/c", "d", "a/b", "", "d/e/f"]
    n = len(groups)
    m = rng.uniform(1, 5, n)
    cg = rng.normal(size=(n, 3))
    own = np.zeros((n, 3, 3))
    own[:, [0, 1, 2], [0, 1, 2]] = 1.0
    totals = {g.path: g for g in subtotals(groups, m, cg, own)}
    for path in ("a", "a/b", "a/c", "d", "d/e", "d/e/f", "(ungrouped)"):
        rows = [i for i, g in enumerate(groups)
                if (g or "(ungrouped)") == path or (g or "(ungrouped)").startswith(path + "/")]
        ref = rollup(m[rows], cg[rows], own[rows])
        got = totals[path]
        assert got.count == len(rows)
        assert got.mass == pytest.approx(ref.mass, rel=1e-14)
        assert np.allclose(got.cg, ref.cg, rtol=1e-13)
        assert np.allclose(got.inertia_cg, ref.inertia_cg, rtol=1e-12, atol=1e-12)
