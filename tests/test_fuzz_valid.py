"""Generated valid ledgers: the loader accepts them and the roll-up invariants hold.

The strategy builds a ledger as a dict and writes it with tomli-w (an outside
TOML writer; tomllib, the reference parser, must read it back to the same
dict). While drawing, it keeps every value's exact SI meaning as a Fraction:
unit factors are the exact NIST SP 811 definitions (1 lb = 0.45359237 kg,
1 in = 0.0254 m, 1 ft = 0.3048 m, g_n = 9.80665 m/s², 1 US gal = 231 in³).

Invariants checked (sources beside each check):
- every item reads back to its SI value;
- total mass is the sum of carried masses (quantity × fill fraction);
- the CG is Σ moment / Σ mass (FAA-H-8083-1) and lies in the items' bounding box;
- the inertia about the CG is symmetric, positive semi-definite and physically
  realisable (each principal moment at most the sum of the other two);
- save -> reload gives identical items, loadouts and envelopes, and the same text.

Case counts: see `examples()` below; the default run is sized for CI and
STEELYARD_FUZZ=release (or STEELYARD_FUZZ_SCALE=N) multiplies every count
(docs/durability.md has the commands).
"""

from __future__ import annotations

import math
import os
import tomllib
from fractions import Fraction as F

import numpy as np
import tomli_w
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from scipy.spatial.transform import Rotation

from steelyard.core.loadout import resolve
from steelyard.core.rollup import rollup_state
from steelyard.core.shapes import SHAPE_PARAMS
from steelyard.core.status import envelope_results
from steelyard.io.ledger_file import open_ledger, save_ledger
from steelyard.io.ledger_read import ledger_from_data
from steelyard.io.ledger_write import ledger_to_toml
from steelyard.io.toml_read import parse_toml


def examples(n: int) -> int:
    """Per-test case count: n in the default run, times the release scale for long runs."""
    scale = os.environ.get("STEELYARD_FUZZ_SCALE")
    if scale is None:
        scale = "20" if os.environ.get("STEELYARD_FUZZ") == "release" else "1"
    return max(1, int(float(scale) * n))


FUZZ = dict(deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                                  HealthCheck.filter_too_much])

# Exact unit factors to SI (NIST SP 811, Appendix B: exact definitions).
LB, IN, FT, GAL = F("0.45359237"), F("0.0254"), F("0.3048"), F(231) * F("0.0254") ** 3
SLUG = LB * F("9.80665") / FT  # 1 slug = 1 lbf·s²/ft (derived, exact)
MASS = {"lb": LB, "kg": F(1), "g": F(1, 1000)}
LENGTH = {"in": IN, "m": F(1), "mm": F(1, 1000), "ft": FT}
INERTIA = {f"{m}*{l}**2": MASS[m] * LENGTH[l] ** 2 for m in MASS for l in LENGTH} | {"slug*ft**2": SLUG * FT ** 2}
DENSITY = {"kg/m**3": F(1), "kg/L": F(1000), "lb/gal": LB / GAL}
VOLUME = {"L": F(1, 1000), "m**3": F(1), "gal": GAL}

# Body-frame words as vectors of one right-handed basis (fwd, right, down): the
# usual aircraft body axes x forward, y right wing, z down (common practice).
DIRECTION = {"fwd": (1, 0, 0), "aft": (-1, 0, 0), "right": (0, 1, 0), "left": (0, -1, 0),
             "down": (0, 0, 1), "up": (0, 0, -1)}
WORD = {v: k for k, v in DIRECTION.items()}


def numbers(lo: float, hi: float) -> st.SearchStrategy:
    return st.one_of(st.floats(lo, hi, allow_nan=False, allow_infinity=False),
                     st.integers(math.ceil(lo), math.floor(hi)),
                     st.sampled_from([v for v in (0.0, 1e-9, 0.1, 1.0, 2.5, 1e3) if lo <= v <= hi]))


def written(draw, value, units: dict, file_unit: str, *, as_string_ok: bool = True):
    """A number as the file holds it (bare, in the file's unit, or a string with a unit) and its exact SI."""
    if as_string_ok and draw(st.integers(0, 3)) == 0:
        unit = draw(st.sampled_from(sorted(units)))
        return f"{value!r} {unit}", F(value) * units[unit]
    return value, F(value) * units[file_unit]


