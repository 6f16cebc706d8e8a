"""Sequences: steps applied to a loadout, sampled into a path, every state checked.

Oracles: exact arithmetic (fractions, sympy) for mass, CG = Σ moment / Σ weight
(FAA-H-8083-1) and the points where the path meets a limit; shapely 2
(`Polygon.covers`, `LineString.difference`) for inside / outside along the
path; the parallel-axis theorem for the inertia of each state (REFERENCES.md).
"""

from __future__ import annotations

import tomllib
from fractions import Fraction as F

import numpy as np
import pytest
import sympy
from shapely.geometry import LineString, Point, Polygon

from steelyard.core.limits.checks import check_ledger
from steelyard.core.errors import SteelyardError
from steelyard.core.loading.sequence_path import build_path, sequence_path
from support.exact import carried, exact_moments
from support.ledgers import ledger_from_text as ledger
from support.paths import ROOT
from support.units import IN, LB


def finding(s, name):
    return next(f for f in s.findings if f.name == name)


# --------------------------------------------------------------------------- leaves and comes back


def test_forward_tank_first_leaves_the_envelope_in_step_2_and_returns_in_step_3():
    """fixtures/trainer-overweight.toml, sequence forward-tank-first, worked out exactly.

    Loadout aft-loaded (file text): airframe 1100 lb @ 123, pod 40 @ 170, pilot 170 @ 136,
    baggage 100 @ 162, tail ballast 30 @ 262, forward tank 90 lb @ 110 full, aft tank 150 lb
    full @ 145 whose CG table is linear between fractions 0.5 (143) and 1 (145) and 0 (141) and 0.5.
    Step 1 burns 1 gal (6 lb/gal) from the aft tank, step 2 the whole forward tank, step 3 20 gal
    from the aft tank. The aft limit of "normal" is FS 132.0 at every mass of the path.
    """
    t = sympy.symbols("t", nonnegative=True)
    R = sympy.Rational
    fixed_w = R(1100 + 40 + 170 + 100 + 30)
    fixed_m = R(1100 * 123 + 40 * 170 + 170 * 136 + 100 * 162 + 30 * 262)

    def aft_x(f):  # the table, piecewise linear (definition of linear interpolation)
        return sympy.Piecewise((141 + 4 * f, f <= R(1, 2)), (143 + 4 * (f - R(1, 2)), True))

    def state(fwd, aft):  # (mass, CG) with fractions of the forward and aft tanks
        w = fixed_w + 90 * fwd + 150 * aft
        return w, (fixed_m + 90 * fwd * 110 + 150 * aft * aft_x(aft)) / w

    a1 = 1 - R(6, 150)  # after step 1
    a3 = a1 - R(120, 150)  # after step 3
    steps = [lambda u: state(1, 1 - u * R(6, 150)), lambda u: state(1 - u, a1),
             lambda u: state(0, a1 - u * R(120, 150))]
    aft_limit = 132
    crossings = []
    for k, st in enumerate(steps, start=1):
        _, x = st(t)
        folded = sympy.piecewise_fold(x)
        pieces = folded.args if isinstance(folded, sympy.Piecewise) else [(x, sympy.true)]
        sols, earlier = [], []  # each linear piece of the table separately: a rational function of t
        for expr, cond in pieces:  # Piecewise semantics: a piece holds where its condition does and no earlier one
            for s in sympy.solve(sympy.Eq(expr, aft_limit), t):
                if s.is_real and 0 <= s <= 1 and bool(cond.subs(t, s)) and not any(bool(c.subs(t, s)) for c in earlier):
                    sols.append(s)
            earlier.append(cond)
        crossings.append(sorted(set(sols)))
    assert crossings[0] == []  # step 1 stays inside
    assert len(crossings[1]) == 1 and len(crossings[2]) == 1  # out in step 2, back in step 3
    w0, x0 = steps[0](0)
    w_end, x_end = steps[2](1)
    env = Polygon([(124.0, 1150.0), (124.0, 1450.0), (126.5, 1760.0), (132.0, 1760.0), (132.0, 1150.0)])
    assert env.covers(Point(float(x0), float(w0))) and env.covers(Point(float(x_end), float(w_end)))

    text = (ROOT / "fixtures" / "trainer-overweight.toml").read_text()
    led = ledger(text)
    report = check_ledger(led)
    q = next(s for s in report.sequences if s.name == "forward-tank-first")
    f = finding(q, "normal")
    assert not f.ok and f.first_broken_step == 2 and f.last_broken_step == 3
    # least margin: the end of step 2 (the CG moves aft through step 2, forward through step 3)
    w2, x2 = steps[1](1)
    assert f.step == 2 and f.state == q.steps[1].last
    assert f.margin == pytest.approx(float((aft_limit - x2) * IN), rel=1e-9)
    # the path holds a state on each exact crossing (sampled exactly, not stepped over)
    path = q.path
    for k, roots in ((2, crossings[1]), (3, crossings[2])):
        prog = path.progress[path.step == k]
        assert np.min(np.abs(prog - float(roots[0]))) < 1e-9
    # the states at the ends of the steps match the exact ones
    for k, st in enumerate(steps, start=1):
        w, x = st(1)
        i = q.steps[k - 1].last
        assert path.mass[i] == pytest.approx(float(w * LB), rel=1e-13)
        assert path.cg[i, 0] == pytest.approx(float(x * IN), rel=1e-12)
    assert not report.ok


