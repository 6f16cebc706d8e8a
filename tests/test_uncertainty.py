"""Uncertainty: tolerance parsing, linear propagation, worst case, Monte Carlo."""

import math

import numpy as np
import pytest
import sympy as sp
from scipy.stats import norm

import steelyard.core.control.uncertainty as unc
from steelyard.core.errors import SteelyardError
from steelyard.core.document.model import FileUnits, Item, Ledger
from steelyard.core.control.uncertainty import (
    monte_carlo, parse_tolerances, probability_outside, propagate, tolerance_kinds, worst_case,
)

LB, IN = 0.45359237, 0.0254  # NIST SP 811, exact

M = np.array([4.0, 2.5, 7.0, 1.5])
R = np.array([[1.0, 0.2, -0.3], [3.5, -0.4, 0.1], [2.0, 0.0, 0.6], [-1.0, 1.1, 0.0]])
SM = np.array([0.10, 0.05, 0.20, 0.08])
SR = np.array([[0.01, 0.02, 0.005], [0.03, 0.0, 0.01], [0.0, 0.015, 0.02], [0.02, 0.01, 0.0]])


def test_parse_tolerances_kinds_units_quantity():
    items = (
        Item("a", 10 * LB, (0, 0, 0), tolerance={"mass": 0.5, "cg": [0.1, 0.2, "0.05 in"],
                                                          "kind": "sigma"}),
        Item("b", 2.0, (0, 0, 0), quantity=4, tolerance={"mass": "0.1 kg", "cg": "3 mm",
                                                                  "kind": "bound"}),
        Item("c", 8 * LB, (0, 0, 0)),
        Item("d", 20 * LB, (0, 0, 0), tolerance={"mass": "5 %", "kind": "sigma"}),
    )
    ledger = Ledger(items=items, units=FileUnits(mass="lb", length="in"))
    ms, cs, mb, cb = parse_tolerances(ledger)
    r3 = math.sqrt(3)
    # sigma kind: as given (units by NIST SP 811); worst case 3 sigma (common practice)
    assert ms[0] == pytest.approx(0.5 * LB, rel=1e-15)
    np.testing.assert_allclose(cs[0], [0.1 * IN, 0.2 * IN, 0.05 * IN], rtol=1e-15)
    assert mb[0] == pytest.approx(1.5 * LB, rel=1e-15)
    # bound kind: uniform, sigma = b / sqrt(3) (variance of U(-b, b) is b^2/3); quantity 4 correlated
    assert mb[1] == pytest.approx(0.4, rel=1e-15) and ms[1] == pytest.approx(0.4 / r3, rel=1e-15)
    np.testing.assert_allclose(cb[1], [0.003] * 3, rtol=1e-15)
    np.testing.assert_allclose(cs[1], [0.003 / r3] * 3, rtol=1e-15)
    assert ms[2] == mb[2] == 0 and not cs[2].any() and not cb[2].any()
    assert ms[3] == pytest.approx(0.05 * 20 * LB, rel=1e-15) and not cs[3].any()
    assert tolerance_kinds(ledger).tolist() == ["sigma", "bound", "", "sigma"]


@pytest.mark.parametrize("tol, field", [
    ({"mass": 0.5}, "tolerance.kind"),
    ({"mass": 0.5, "kind": "gauss"}, "tolerance.kind"),
    ({"mass": -0.5, "kind": "sigma"}, "tolerance.mass"),
    ({"mass": "0.5 m", "kind": "sigma"}, "tolerance.mass"),
    ({"mass": "x %", "kind": "sigma"}, "tolerance.mass"),
    ({"cg": [0.1, 0.1], "kind": "bound"}, "tolerance.cg"),
    ({"cg": [0.1, -0.1, 0.0], "kind": "bound"}, "tolerance.cg"),
    ({"cg": [0.1, "2 kg", 0.0], "kind": "bound"}, "tolerance.cg"),
    ({"mas": 0.1, "kind": "bound"}, "tolerance"),
    (0.5, "tolerance"),
])
def test_bad_tolerance_names_item_and_field(tol, field):
    ledger = Ledger(items=(Item("strut-3", 1.0, (0, 0, 0), tolerance=tol),))
    with pytest.raises(SteelyardError) as e:
        parse_tolerances(ledger)
    assert e.value.subject == "item 'strut-3'" and e.value.field == field
    assert "strut-3" in str(e.value) and field in str(e.value) and "\n" not in str(e.value)