def si_in(draw, si: float, units: dict, file_unit: str):
    """An SI value written bare in the file's unit or as a string in another: (toml, exact SI)."""
    unit = draw(st.sampled_from(sorted(units))) if draw(st.booleans()) else None
    factor = units[unit or file_unit]
    v = float(F(si) / factor)
    return (v if unit is None else f"{v!r} {unit}"), F(v) * factor


@st.composite
def frames(draw):
    x = draw(st.sampled_from(sorted(DIRECTION)))
    y = draw(st.sampled_from(sorted(d for d, v in DIRECTION.items() if np.dot(v, DIRECTION[x]) == 0)))
    z = WORD[tuple(int(c) for c in np.cross(DIRECTION[x], DIRECTION[y]))]  # right-handed: z = x × y
    return {"x": x, "y": y, "z": z}


@st.composite
def inertia_tables(draw, file_unit: str):
    """Own inertia of a realisable body: second moments s ≥ 0 turned by a random rotation.

    The tensor is I = tr(S)·E − S with S = R diag(s) Rᵀ, and the products as
    integrals are the off-diagonal entries of S (DESIGN.md convention).
    """
    scale = draw(st.sampled_from([1e-6, 1e-3, 1.0, 1e3]))
    s = np.array(draw(st.lists(st.floats(0, 100), min_size=3, max_size=3))) * scale
    q = np.array(draw(st.lists(st.floats(-1, 1), min_size=4, max_size=4)))
    assume(np.linalg.norm(q) > 0.1)
    r = Rotation.from_quat(q / np.linalg.norm(q)).as_matrix()
    smat = r @ np.diag(s) @ r.T
    smat = 0.5 * (smat + smat.T)
    tensor = np.trace(smat) * np.eye(3) - smat
    six = {"xx": tensor[0, 0], "yy": tensor[1, 1], "zz": tensor[2, 2],
           "xy": smat[0, 1], "xz": smat[0, 2], "yz": smat[1, 2]}
    out = {}
    for k, v in six.items():
        if k in ("xy", "xz", "yz") and v == 0 and draw(st.booleans()):
            continue  # products default to zero
        out[k], _ = si_in(draw, float(v), INERTIA, file_unit)
    return out


@st.composite
def shapes(draw, file_unit: str):
    kind = draw(st.sampled_from(sorted(SHAPE_PARAMS)))
    spec = SHAPE_PARAMS[kind]
    dims = {k: draw(st.floats(1e-3, 1e3)) for k in spec}
    for inner, outer in (("inner_radius", "outer_radius"), ("minor_radius", "major_radius")):
        if inner in dims:  # hollow kinds: the inner size strictly inside the outer one
            dims[inner] = dims[outer] * draw(st.one_of(st.just(0.0), st.floats(0, 0.999)))
            if inner == "minor_radius" and dims[inner] == 0:
                dims[inner] = dims[outer] * 0.5
    out: dict = {"kind": kind}
    for k, dim in spec.items():
        if dim == "length":
            out[k], _ = si_in(draw, dims[k] * float(LENGTH[file_unit]), LENGTH, file_unit)
        else:
            n = 2 if dim == "length2" else 3
            out[k] = [draw(st.floats(1e-3, 1e3)) for _ in range(n)]
    if draw(st.booleans()):
        out["axis"] = draw(st.sampled_from("xyz"))
    return out


