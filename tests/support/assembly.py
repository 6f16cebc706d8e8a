"""Exact totals of the invented Quad Freighter tree (fixtures/quad-freighter), for expected values.

Numbers are the fixture files' own, typed here; every placement is done with
sympy's exact trigonometry (sympy.cos(pi/4) is sqrt(2)/2, not a float) in
the contract's order (DESIGN "Contract v1.1: assemblies"):
p_parent = at + R·M·A·p, A from the two files' [frame] labels. Masses in kg,
lengths in m, unit factors exact (NIST SP 811, Appendix B). With no loadout,
variable items (cargo, the pods' trim cups) carry nothing.
"""

from __future__ import annotations

from fractions import Fraction as F

import sympy

from support.units import IN, LB

G, MM = F(1, 1000), F(1, 1000)

#: the pod file: (id, mass g, cg mm) in the pod's frame (x fwd, y left, z up); trim-cup is variable
POD = [("motor", 410, (0, 0, 38)), ("propeller", 96, (0, 0, 78)), ("esc", 142, (-120, 0, -12)),
       ("arm", 265, (-310, 0, -20))]
#: the pod's axes seen from the vehicle (x aft, y right, z up): fwd = -aft, left = -right, up = up
POD_ALIGN = sympy.diag(-1, -1, 1)
#: the vehicle's own fixed items: (mass kg, cg m); cargo is variable
OWN = [(F("3.8"), (F("0.62"), 0, F("0.10"))), (F("6.4"), (F("0.58"), 0, F("0.02"))),
       (F("1.1"), (F("0.62"), 0, F("-0.22")))]
#: the avionics bay (lb, in; the same axes as the vehicle), placed at (0.40, 0, 0.16) m
BAY = [(F("0.62"), (F("2.1"), 0, F("1.2"))), (F("0.35"), (F("5.4"), F("-1.5"), F("1.0"))),
       (F("0.12"), (F("6.8"), F("1.2"), F("2.6"))), (F("0.9"), (F("4.0"), 0, F("0.4")))]
BAY_AT = (F("0.40"), 0, F("0.16"))
#: the four pods as the vehicle file places them: id -> (at m, mirror, turns about z in degrees)
PODS = {"pod-fr": ((F("0.17"), F("0.45"), F("0.12")), None, -45),
        "pod-rr": ((F("1.07"), F("0.45"), F("0.12")), None, -135),
        "pod-fl": ((F("0.17"), F("-0.45"), F("0.12")), "y", 45),
        "pod-rl": ((F("1.07"), F("-0.45"), F("0.12")), "y", 135)}


def _rz(deg) -> sympy.Matrix:
    a = sympy.pi * sympy.Rational(deg) / 180
    return sympy.Matrix([[sympy.cos(a), -sympy.sin(a), 0], [sympy.sin(a), sympy.cos(a), 0], [0, 0, 1]])


def pod_points(at, mirror, turn_deg, motor_g=410):
    """[(mass kg, point m)] of one pod placed at `at` with `mirror` (axis or None) and a turn about z."""
    m = sympy.eye(3)
    if mirror is not None:
        k = "xyz".index(mirror)
        m[k, k] = -1
    t = _rz(turn_deg) * m * POD_ALIGN
    out = []
    for name, grams, cg in POD:
        grams = motor_g if name == "motor" else grams
        p = t * sympy.Matrix([sympy.Rational(c) * sympy.Rational(MM) for c in cg])
        out.append((sympy.Rational(grams) * sympy.Rational(G), [sympy.Rational(a) + p[k] for k, a in enumerate(at)]))
    return out


def totals(pods=None, motor_g=410):
    """(mass kg, (x, y, z) m) of the vehicle, exact (sympy), with `pods` placed (default: the file's four)."""
    pods = PODS if pods is None else pods
    points = [(sympy.Rational(m), [sympy.Rational(c) for c in cg]) for m, cg in OWN]
    points += [(sympy.Rational(m * LB), [sympy.Rational(a + c * IN) for a, c in zip(BAY_AT, cg)]) for m, cg in BAY]
    for at, mirror, turn in pods.values():
        points += pod_points(at, mirror, turn, motor_g)
    mass = sum(m for m, _ in points)
    cg = [sympy.nsimplify(sum(m * p[k] for m, p in points) / mass) for k in range(3)]
    return mass, tuple(cg)


def as_floats(exact) -> tuple[float, tuple[float, float, float]]:
    mass, cg = exact
    return float(mass), tuple(float(sympy.N(c, 30)) for c in cg)


def copy_tree(tmp_path):
    """A private copy of the Quad Freighter tree (vehicle, pods/, bays/); returns the vehicle file's path."""
    import shutil

    from support.paths import ROOT

    target = tmp_path / "quad"
    shutil.copytree(ROOT / "fixtures" / "quad-freighter", target)
    return target / "quad-freighter.toml"


def said(app) -> str:
    """Every notification the editor has shown so far, one per line."""
    return "\n".join(str(n.message) for n in app._notifications)


def close(a: float, b: float, scale: float = 1.0) -> bool:
    """Equal to float rounding: a roll-up of 30 rows in double precision (IEEE 754) is good to ~1e-12."""
    return abs(a - b) <= 1e-9 * max(scale, abs(b))
