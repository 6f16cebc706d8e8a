"""Inertia algebra against reference libraries and textbook identities.

Sources: sympy.physics.mechanics (exact parallel-axis and dyadic algebra);
scipy.spatial.transform.Rotation (rotation matrices); tensor identities
from rigid-body dynamics texts (Goldstein, Classical Mechanics, ch. 5 —
chapter from memory): I_O = I_C + m(|d|²E − d dᵀ), I_body = R I_local Rᵀ.
"""

import numpy as np
import pytest
import sympy as sp
from hypothesis import given
from hypothesis import strategies as st
from scipy.spatial.transform import Rotation
from sympy.physics.mechanics import Point, ReferenceFrame, inertia, inertia_of_point_mass

from steelyard.core.errors import InertiaError
from steelyard.core.physics.inertia import (check_realisable, parallel_axis, principal, radii_of_gyration,
                                    realisability_problem, realisability_problems, rotate,
                                    six_from_tensor, tensor_from_six)

N = ReferenceFrame("N")


def test_six_to_tensor_uses_negative_products():
    # DESIGN.md convention: products are integrals; tensor off-diagonals are -P.
    t = tensor_from_six([1.0, 2.0, 3.0, 0.1, 0.2, 0.3])
    expected = np.array([[1.0, -0.1, -0.2], [-0.1, 2.0, -0.3], [-0.2, -0.3, 3.0]])
    assert np.array_equal(t, expected)
    assert np.array_equal(six_from_tensor(t), [1.0, 2.0, 3.0, 0.1, 0.2, 0.3])


def test_parallel_axis_matches_sympy_exactly():
    # sympy: inertia(frame, ixx, iyy, izz, ixy, iyz, izx) takes tensor elements (pass -P).
    m = sp.Rational(7, 3)
    d = (sp.Rational(1, 2), sp.Rational(-3, 4), sp.Rational(5, 7))
    pxy, pxz, pyz = sp.Rational(1, 10), sp.Rational(-1, 20), sp.Rational(1, 30)
    ic = inertia(N, 2, 3, 4, -pxy, -pyz, -pxz)
    io = ic + inertia_of_point_mass(m, d[0] * N.x + d[1] * N.y + d[2] * N.z, N)
    expected = np.array(io.to_matrix(N), dtype=float)
    got = parallel_axis(tensor_from_six([2, 3, 4, float(pxy), float(pxz), float(pyz)]), float(m),
                        np.array([float(v) for v in d]))
    assert np.allclose(got, expected, rtol=1e-15, atol=1e-15)


@given(st.lists(st.floats(-180, 180), min_size=3, max_size=3))
def test_rotation_matches_scipy(angles):
    # scipy lower-case sequence = extrinsic (fixed body axes), as our rotate list.
    from steelyard.core.physics.rotation import rotation_matrix

    turns = list(zip("zxy", angles))
    r_ours = rotation_matrix(turns)
    r_ref = Rotation.from_euler("zxy", angles, degrees=True).as_matrix()
    assert np.allclose(r_ours, r_ref, atol=1e-12)
    local = np.diag([1.0, 2.0, 2.5])
    assert np.allclose(rotate(local, r_ours), r_ref @ local @ r_ref.T, atol=1e-12)


def random_tensor(rng):
    # a realisable tensor: second moments of random point masses, I = tr(S)E - S
    pts = rng.normal(size=(6, 3))
    w = rng.uniform(0.1, 2.0, size=6)
    s = (pts * w[:, None]).T @ pts
    return np.trace(s) * np.eye(3) - s


def test_principal_axes_diagonalise_and_are_right_handed():
    rng = np.random.default_rng(1)
    for _ in range(50):
        t = random_tensor(rng)
        moments, axes = principal(t)
        assert np.all(np.diff(moments) >= 0)  # ascending
        assert np.allclose(axes @ t @ axes.T, np.diag(moments), atol=1e-10 * np.trace(t))
        assert np.isclose(np.linalg.det(axes), 1.0)  # right-handed
        for i in (0, 1):  # sign rule: largest component positive
            k = np.argmax(np.abs(axes[i]))
            assert axes[i, k] > 0
        # eigenvalues agree with sympy's exact characteristic polynomial roots
        ref = np.sort(np.linalg.eigvalsh(t))
        assert np.allclose(moments, ref, rtol=1e-12)


def test_principal_of_diagonal_is_body_axes():
    moments, axes = principal(np.diag([3.0, 1.0, 2.0]))
    assert np.array_equal(moments, [1.0, 2.0, 3.0])
    assert np.allclose(np.abs(axes), [[0, 1, 0], [0, 0, 1], [1, 0, 0]])
    assert np.isclose(np.linalg.det(axes), 1.0)


def test_radii_of_gyration():
    # k = sqrt(I/m) (definition)
    assert np.allclose(radii_of_gyration(np.diag([8.0, 2.0, 0.5]), 2.0), [2.0, 1.0, 0.5])


@pytest.mark.parametrize("diag", [(1, 1, 5), (1, 3, 5), (-1, 2, 2)])
def test_impossible_inertias_rejected(diag):
    # REFERENCES.md: Ixx + Iyy >= Izz and cyclic; diag(1, 3, 5) is positive definite yet impossible.
    t = np.diag(np.array(diag, dtype=float))
    assert realisability_problem(t) is not None
    with pytest.raises(InertiaError) as err:
        check_realisable(t, subject="item 'x'")
    assert "item 'x'" in str(err.value) and "inertia" in str(err.value)


def test_thin_plate_limit_is_accepted():
    # a thin square plate: Izz = Ixx + Iyy exactly (perpendicular axis theorem)
    assert realisability_problem(np.diag([1.0, 1.0, 2.0])) is None


def test_vectorised_screen_agrees_with_scalar_check():
    rng = np.random.default_rng(2)
    stack = [random_tensor(rng) for _ in range(20)] + [np.diag([1.0, 1.0, 5.0]), np.diag([1.0, 3.0, 5.0])]
    stack.append(np.array([[1.0, 0.5, 0], [0.0, 1, 0], [0, 0, 1]]))  # not symmetric
    mask = realisability_problems(np.array(stack))
    assert list(mask) == [realisability_problem(t) is not None for t in stack]
    assert mask[-3:].all() and not mask[:20].any()
