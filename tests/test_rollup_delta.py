"""One row out, one row in (core.physics.delta) against outside references.

References: exact rational arithmetic (fractions.Fraction) of the textbook
definitions M = Σ m, CG = Σ m r / M, I_cg = Σ own + Σ m (|d|² E − d dᵀ)
(parallel-axis theorem, any dynamics handbook); sympy for the same tensor
symbolically on a small case; at 100,000 rows the full two-pass roll-up
(itself checked against exact sums in test_rollup.py) at its tolerance.
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest
import sympy as sp
from numpy.testing import assert_allclose

from steelyard.core.physics.delta import rest_sums, with_row
from steelyard.core.physics.rollup import rollup


def exact(mass, cg, own):
    """M, CG, I about the CG and I about the datum in Fractions (definitions, not the program's formulas)."""
    m = [Fraction(float(x)) for x in mass]
    r = [[Fraction(float(v)) for v in row] for row in cg]
    o = [[[Fraction(float(v)) for v in rr] for rr in t] for t in own]
    total = sum(m)
    c = [sum(mi * ri[k] for mi, ri in zip(m, r)) / total for k in range(3)]

    def tensor(about):
        t = [[sum(oi[j][k] for oi in o) for k in range(3)] for j in range(3)]
        for mi, ri in zip(m, r):
            d = [ri[k] - about[k] for k in range(3)]
            dd = sum(x * x for x in d)
            for j in range(3):
                for k in range(3):
                    t[j][k] += mi * ((dd if j == k else 0) - d[j] * d[k])
        return t

    return total, c, tensor(c), tensor([Fraction(0)] * 3)


def rows(n, seed, far=0.0):
    rng = np.random.default_rng(seed)
    mass = rng.uniform(0.1, 50.0, n)
    cg = rng.uniform(-3.0, 3.0, (n, 3)) + far
    a = rng.normal(size=(n, 3, 3))
    own = np.einsum("nij,nkj->nik", a, a) * 0.01  # symmetric positive semi-definite
    return mass, cg, own


def as_float(x):
    return np.array(x, dtype=float)


@pytest.mark.parametrize("far", [0.0, 1.0e4])
@pytest.mark.parametrize("row", [0, 7, 19])
def test_replace_one_row_matches_exact_sums(row, far):
    mass, cg, own = rows(20, seed=row + 1, far=far)
    rest = rest_sums(mass, cg, own, row)
    new_m, new_r = 12.5, np.array([1.25, -0.5, 2.0]) + far
    new_own = np.diag([0.5, 0.25, 0.125])
    mp = with_row(rest, new_m, new_r, new_own)
    mass2, cg2, own2 = mass.copy(), cg.copy(), own.copy()
    mass2[row], cg2[row], own2[row] = new_m, new_r, new_own
    total, c, i_cg, i_datum = exact(mass2, cg2, own2)
    assert mp.mass == pytest.approx(float(total), rel=1e-14)
    assert_allclose(mp.cg, as_float(c), rtol=1e-13, atol=1e-12)
    scale = float(np.abs(as_float(i_cg)).max())
    assert_allclose(mp.inertia_cg, as_float(i_cg), rtol=1e-10, atol=1e-12 * scale)
    assert_allclose(mp.inertia_datum, as_float(i_datum), rtol=1e-10)


def test_add_a_row_to_all_rows_matches_exact_sums():
    mass, cg, own = rows(15, seed=3)
    mp = with_row(rest_sums(mass, cg, own), 3.0, [0.5, 0.5, -1.0], np.zeros((3, 3)))
    total, c, i_cg, _ = exact(np.append(mass, 3.0), np.vstack([cg, [0.5, 0.5, -1.0]]),
                              np.concatenate([own, np.zeros((1, 3, 3))]))
    assert mp.mass == pytest.approx(float(total), rel=1e-14)
    assert_allclose(mp.cg, as_float(c), rtol=1e-13, atol=1e-13)
    assert_allclose(mp.inertia_cg, as_float(i_cg), rtol=1e-11, atol=1e-11)


def test_sympy_two_point_masses_and_a_third():
    """Symbolic: rest = two point masses, plus a third; sympy forms Σ m (|d|² E − d dᵀ) about the CG."""
    m = sp.Rational(2), sp.Rational(3), sp.Rational(5)
    r = [sp.Matrix([1, 0, 0]), sp.Matrix([0, 2, 0]), sp.Matrix([0, 0, 3])]
    total = sum(m)
    c = sum((mi * ri for mi, ri in zip(m, r)), sp.zeros(3, 1)) / total
    i_ref = sp.zeros(3, 3)
    for mi, ri in zip(m, r):
        d = ri - c
        i_ref += mi * ((d.T * d)[0] * sp.eye(3) - d * d.T)
    mass = np.array([2.0, 3.0, 99.0])  # the third row is replaced
    cg = np.array([[1.0, 0, 0], [0, 2.0, 0], [7.0, 7.0, 7.0]])
    own = np.zeros((3, 3, 3))
    mp = with_row(rest_sums(mass, cg, own, 2), 5.0, [0, 0, 3.0], np.zeros((3, 3)))
    assert_allclose(mp.cg, np.array(c, dtype=float).ravel(), rtol=1e-15)
    assert_allclose(mp.inertia_cg, np.array(i_ref, dtype=float), rtol=1e-14, atol=1e-14)


def test_edge_cases_only_row_and_zero_mass():
    mass, cg, own = np.array([4.0]), np.array([[1.0, 2.0, 3.0]]), np.zeros((1, 3, 3))
    mp = with_row(rest_sums(mass, cg, own, 0), 2.0, [5.0, 6.0, 7.0], np.eye(3))
    assert mp.mass == 2.0 and list(mp.cg) == [5.0, 6.0, 7.0]  # a single point: its own CG (definition)
    assert_allclose(mp.inertia_cg, np.eye(3))
    empty = with_row(rest_sums(mass, cg, own, 0), 0.0, [5.0, 6.0, 7.0], np.zeros((3, 3)))
    assert empty.mass == 0.0 and np.isnan(empty.cg).all()  # no mass: no CG (rollup's convention)
    assert with_row(rest_sums(mass, cg, own, 0), 1e300, [1e200, 0, 0], np.zeros((3, 3))) is None


def test_100k_rows_against_the_full_rollup():
    n = 100_000
    mass, cg, own = rows(n, seed=11, far=250.0)
    for row in (0, 54_321, n - 1):
        rest = rest_sums(mass, cg, own, row)
        new = (mass[row] * 1.37, cg[row] + [0.3, -0.2, 0.1], own[row] * 2.0)
        mp = with_row(rest, *new)
        m2, c2, o2 = mass.copy(), cg.copy(), own.copy()
        m2[row], c2[row], o2[row] = new
        ref = rollup(m2, c2, o2)
        assert mp.mass == pytest.approx(ref.mass, rel=1e-12)
        assert_allclose(mp.cg, ref.cg, rtol=1e-12)
        assert_allclose(mp.inertia_cg, ref.inertia_cg, rtol=1e-9, atol=1e-9 * np.abs(ref.inertia_cg).max())
        assert_allclose(mp.inertia_datum, ref.inertia_datum, rtol=1e-9)


def test_sparse_own_gives_the_same_rest_as_dense():
    # The form passes the state's sparse own tensors (rows with one); the sums must equal the
    # dense form's, exactly as the dense column gives them, and Σ own within rounding of an exact Fraction sum.
    from fractions import Fraction

    rng = np.random.default_rng(7)
    n = 50
    mass = rng.uniform(0.5, 5.0, n)
    cg = rng.uniform(-2.0, 2.0, (n, 3))
    rows = np.array([3, 11, 20, 41])
    values = np.array([np.diag(rng.uniform(0.1, 1.0, 3)) for _ in rows])
    dense = np.zeros((n, 3, 3))
    dense[rows] = values
    for row in (None, 11, 12):
        a = rest_sums(mass, cg, dense, row)
        b = rest_sums(mass, cg, values, row, own_rows=rows)
        assert a.mass == b.mass and np.array_equal(a.cg, b.cg) and np.array_equal(a.s, b.s)
        exact = [sum(Fraction(float(values[j][k][k])) for j, r in enumerate(rows) if r != row) for k in range(3)]
        assert all(abs(Fraction(float(b.own[k][k])) - exact[k]) <= 1e-15 * exact[k] for k in range(3))