NOTCH = '''steelyard = 1
[[item]]
id = "body"
mass = 1000.0
cg = [3.0, 0.0, 0.0]

[[item]]
id = "tank"
mass = 200.0
cg = [2.0, 0.0, 0.0]
variable = true

[[loadout]]
name = "full"
[loadout.set]
tank = 1.0

[[envelope]]
name = "notched"
axis = "x"
points = [[2.7, 900.0], [3.1, 900.0], [3.1, 1140.0], [2.85, 1142.0], [2.85, 1148.0], [3.1, 1150.0],
          [3.1, 1300.0], [2.7, 1300.0]]

[[sequence]]
name = "three-burns"
loadout = "full"
samples = 1

[[sequence.step]]
burn = { tank = 0.2 }

[[sequence.step]]
burn = { tank = 0.2 }

[[sequence.step]]
burn = { tank = "all" }
'''


def test_a_brief_excursion_between_samples_is_not_stepped_over():
    # With one sample per step every sampled state (step ends) is inside; the path itself dips into
    # the notch at 1,140..1,150 kg during step 2. Oracle: shapely on the exact path, densely sampled:
    # cg = (1000·3 + 200 f·2) / (1000 + 200 f) (FAA-H-8083-1 moments).
    poly = Polygon([(2.7, 900.0), (3.1, 900.0), (3.1, 1140.0), (2.85, 1142.0), (2.85, 1148.0), (3.1, 1150.0),
                    (3.1, 1300.0), (2.7, 1300.0)])
    ends = [F(1), F(8, 10), F(6, 10), F(0)]

    def pt(f):
        w = 1000 + 200 * f
        return float((3000 + 400 * f) / w), float(w)

    outside_steps = []
    for k in range(3):
        line = LineString([pt(ends[k] + (ends[k + 1] - ends[k]) * F(i, 2000)) for i in range(2001)])
        if not line.difference(poly).is_empty:
            outside_steps.append(k + 1)
        assert poly.covers(Point(*pt(ends[k + 1])))  # every step ends inside
    assert outside_steps == [2]
    led = ledger(NOTCH)
    q = check_ledger(led).sequences[0]
    f = finding(q, "notched")
    assert not f.ok and f.first_broken_step == 2 and f.last_broken_step == 2 and f.step == 2
    # without the envelope, the path is just the samples: the start and the three step ends
    assert len(build_path(led, "three-burns", envelopes=[])) == 4


# --------------------------------------------------------------------------- the path's arithmetic


def test_trainer_burn_path_matches_an_exact_roll_up_at_every_state():
    # fixtures/trainer.toml, trip-to-landing; the fills along the path are taken as given and the
    # mass and CG of all 54 items recomputed by moments with fractions.
    text = (ROOT / "fixtures" / "trainer.toml").read_text()
    data = tomllib.loads(text)
    led = ledger(text)
    path = sequence_path(led, "trip-to-landing")
    units = {"lb": F(1), "kg": 1 / LB, "gal": F(6)}
    fixed_w, fixed_m = exact_moments([(m, it["cg"]) for it, m in carried(data, "trip", units)
                                      if it["id"] not in ("fuel-l", "fuel-r")])
    tanks = {it["id"]: it for it in data["item"] if it["id"] in ("fuel-l", "fuel-r")}
    # proportional split of step 1 (1 gal over two tanks holding 16 gal each): half a gallon each
    assert path.fill[path.steps[0].last] == pytest.approx([F(31, 2) / 20] * 2, rel=1e-14)
    assert path.fill[-1] == pytest.approx([F(11, 2) / 20] * 2, rel=1e-14)  # 16 − 0.5 − 10 = 5.5 gal left
    for i in range(0, len(path), 7):
        w, mom = fixed_w, list(fixed_m)
        for j, item_id in enumerate(path.items):
            m = F(float(path.fill[i, j])) * F(tanks[item_id]["mass"])
            w += m
            mom = [mom[k] + m * F(tanks[item_id]["cg"][k]) for k in range(3)]
        assert path.mass[i] == pytest.approx(float(w * LB), rel=1e-13)
        np.testing.assert_allclose(path.cg[i], [float(c / w * IN) for c in mom], rtol=1e-12, atol=1e-12)