@st.composite
def ledgers(draw, max_items: int = 10):
    """(document dict, expectations): a valid v1 ledger and the exact SI values it means."""
    units = {"mass": draw(st.sampled_from(sorted(MASS))), "length": draw(st.sampled_from(sorted(LENGTH))),
             "inertia": draw(st.sampled_from(sorted(INERTIA)))}
    doc: dict = {"steelyard": 1}
    if units != {"mass": "kg", "length": "m", "inertia": "kg*m**2"} or draw(st.booleans()):
        doc["units"] = dict(units)
    if draw(st.booleans()):
        doc["frame"] = draw(frames())
    ids = draw(st.lists(st.text(min_size=1, max_size=10).filter(str.strip), min_size=1, max_size=max_items,
                        unique=True))
    dens_unit = f"({units['mass']})/({units['length']})**3"
    dens_factor = MASS[units["mass"]] / LENGTH[units["length"]] ** 3
    items, expect = [], []
    for ident in ids:
        it: dict = {"id": ident}
        if draw(st.booleans()):
            it["name"] = draw(st.text(max_size=20))
        if draw(st.booleans()):
            it["group"] = "/".join(draw(st.lists(st.text(min_size=1, max_size=6), min_size=1, max_size=4)))
        it["mass"], mass = written(draw, draw(numbers(0, 1e5)), MASS, units["mass"])
        cg = []
        it["cg"] = []
        for _ in range(3):
            v, c = written(draw, draw(numbers(-1e4, 1e4)), LENGTH, units["length"])
            it["cg"].append(v)
            cg.append(c)
        q = draw(st.integers(1, 50)) if draw(st.integers(0, 3)) == 0 else 1
        if q != 1 or draw(st.integers(0, 5)) == 0:
            it["quantity"] = q
        own = draw(st.sampled_from(["none", "inertia", "shape"]))
        if own == "inertia":
            it["inertia"] = draw(inertia_tables(units["inertia"]))
        elif own == "shape":
            it["shape"] = draw(shapes(units["length"]))
        if own != "none" and draw(st.booleans()):
            it["rotate"] = [[draw(st.sampled_from("xyz")), draw(st.floats(-360, 360))]
                            for _ in range(draw(st.integers(1, 3)))]
        variable = draw(st.integers(0, 2)) == 0
        density = None
        if variable:
            it["variable"] = True
            if draw(st.booleans()):
                d = draw(st.floats(1e-2, 1e4))
                if draw(st.booleans()):
                    unit = draw(st.sampled_from(sorted(DENSITY)))
                    it["density"], density = f"{d!r} {unit}", F(d) * DENSITY[unit]
                else:
                    it["density"], density = d, F(d) * dens_factor
        if draw(st.integers(0, 5)) == 0:
            it["part_number"] = draw(st.text(max_size=8))  # an unknown key: kept as is
        items.append(it)
        expect.append({"mass": mass, "cg": cg, "quantity": q, "variable": variable, "density": density})
    doc["item"] = items
    var = [k for k, e in enumerate(expect) if e["variable"]]
    names = draw(st.lists(st.text(min_size=1, max_size=8).filter(str.strip), max_size=3, unique=True))
    loadouts, fills = [], {}
    for j, name in enumerate(names):
        lo: dict = {"name": name}
        base = draw(st.sampled_from([None] + names[:j]))
        fill = dict(fills[base]) if base is not None else {}
        if base is not None:
            lo["base"] = base
        chosen = draw(st.lists(st.sampled_from(var), unique=True)) if var else []
        sets = {}
        for k in chosen:
            e = expect[k]
            full = e["mass"] * e["quantity"]
            u = F(draw(st.floats(0, 0.999)))
            how = draw(st.sampled_from(["fraction", "mass", "volume"] if e["density"] else ["fraction", "mass"]))
            if how == "fraction":
                sets[ids[k]], fill[k] = float(u), F(float(u))
            elif how == "mass":
                unit = draw(st.sampled_from(sorted(MASS)))
                x = float(full * u / MASS[unit])
                sets[ids[k]] = f"{x!r} {unit}"
                fill[k] = F(x) * MASS[unit] / full if full else F(0)
            else:
                unit = draw(st.sampled_from(sorted(VOLUME)))
                x = float(full * u / e["density"] / VOLUME[unit])
                sets[ids[k]] = f"{x!r} {unit}"
                fill[k] = F(x) * VOLUME[unit] * e["density"] / full if full else F(0)
        lo["set"] = sets
        loadouts.append(lo)
        fills[name] = fill
    if loadouts:
        doc["loadout"] = loadouts
    if draw(st.booleans()):
        c0, m0 = draw(st.floats(-1e3, 1e3)), draw(st.floats(1e-2, 1e5))
        dc, dm = draw(st.floats(1e-2, 1e3)), draw(st.floats(1e-2, 1e5))
        doc["envelope"] = [{"name": "normal", "axis": draw(st.sampled_from("xyz")),
                            "points": [[c0, m0], [c0, m0 + dm], [c0 + dc, m0 + dm], [c0 + dc, m0]]}]
    if draw(st.integers(0, 4)) == 0:
        doc["notes"] = {"author": draw(st.text(max_size=10)), "rev": draw(st.integers(0, 99))}
    return doc, {"items": expect, "fills": fills, "names": names}


