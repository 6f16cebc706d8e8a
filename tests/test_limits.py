"""Other limits: mass per condition (zero fuel included), inertia bounds, CG offset from a line;
%MAC and %MAC envelopes; scoping (`conditions`, `loadouts`, `sequences`).

Expected values come from the file text through an independent exact roll-up
(tomllib + fractions; CG = Σ moment / Σ weight, FAA-H-8083-1; NIST SP 811
exact factors), the %MAC definition (CG − LEMAC) / MAC × 100 (FAA-H-8083-1),
the zero-fuel mass as the loading with its usable fuel removed (common
practice), the parallel-axis theorem for inertia (REFERENCES.md), and shapely
for envelope chords.
"""

from __future__ import annotations

import math
import tomllib
from fractions import Fraction as F

import numpy as np
import pytest
from shapely.geometry import LineString, Polygon

from steelyard.core.limits.checks import check_ledger
from steelyard.core.errors import SteelyardError
from steelyard.core.limits.rules import envelope_specs, limit_specs, mac_reference
from steelyard.core.limits.status import envelope_results
from steelyard.core.loading.loadout import resolve
from steelyard.core.physics.rollup import rollup_state
from steelyard.io.ledger.read import ledger_from_data
from support.paths import ROOT
from support.units import IN, LB



def ledger(text: str):
    return ledger_from_data(tomllib.loads(text), source="test.toml")


def _num(v, gal_density=None) -> F:
    """A bare number, or '<n> lb' / '<n> gal' (at 6 lb/gal, the file's density) in lb."""
    if isinstance(v, str):
        n, unit = v.split()
        return F(n) * {"lb": F(1), "gal": F(gal_density or 0)}[unit]
    return F(v)


def exact_state(data: dict, name: str, zero_fuel: bool = False) -> tuple[F, list[F]]:
    """Mass (lb) and CG (in) of a loadout from the file text: bases, `off`, fractions, lb, gal, cg tables."""
    chain, n = [], name
    while n:
        lo = next(x for x in data["loadout"] if x["name"] == n)
        chain.insert(0, lo)
        n = lo.get("base")
    sets, off = {}, set()
    for lo in chain:
        sets.update(lo.get("set", {}))
        off |= set(lo.get("off", []))
        off -= set(lo.get("on", []))
    fuel = tuple(data.get("fuel", {}).get("groups", []))
    w, mom = F(0), [F(0)] * 3
    for it in data["item"]:
        full = F(it["mass"]) * it.get("quantity", 1)
        if it.get("variable"):
            a = sets.get(it["id"], 0)
            dens = F(it["density"].split()[0]) if "density" in it else None
            m = _num(a, dens) if isinstance(a, str) else full * F(a)
            if zero_fuel and it.get("group", "").startswith(fuel):
                m = F(0)
        else:
            m = F(0) if it["id"] in off else full
        cg = [F(c) for c in it["cg"]]
        if "cg_table" in it and full:
            f, rows = m / full, [[F(v) for v in r] for r in it["cg_table"]]
            for a_, b_ in zip(rows, rows[1:]):
                if a_[0] <= f <= b_[0]:
                    u = (f - a_[0]) / (b_[0] - a_[0])
                    cg = [a_[k] + u * (b_[k] - a_[k]) for k in (1, 2, 3)]
                    break
            else:
                cg = rows[0][1:]
        w += m
        mom = [mom[k] + m * cg[k] for k in range(3)]
    return w, [c / w for c in mom]


OVER = ROOT / "fixtures" / "trainer-overweight.toml"


@pytest.fixture(scope="module")
def over():
    text = OVER.read_text()
    return tomllib.loads(text), check_ledger(ledger(text))


def state(report, name):
    return next(s for s in report.states if s.name == name)


def finding(s, name):
    return next(f for f in s.findings if f.name == name)


# --------------------------------------------------------------------------- mass per condition


def test_takeoff_mass_broken_while_zero_fuel_mass_is_fine(over):
    data, report = over
    w, _ = exact_state(data, "ferry")
    wz, _ = exact_state(data, "ferry", zero_fuel=True)
    # the file's limits: 1,760 lb at take-off, 1,650 lb at zero fuel
    assert w > 1760 and wz <= 1650
    to, zf = state(report, "ferry"), state(report, "ferry (zero fuel)")
    f = finding(to, "max-takeoff-mass")
    assert f.applies and not f.ok
    assert f.margin == pytest.approx(float((1760 - w) * LB), rel=1e-12)
    g = finding(zf, "max-zero-fuel-mass")
    assert g.applies and g.ok and g.margin == pytest.approx(float((1650 - wz) * LB), rel=1e-12)
    # each mass limit is only checked where its condition is: not the zero-fuel limit at take-off
    assert not finding(to, "max-zero-fuel-mass").applies and not finding(zf, "max-takeoff-mass").applies