INERTIA = '''steelyard = 1
[[item]]
id = "core"
mass = 50.0
cg = [0.1, 0.0, -0.2]
inertia = { xx = 4.0, yy = 5.0, zz = 6.0, xy = 0.3 }

[[item]]
id = "tank"
mass = 30.0
cg = [1.0, 0.5, 0.2]
variable = true
shape = { kind = "sphere", radius = 0.3 }
cg_table = [[0.0, 0.8, 0.5, -0.1], [1.0, 1.0, 0.5, 0.2]]

[[item]]
id = "probe"
mass = 5.0
cg = [-1.0, 0.0, 0.0]
variable = true

[[loadout]]
name = "go"
[loadout.set]
tank = 1.0
probe = 1.0

[[sequence]]
name = "burn-and-drop"
loadout = "go"
samples = 4

[[sequence.step]]
burn = { tank = 0.75 }

[[sequence.step]]
remove = ["probe"]
'''


def test_path_inertia_by_the_parallel_axis_theorem():
    led = ledger(INERTIA)
    path = sequence_path(led, "burn-and-drop")
    inertia = path.inertia()
    core = np.array([[4.0, -0.3, 0.0], [-0.3, 5.0, 0.0], [0.0, 0.0, 6.0]])  # off-diagonal = −∫xy dm
    sphere = 0.4 * 30.0 * 0.3 ** 2 * np.eye(3)  # solid sphere 2/5 m r² (handbook), scaled with fill below
    for i in range(len(path)):
        f_tank, f_probe = path.fill[i]
        tank_cg = np.array([0.8, 0.5, -0.1]) + f_tank * np.array([0.2, 0.0, 0.3])  # the table, linear
        m = np.array([50.0, 30.0 * f_tank, 5.0 * f_probe])
        r = np.array([[0.1, 0.0, -0.2], tank_cg, [-1.0, 0.0, 0.0]])
        cg = m @ r / m.sum()
        d = r - cg
        want = core + f_tank * sphere + sum(mi * (di @ di * np.eye(3) - np.outer(di, di)) for mi, di in zip(m, d))
        assert path.mass[i] == pytest.approx(m.sum(), rel=1e-14)
        np.testing.assert_allclose(path.cg[i], cg, rtol=1e-12, atol=1e-14)
        np.testing.assert_allclose(inertia[i], want, rtol=1e-11, atol=1e-12)
    assert path.steps[1].first == path.steps[1].last == len(path) - 1  # a removal is one state
    assert path.fill[-1, 1] == 0.0 and path.fill[-1, 0] == pytest.approx(0.25, rel=1e-14)


STEPS = '''steelyard = 1
[units]
mass = "lb"
length = "in"
[[item]]
id = "body"
mass = 1000.0
cg = [100.0, 0.0, 0.0]
[[item]]
id = "a"
mass = 60.0
cg = [90.0, 0.0, 0.0]
density = "6 lb/gal"
variable = true
[[item]]
id = "b"
mass = 180.0
cg = [110.0, 0.0, 0.0]
density = "6 lb/gal"
variable = true
[[item]]
id = "ballast"
mass = 30.0
cg = [200.0, 0.0, 0.0]
variable = true
[[item]]
id = "guest"
mass = 250.0
cg = [120.0, 0.0, 0.0]
variable = true
[[item]]
id = "pod"
mass = 20.0
cg = [130.0, 0.0, 0.0]
removable = true
[[loadout]]
name = "start"
[loadout.set]
a = "10 gal"
b = "30 gal"
guest = "170 lb"
'''