def _sympy_partials(m, r):
    """Exact partials of cg_k = sum(m_i r_ik) / sum(m_i) by sympy differentiation."""
    n = len(m)
    ms = sp.symbols(f"m0:{n}")
    out_m = np.zeros((n, 3))
    out_r = np.zeros((n, 3))
    for k in range(3):
        rs = sp.symbols(f"r0:{n}")
        cg = sum(ms[i] * rs[i] for i in range(n)) / sum(ms)
        subs = {**{ms[i]: sp.Rational(str(m[i])) for i in range(n)},
                **{rs[i]: sp.Rational(str(r[i, k])) for i in range(n)}}
        for i in range(n):
            out_m[i, k] = float(sp.diff(cg, ms[i]).subs(subs))
            out_r[i, k] = float(sp.diff(cg, rs[i]).subs(subs))
    return out_m, out_r


def test_linear_propagation_matches_sympy_derivatives():
    # Reference: sympy derivatives of CG = sum(m r) / sum(m); first-order variance
    # sum (d/dx_i)^2 sigma_i^2 for independent inputs (GUM, law of propagation).
    pm, pr = _sympy_partials(M, R)
    expected = np.sqrt(((pm * SM[:, None]) ** 2).sum(0) + ((pr * SR) ** 2).sum(0))
    spread = propagate(M, R, SM, SR)
    np.testing.assert_allclose(spread.cg, expected, rtol=1e-12)
    assert spread.mass == pytest.approx(math.sqrt((SM ** 2).sum()), rel=1e-14)
    # covariance of total mass with CG: sum sigma_i^2 dcg/dm_i
    np.testing.assert_allclose(spread.covariance[0, 1:], (SM[:, None] ** 2 * pm).sum(0), rtol=1e-12)
    wc = worst_case(M, R, 3 * SM, 3 * SR)
    np.testing.assert_allclose(wc.cg, (np.abs(pm) * 3 * SM[:, None]).sum(0) + (pr * 3 * SR).sum(0),
                               rtol=1e-12)
    assert wc.mass == pytest.approx(3 * SM.sum(), rel=1e-14)


def _cg(m, r):
    return (m @ r) / m.sum()


def test_linear_propagation_matches_finite_differences():
    # Central differences of the CG formula itself, step h: error O(h^2).
    h = 1e-6
    jac_m = np.array([(_cg(M + h * e, R) - _cg(M - h * e, R)) / (2 * h) for e in np.eye(4)])
    var = ((jac_m * SM[:, None]) ** 2).sum(0)
    for i in range(4):
        for k in range(3):
            d = np.zeros_like(R)
            d[i, k] = h
            var[k] += (((_cg(M, R + d) - _cg(M, R - d)) / (2 * h))[k] * SR[i, k]) ** 2
    np.testing.assert_allclose(propagate(M, R, SM, SR).cg, np.sqrt(var), rtol=1e-7)


def test_zero_total_mass_is_an_error():
    with pytest.raises(SteelyardError):
        propagate(np.zeros(2), np.zeros((2, 3)), np.zeros(2), np.zeros((2, 3)))


def test_monte_carlo_cg_only_matches_normal_probability():
    # Masses fixed, positions normal: cg_x = sum(m_i x_i)/M is linear in x_i, so it is
    # exactly normal with sigma^2 = sum (m_i/M)^2 sigma_i^2 (sum of independent normals).
    s = 50000
    mass_s, cg_s = monte_carlo(M, R, np.zeros(4), SR, samples=s, seed=7)
    mu = _cg(M, R)[0]
    sigma = math.sqrt((((M / M.sum()) * SR[:, 0]) ** 2).sum())
    limit = mu + 0.6 * sigma
    p, se = probability_outside(mass_s, cg_s[:, 0], lambda cg, mass: cg <= limit)
    exact = 1 - norm.cdf((limit - mu) / sigma)  # P(cg_x > limit)
    exact_erf = 0.5 * (1 - math.erf((limit - mu) / (sigma * math.sqrt(2))))
    assert exact == pytest.approx(exact_erf, rel=1e-12)
    assert se == pytest.approx(math.sqrt(p * (1 - p) / s), rel=1e-12)  # binomial standard error
    assert abs(p - exact) < 4 * se
    np.testing.assert_array_equal(mass_s, np.full(s, M.sum()))  # masses not drawn