def test_zero_fuel_mass_broken_while_takeoff_mass_is_fine(over):
    data, report = over
    w, _ = exact_state(data, "heavy-cabin")
    wz, _ = exact_state(data, "heavy-cabin", zero_fuel=True)
    assert w <= 1760 and wz > 1650
    assert finding(state(report, "heavy-cabin"), "max-takeoff-mass").ok
    g = finding(state(report, "heavy-cabin (zero fuel)"), "max-zero-fuel-mass")
    assert not g.ok and g.margin == pytest.approx(float((1650 - wz) * LB), rel=1e-12)
    assert not report.ok


def test_every_state_of_the_overweight_file_matches_the_exact_roll_up(over):
    data, report = over
    for s in report.states:
        w, cg = exact_state(data, s.loadout, zero_fuel=s.kind == "zero-fuel")
        assert s.mass == pytest.approx(float(w * LB), rel=1e-13), s.name
        np.testing.assert_allclose(s.cg, [float(c * IN) for c in cg], rtol=1e-12, atol=1e-12, err_msg=s.name)
        # %MAC = (CG − LEMAC) / MAC × 100 with the file's [mac] (FAA-H-8083-1)
        assert s.percent_mac == pytest.approx(float((cg[0] - 114) / 60 * 100), rel=1e-11)


def test_mass_exactly_on_a_limit_is_within_it():
    # a limit is a maximum: equal is allowed (the boundary counts, as for envelopes)
    text = '''steelyard = 1
[units]
mass = "lb"
length = "in"
[[item]]
id = "a"
mass = 1000.0
cg = [100.0, 0.0, 0.0]
[[item]]
id = "b"
mass = 760.0
cg = [120.0, 0.0, 0.0]
[[limit]]
name = "mtow"
max_mass = 1760.0
'''
    s = check_ledger(ledger(text)).states[0]
    assert s.findings[0].ok and abs(s.findings[0].margin) < 1e-9


# --------------------------------------------------------------------------- envelopes: range and scope


def test_a_loadout_above_an_envelopes_mass_range_breaks_it(over):
    # docs/check.md: above the polygon's top the state is outside it (shapely: the point is not covered)
    data, report = over
    w, cg = exact_state(data, "ferry")
    env = next(e for e in data["envelope"] if e["name"] == "normal")
    assert not Polygon(env["points"]).covers(LineString([(float(cg[0]), float(w)), (float(cg[0]), float(w))]))
    f = finding(state(report, "ferry"), "normal")
    assert f.applies and not f.ok and f.lo is None and f.note == "above range"


def test_envelope_scoped_to_a_loadout_is_not_checked_on_the_others():
    # the trainer's utility envelope applies to solo-training only (loadouts = [...])
    report = check_ledger(ledger((ROOT / "fixtures" / "trainer.toml").read_text()))
    assert report.ok
    for s in report.states:
        f = finding(s, "utility")
        assert f.applies == (s.loadout == "solo-training"), s.name
    # the heavy loadouts really are above utility's 1,600 lb top (fixtures/README.md table): shapely
    heavy = [s for s in report.states if s.kind == "loadout" and s.mass > float(1600 * LB)]
    assert len(heavy) == 4


def test_scope_by_condition_and_by_sequence():
    text = (OVER.read_text() + '''
[[envelope]]
name = "landing-only"
axis = "x"
points = [[125.0, 1150.0], [125.0, 1760.0], [131.0, 1760.0], [131.0, 1150.0]]
conditions = ["landing"]

[[limit]]
name = "seq-only"
max_mass = 1000.0
sequences = ["forward-tank-first"]
''').replace('loadout = "aft-loaded"\n', 'loadout = "aft-loaded"\nend_condition = "landing"\n')
    report = check_ledger(ledger(text))
    assert all(not finding(s, "landing-only").applies for s in report.states)  # all take-off / zero-fuel
    assert all(not finding(s, "seq-only").applies for s in report.states)
    q = report.sequences[0]
    f = finding(q, "landing-only")
    assert f.applies and f.state == len(q.path) - 1  # only the last state is a landing
    g = finding(q, "seq-only")
    assert g.applies and not g.ok and g.broken_states == len(q.path)