def load_text(text: str, source: str = "fuzz.toml"):
    return ledger_from_data(parse_toml(text, source=source), source=source)


def close(a: float, b: F, rel: float = 1e-14) -> bool:
    b = float(b)
    return abs(a - b) <= rel * abs(b) + 1e-300


def check_rollup(ledger, expect, name):
    """Roll-up invariants for one loadout (None: variable items empty)."""
    fill = expect["fills"].get(name, {}) if name is not None else {}
    carried = []  # (exact carried mass, exact CG) per item
    for k, e in enumerate(expect["items"]):
        f = F(1) if not e["variable"] else fill.get(k, F(0))
        carried.append((e["mass"] * e["quantity"] * f, e["cg"]))
    mp = rollup_state(resolve(ledger, name))
    total = sum(m for m, _ in carried)
    # mass = Σ m·q·f (the fill fractions as the file states them); exact Fractions as the reference
    assert close(mp.mass, total, 1e-12), (mp.mass, float(total))
    envelope_results(ledger, mp)  # must not fail on any valid ledger
    if total == 0:
        assert np.isnan(mp.cg).all()
        return
    moving = [(m, c) for m, c in carried if m > 0]
    for ax in range(3):
        # CG = Σ moment / Σ weight (FAA-H-8083-1), exact, and inside the bounding box of the items carried
        exact = sum(m * c[ax] for m, c in moving) / total
        lo, hi = min(c[ax] for _, c in moving), max(c[ax] for _, c in moving)
        tol = 1e-12 * float(max(abs(lo), abs(hi), hi - lo)) + 1e-300
        assert abs(mp.cg[ax] - float(exact)) <= tol, (ax, mp.cg[ax], float(exact))
        assert float(lo) - tol <= mp.cg[ax] <= float(hi) + tol
    t = mp.inertia_cg
    assert np.array_equal(t, t.T)
    moments = np.linalg.eigvalsh(t)  # numpy's symmetric eigen-solver as the reference
    tol = 1e-10 * max(float(np.trace(t)), 0.0) + 1e-300
    assert moments.min() >= -tol, moments  # positive semi-definite
    a, b, c = moments
    assert c <= a + b + tol, moments  # triangle inequality: I3 ≤ I1 + I2 (REFERENCES.md, realisability)


@settings(max_examples=examples(1200), **FUZZ)
@given(ledgers())
def test_valid_ledgers_load_and_roll_up(case):
    doc, expect = case
    text = tomli_w.dumps(doc)
    assert tomllib.loads(text) == doc  # the generator writes what it means (tomllib as the reference)
    ledger = load_text(text)
    assert len(ledger.items) == len(expect["items"])
    for item, e in zip(ledger.items, expect["items"]):
        assert close(item.mass, e["mass"]) and item.quantity == e["quantity"] and item.variable == e["variable"]
        assert all(close(a, b) for a, b in zip(item.cg, e["cg"]))
    for name in [None] + expect["names"]:
        check_rollup(ledger, expect, name)


@settings(max_examples=examples(1200), **FUZZ)
@given(ledgers())
def test_save_and_reload_gives_identical_ledger(case):
    doc, _ = case
    ledger = load_text(tomli_w.dumps(doc))
    text = ledger_to_toml(ledger)
    assert tomllib.loads(text)["steelyard"] == 1  # what we write is TOML to the reference parser
    again = load_text(text, "saved.toml")
    assert again.items == ledger.items
    assert again.loadouts == ledger.loadouts and again.envelopes == ledger.envelopes
    assert [list(lo.set) for lo in again.loadouts] == [list(lo.set) for lo in ledger.loadouts]
    assert (again.units, again.frame, again.extra) == (ledger.units, ledger.frame, ledger.extra)
    assert ledger_to_toml(again) == text  # canonical: the same ledger gives the same bytes


@settings(max_examples=examples(150), **FUZZ)
@given(ledgers(max_items=4))
def test_on_disk_save_and_reload(case, tmp_path_factory):
    doc, _ = case
    folder = tmp_path_factory.mktemp("disk")
    src = folder / "in.toml"
    src.write_text(tomli_w.dumps(doc), encoding="utf-8")
    loaded = open_ledger(src)
    out = folder / "out.toml"
    record = save_ledger(out, loaded.ledger)
    again = open_ledger(out)
    assert again.ledger.items == loaded.ledger.items and again.sha256 == record.sha256