def test_monte_carlo_mass_only_matches_normal_probability():
    # Total mass is a sum of independent normals: normal, sigma^2 = sum sigma_i^2.
    mass_s, cg_s = monte_carlo(M, R, SM, np.zeros((4, 3)), samples=40000, seed=3)
    sigma = math.sqrt((SM ** 2).sum())
    limit = M.sum() - 1.2 * sigma
    p, se = probability_outside(mass_s, cg_s[:, 0], lambda cg, mass: mass >= limit)
    assert abs(p - norm.cdf(-1.2)) < 4 * se  # P(M < limit)


def test_monte_carlo_bound_is_uniform():
    # One item with a +/-b bound (uniform): cg_x = mu + (m/M) U(-b, b), so
    # P(cg_x > mu + t) = (1 - t / ((m/M) b)) / 2, and no sample beyond (m/M) b.
    b = 0.05
    sr = np.zeros((4, 3))
    sr[2, 0] = b / math.sqrt(3)
    mass_s, cg_s = monte_carlo(M, R, np.zeros(4), sr, samples=40000, seed=11, kind="bound")
    mu, half = _cg(M, R)[0], M[2] / M.sum() * b
    assert np.abs(cg_s[:, 0] - mu).max() <= half * (1 + 1e-12)
    t = 0.3 * half
    p, se = probability_outside(mass_s, cg_s[:, 0], lambda cg, mass: cg <= mu + t)
    assert abs(p - (1 - t / half) / 2) < 4 * se
    np.testing.assert_allclose(cg_s[:, 1:], np.tile(_cg(M, R)[1:], (40000, 1)), rtol=1e-12)


def test_monte_carlo_matches_linear_sigma_per_item_kinds():
    # Mixed kinds, small sigmas: sample sigma agrees with first-order propagation
    # (GUM); a sample standard deviation from s draws has relative error ~1/sqrt(2 s).
    kinds = np.array(["sigma", "bound", "sigma", "bound"])
    s = 40000
    mass_s, cg_s = monte_carlo(M, R, SM, SR, samples=s, seed=5, kind=kinds)
    lin = propagate(M, R, SM, SR)
    np.testing.assert_allclose(cg_s.std(axis=0), lin.cg, rtol=6 / math.sqrt(2 * s))
    assert mass_s.std() == pytest.approx(lin.mass, rel=6 / math.sqrt(2 * s))


def test_monte_carlo_seeded_and_chunk_independent(monkeypatch):
    a = monte_carlo(M, R, SM, SR, samples=3001, seed=1, kind="bound")
    b = monte_carlo(M, R, SM, SR, samples=3001, seed=1, kind="bound")
    c = monte_carlo(M, R, SM, SR, samples=3001, seed=2, kind="bound")
    monkeypatch.setattr(unc, "CHUNK_ELEMENTS", 37)  # many small chunks
    d = monte_carlo(M, R, SM, SR, samples=3001, seed=1, kind="bound")
    np.testing.assert_array_equal(a[0], b[0])
    np.testing.assert_array_equal(a[1], b[1])
    assert not np.array_equal(a[1], c[1])
    np.testing.assert_array_equal(a[0], d[0])
    np.testing.assert_allclose(a[1], d[1], rtol=0, atol=1e-15)


def test_probability_outside_rejects_bad_callback():
    with pytest.raises(ValueError):
        probability_outside(np.ones(3), np.ones(3), lambda cg, mass: np.ones(2, bool))
    p, se = probability_outside(np.ones(4), np.arange(4.0), lambda cg, mass: cg < 1)
    assert (p, se) == (0.75, math.sqrt(0.75 * 0.25 / 4))  # 3 of 4 outside, binomial