@pytest.mark.parametrize("extra,words", [
    ('conditions = ["cruise"]', "'cruise' is not one of ramp, takeoff, landing, zero-fuel"),
    ('loadouts = ["nobody"]', "'nobody' is not a loadout of this file"),
    ('sequences = ["nothing"]', "'nothing' is not a sequence of this file"),
    ('loadouts = "within-limits"\nmax_mas = 3.0', "unknown key 'max_mas'"),
    ('min_mass = 1800.0', "min_mass is above max_mass"),
    ('conditions = []', "non-empty list"),
    ('max_inertia = { xx = 1.0 }', "one kind of limit"),
])
def test_bad_limit_keys_name_the_limit(extra, words):
    text = OVER.read_text() + f'\n[[limit]]\nname = "odd"\nmax_mass = 1700.0\n{extra}\n'
    with pytest.raises(SteelyardError) as e:
        check_ledger(ledger(text))
    assert "limit 'odd'" in str(e.value) and words in str(e.value)


# --------------------------------------------------------------------------- inertia and CG offset

POINTS = '''steelyard = 1
[[item]]
id = "a"
mass = 2.0
cg = [1.0, 0.0, 0.0]
[[item]]
id = "b"
mass = 6.0
cg = [-1.0, 2.0, 0.5]
[[item]]
id = "c"
mass = 4.0
cg = [0.5, -1.0, 1.0]
'''


def point_inertia():
    """Inertia about the CG of three point masses, by definition (I = Σ m(|d|²E − d dᵀ))."""
    m = np.array([2.0, 6.0, 4.0])
    r = np.array([[1.0, 0.0, 0.0], [-1.0, 2.0, 0.5], [0.5, -1.0, 1.0]])
    cg = m @ r / m.sum()
    d = r - cg
    return cg, sum(mi * (di @ di * np.eye(3) - np.outer(di, di)) for mi, di in zip(m, d))


def test_inertia_limits_on_moments_and_products():
    cg, i = point_inertia()
    ixx, izz, pxy = i[0, 0], i[2, 2], -i[0, 1]  # products as integrals: the tensor holds −∫xy dm
    text = POINTS + f'''
[[limit]]
name = "roll"
max_inertia = {{ xx = {float(ixx * 1.01)!r} }}
min_inertia = {{ xx = {float(ixx * 0.99)!r} }}
[[limit]]
name = "yaw"
max_inertia = {{ zz = {float(izz * 0.9)!r} }}
[[limit]]
name = "product"
min_inertia = {{ xy = {float(pxy + abs(pxy) * 0.5)!r} }}
'''
    s = check_ledger(ledger(text)).states[0]
    roll, yaw, prod = (finding(s, n) for n in ("roll", "yaw", "product"))
    assert roll.ok and roll.value == pytest.approx(ixx, rel=1e-12) and roll.axis == "xx"
    assert roll.margin == pytest.approx(0.01 * ixx, rel=1e-9)
    assert not yaw.ok and yaw.margin == pytest.approx(-0.1 * izz, rel=1e-9)
    assert not prod.ok and prod.value == pytest.approx(pxy, rel=1e-12) and prod.axis == "xy"


def test_cg_offset_from_a_line():
    cg, _ = point_inertia()
    # distance from the line along x through (y, z) = (0.1, 0.2): hypot of the y and z offsets
    r = math.hypot(cg[1] - 0.1, cg[2] - 0.2)
    text = POINTS + f'''
[[limit]]
name = "adapter"
max_cg_offset = {r * 1.5!r}
axis = "x"
through = [0.1, 0.2]
[[limit]]
name = "tight"
max_cg_offset = "{r * 1000 * 0.5!r} mm"
axis = "x"
through = [0.1, 0.2]
'''
    s = check_ledger(ledger(text)).states[0]
    a, t = finding(s, "adapter"), finding(s, "tight")
    assert a.ok and a.value == pytest.approx(r, rel=1e-12) and a.margin == pytest.approx(0.5 * r, rel=1e-9)
    assert not t.ok and t.margin == pytest.approx(-0.5 * r, rel=1e-9)