def seq(steps: str, extra: str = "") -> str:
    return STEPS + f'\n[[sequence]]\nname = "s"\nloadout = "start"\n{extra}\n' + steps


def test_burn_in_proportion_then_leave_then_ballast_then_pod_off():
    text = seq('''
[[sequence.step]]
burn = ["a", "b"]
amount = "8 gal"

[[sequence.step]]
name = "guest leaves"
remove = ["guest"]

[[sequence.step]]
add = { ballast = "10 lb" }

[[sequence.step]]
remove = ["pod"]
''')
    path = sequence_path(ledger(text), "s")
    # 8 gal split in proportion to what each tank holds (10 : 30): 2 gal from a, 6 gal from b
    end1 = path.steps[0].last
    assert path.fill[end1, :2] == pytest.approx([F(60 - 12, 60), F(180 - 36, 180)], rel=1e-14)
    labels = [s.label for s in path.steps]
    assert labels[1] == "guest leaves" and labels[2] == "add ballast"
    # final state by moments: body, a 48 lb, b 144 lb, ballast 10 lb; guest and pod gone
    w = F(1000 + 48 + 144 + 10)
    x = F(1000 * 100 + 48 * 90 + 144 * 110 + 10 * 200) / w
    assert path.mass[-1] == pytest.approx(float(w * LB), rel=1e-14)
    assert path.cg[-1, 0] == pytest.approx(float(x * IN), rel=1e-13)
    assert list(path.step[-4:]) == [1, 2, 3, 4] and path.steps[3].items == ("pod",)


@pytest.mark.parametrize("steps,field,words", [
    ('[[sequence.step]]\nburn = { ghost = "1 gal" }\n', "step 1 burn.ghost", "unknown item 'ghost'"),
    ('[[sequence.step]]\nburn = { a = "11 gal" }\n', "step 1 burn.a", "more than the 60.00 lb"),
    ('[[sequence.step]]\nburn = { a = "6 gal" }\n[[sequence.step]]\nburn = { a = "5 gal" }\n',
     "step 2 burn.a", "holds at that point"),
    ('[[sequence.step]]\nburn = ["a", "b"]\namount = "41 gal"\n', "step 1 amount", "more than"),
    ('[[sequence.step]]\nburn = ["a", "b"]\n', "step 1 amount", "needs amount"),
    ('[[sequence.step]]\nburn = { body = 0.5 }\n', "step 1 burn.body", "fixed"),
    ('[[sequence.step]]\nremove = ["ballast"]\n', "step 1 remove.ballast", "not on board"),
    ('[[sequence.step]]\nadd = { guest = "100 lb" }\n', "step 1 add.guest", "room for"),
    ('[[sequence.step]]\nadd = { pod = 0.5 }\n', "step 1 add.pod", "whole"),
    ('[[sequence.step]]\nburn = { a = "1 gal" }\nremove = ["guest"]\n', "step 1", "exactly one"),
    ('[[sequence.step]]\ndrop = ["guest"]\n', "step 1 drop", "unknown key"),
    ('[[sequence.step]]\nburn = { a = "1 parsec" }\n', "step 1 burn.a", "mass or a volume"),
    ('', "step", "has no steps"),
])
def test_bad_steps_name_sequence_step_and_field(steps, field, words):
    with pytest.raises(SteelyardError) as e:
        check_ledger(ledger(seq(steps)))
    text = str(e.value)
    assert "sequence 's'" in text and field in text and words in text, text
    assert "\n" not in text


@pytest.mark.parametrize("extra,field,words", [
    ('samples = 0', "samples", "whole number"),
    ('end_condition = "cruise"', "end_condition", "ramp, takeoff, landing"),
    ('colour = "red"', "colour", "unknown key"),
])
def test_bad_sequence_keys(extra, field, words):
    with pytest.raises(SteelyardError) as e:
        check_ledger(ledger(seq('[[sequence.step]]\nburn = { a = "1 gal" }\n', extra)))
    assert "sequence 's'" in str(e.value) and field in str(e.value) and words in str(e.value)


def test_sequence_from_a_missing_loadout():
    text = seq('[[sequence.step]]\nburn = { a = "1 gal" }\n').replace('loadout = "start"\n\n', 'loadout = "nope"\n\n')
    with pytest.raises(SteelyardError, match="sequence 's': loadout: no loadout named 'nope'"):
        check_ledger(ledger(text))