def test_cargo_drone_offset_from_the_thrust_axis():
    # the drone's limit: within 25 mm of the z axis through the hub; offset = hypot(x, y) of the CG
    text = (ROOT / "fixtures" / "cargo-drone.toml").read_text()
    led = ledger(text)
    report = check_ledger(led)
    for s in report.states:
        f = finding(s, "thrust-axis-offset")
        assert f.value == pytest.approx(math.hypot(s.cg[0], s.cg[1]), rel=1e-12)
        assert f.ok == (f.value <= 0.025)
    assert report.ok


# --------------------------------------------------------------------------- %MAC


def test_percent_mac_of_the_trainer_takeoff():
    # FAA-H-8083-1: %MAC = (CG − LEMAC) / MAC × 100; LEMAC FS 114.0, MAC 60.0 in (fixtures/README.md)
    led = ledger((ROOT / "fixtures" / "trainer.toml").read_text())
    mac = mac_reference(led)
    assert mac.lemac == pytest.approx(float(114 * IN)) and mac.length == pytest.approx(float(60 * IN))
    cg = rollup_state(resolve(led, "takeoff")).cg[0]
    assert mac.percent(cg) == pytest.approx((cg / float(IN) - 114) / 60 * 100, rel=1e-12)


MAC_LEDGER = '''steelyard = 1
[units]
mass = "lb"
length = "in"
[frame]
x = "{x}"
y = "{y}"
z = "up"
[mac]
lemac = 60.0
length = 50.0
[[item]]
id = "a"
mass = 1500.0
cg = [{cg}, 0.0, 0.0]
[[envelope]]
name = "pct"
axis = "x"
units = "%mac"
points = [[15.0, 1000.0], [15.0, 1400.0], [20.0, 2000.0], [35.0, 2000.0], [35.0, 1000.0]]
'''


@pytest.mark.parametrize("x,y,sign", [("aft", "right", 1), ("fwd", "left", -1)])
def test_percent_mac_envelope_is_converted_to_stations(x, y, sign):
    # station = LEMAC + %MAC/100 × MAC aft of LEMAC (the definition solved for the station); with +x
    # forward, "aft of LEMAC" is −x. The chord at 1,500 lb from shapely on the converted polygon.
    cg = 60 + sign * F("14.5")  # 29 %MAC in either frame
    led = ledger(MAC_LEDGER.format(x=x, y=y, cg=float(cg)))
    pts = [(float((60 + sign * F(p) / 100 * 50) * IN), float(m * LB)) for p, m in
           [(15, 1000), (15, 1400), (20, 2000), (35, 2000), (35, 1000)]]
    np.testing.assert_allclose(envelope_specs(led)[0].points, pts, rtol=1e-13)
    poly = Polygon(pts)
    chord = poly.intersection(LineString([(0, float(1500 * LB)), (10, float(1500 * LB))]))
    lo, hi = chord.bounds[0], chord.bounds[2]
    r = envelope_results(led, rollup_state(resolve(led, None)))[0]
    assert r.inside and (r.lo, r.hi) == pytest.approx((lo, hi), rel=1e-12)
    s = check_ledger(led).states[0]
    assert s.percent_mac == pytest.approx(29.0, rel=1e-12)


@pytest.mark.parametrize("change,subject,words", [
    (("[mac]\nlemac = 60.0\nlength = 50.0\n", ""), "envelope 'pct'", "needs the file's [mac]"),
    (("length = 50.0", "length = 0.0"), "mac", "greater than zero"),
    (("length = 50.0", "lengths = 50.0"), "mac", "unknown key"),
    (('units = "%mac"', 'units = "percent"'), "envelope 'pct'", "units"),
    (('axis = "x"\nunits', 'axis = "y"\nunits'), "envelope 'pct'", "x axis"),
    (('x = "aft"\ny = "right"\nz = "up"', 'x = "up"\ny = "right"\nz = "fwd"'), "mac", "fwd or aft"),
])
def test_bad_mac_keys_are_located(change, subject, words):
    text = MAC_LEDGER.format(x="aft", y="right", cg=74.5).replace(*change)
    with pytest.raises(SteelyardError) as e:
        check_ledger(ledger(text))
    assert subject in str(e.value) and words in str(e.value)


def test_limits_are_read_once_per_ledger():
    # the parse is kept with the (immutable) ledger: the same objects come back
    led = ledger(OVER.read_text())
    assert limit_specs(led) is limit_specs(led) and envelope_specs(led) is envelope_specs(led)
    assert [x.name for x in limit_specs(led)] == ["max-takeoff-mass", "max-zero-fuel-mass"]
