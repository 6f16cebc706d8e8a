"""`steelyard diff` and `steelyard.core.history.diff`: matching, tolerances, totals, envelopes, ranking.

Expected values are recomputed in the test, never read from the program:
- unit factors: NIST SP 811 exact definitions (1 lb = 0.45359237 kg,
  1 in = 0.0254 m, 1 ft = 12 in = 0.3048 m);
- totals: each side rolled up on its own with exact fractions (CG = Σ m·r / Σ m,
  FAA-H-8083-1; inertia about the CG by the parallel-axis theorem in tensor
  form, I = Σ own + Σ m (|d|² E − d dᵀ), Goldstein ch. 5, chapter from memory);
- own inertia of a box m(b² + c²)/12 … (handbook table of moments of inertia);
- one item's effect on the CG: "weight added or removed: weight changed / new
  total = ΔCG / (station − old CG)" (FAA-H-8083-1), applied per axis;
- principal moments: scipy.linalg.eigvalsh of the exact tensor;
- envelope chord and inside test: shapely 2 (`intersection`, `covers`).
"""

from __future__ import annotations

import json
import random
import shutil
from fractions import Fraction as F
from pathlib import Path

import numpy as np
import pytest
import scipy.linalg
from shapely.geometry import LineString, Point, Polygon

from steelyard.core.history.diff import ULPS, close, compare
from steelyard.io.ledger.file import load_ledger
from support.cli import one_line_error, run_main, run_process
from support.paths import ROOT, TRAINER
from support.units import IN, LB

MASS = {"kg": F(1), "lb": LB}
LENGTH = {"m": F(1), "in": IN, "ft": 12 * IN, "mm": F(1, 1000)}
INERTIA = {"kg*m**2": F(1), "lb*in**2": LB * IN * IN}
SYSTEMS = [("kg", "m", "kg*m**2"), ("lb", "in", "lb*in**2")]


# --------------------------------------------------------------------------- random ledgers


class Value:
    """A number as the test writes it (text) and its exact SI value."""

    def __init__(self, number: str, unit: str, table: dict, file_unit: str):
        self.exact = F(number) * table[unit]
        self.text = number if unit == file_unit else f'"{number} {unit}"'


def dec(rng, lo, hi, places=3) -> str:
    return f"{rng.uniform(lo, hi):.{places}f}"


def new_item(rng, k, units, variable=False) -> dict:
    mu, lu, iu = units
    it = {"id": f"part-{k:03d}", "name": f"Part {k}", "group": rng.choice(["a", "a/b", "c", ""]),
          "quantity": 1 if variable or rng.random() < 0.7 else rng.randint(2, 4), "variable": variable}
    it["mass"] = (dec(rng, 0.2, 40.0), mu)
    it["cg"] = [(dec(rng, 1.0, 9.0) if lu == "m" else dec(rng, 40, 350, 2), lu),
                (dec(rng, -1.0, 1.0) if lu == "m" else dec(rng, -40, 40, 2), lu),
                (dec(rng, -0.5, 1.5) if lu == "m" else dec(rng, -20, 60, 2), lu)]
    it["inertia"] = it["box"] = None
    r = rng.random()
    if r < 0.3:  # diagonal in 1…1.9 and products within ±0.1 (× scale): positive definite, realisable
        s = 1.0 if iu == "kg*m**2" else 3000.0
        it["inertia"] = {k2: (dec(rng, 1.0 * s, 1.9 * s), iu) for k2 in ("xx", "yy", "zz")}
        it["inertia"].update({k2: (dec(rng, -0.1 * s, 0.1 * s), iu) for k2 in ("xy", "xz", "yz")})
    elif r < 0.45:
        it["box"] = [(dec(rng, 0.05, 0.8) if lu == "m" else dec(rng, 2, 30, 2), lu) for _ in range(3)]
    return it


def exact_of(it) -> dict:
    """Exact SI values of one written item."""
    m = F(it["mass"][0]) * MASS[it["mass"][1]]
    cg = [F(n) * LENGTH[u] for n, u in it["cg"]]
    own = [[F(0)] * 3 for _ in range(3)]
    if it["inertia"]:
        v = {k: F(n) * INERTIA[u] for k, (n, u) in it["inertia"].items()}
        own = [[v["xx"], -v["xy"], -v["xz"]], [-v["xy"], v["yy"], -v["yz"]], [-v["xz"], -v["yz"], v["zz"]]]
    elif it["box"]:
        a, b, c = (F(n) * LENGTH[u] for n, u in it["box"])
        own = [[m * (b * b + c * c) / 12, 0, 0], [0, m * (a * a + c * c) / 12, 0], [0, 0, m * (a * a + b * b) / 12]]
        own = [[F(x) for x in row] for row in own]
    return {"m": m, "cg": cg, "own": own, "q": it["quantity"]}


def item_text(it, units) -> str:
    mu, lu, iu = units

    def t(pair, table, fu):
        return Value(pair[0], pair[1], table, fu).text

    lines = ["[[item]]", f'id = "{it["id"]}"', f'name = "{it["name"]}"']
    if it["group"]:
        lines.append(f'group = "{it["group"]}"')
    lines.append(f"mass = {t(it['mass'], MASS, mu)}")
    lines.append("cg = [" + ", ".join(t(p, LENGTH, lu) for p in it["cg"]) + "]")
    if it["quantity"] != 1:
        lines.append(f"quantity = {it['quantity']}")
    if it["inertia"]:
        lines.append("inertia = { " + ", ".join(f"{k} = {t(p, INERTIA, iu)}" for k, p in it["inertia"].items()) + " }")
    if it["box"]:
        lines.append('shape = { kind = "box", size = [' + ", ".join(t(p, LENGTH, lu) for p in it["box"]) + "] }")
    if it["variable"]:
        lines.append("variable = true")
    return "\n".join(lines) + "\n"


def ledger_text(items, units, amounts, envelope) -> str:
    mu, lu, iu = units
    parts = [f'steelyard = 1\n\n[units]\nmass = "{mu}"\nlength = "{lu}"\ninertia = "{iu}"\n']
    parts += [item_text(it, units) for it in items]
    parts.append('[[loadout]]\nname = "trip"\n[loadout.set]\n' + "".join(f"{k} = {v}\n" for k, v in amounts.items()))
    pts = ", ".join(f'["{c} m", "{m} kg"]' for c, m in envelope)
    parts.append(f'[[envelope]]\nname = "box"\naxis = "x"\npoints = [{pts}]\n')
    return "\n".join(parts)


def exact_side(items, amounts, loadout: bool):
    """Exact roll-up of one side: mass, CG, tensor about the CG, and per-id (mass, cg)."""
    rows = {}
    for it in items:
        e = exact_of(it)
        total = e["m"] * e["q"]
        fill = F(1)
        if it["variable"]:
            amount = amounts.get(it["id"]) if loadout else None
            if amount is None:
                fill = F(0)
            elif amount.startswith('"'):
                fill = F(amount.strip('"').split()[0]) / total  # "x kg"
            else:
                fill = F(amount)
        rows[it["id"]] = (total * fill, e["cg"], [[x * e["q"] * fill for x in r] for r in e["own"]])
    big_m = sum(m for m, _, _ in rows.values())
    c = [sum(m * r[k] for m, r, _ in rows.values()) / big_m for k in range(3)]
    inertia = [[F(0)] * 3 for _ in range(3)]
    for m, r, own in rows.values():
        d = [r[k] - c[k] for k in range(3)]
        dd = sum(x * x for x in d)
        for i in range(3):
            for j in range(3):
                inertia[i][j] += own[i][j] + m * ((dd if i == j else 0) - d[i] * d[j])
    return big_m, c, inertia, {k: (m, r) for k, (m, r, _) in rows.items()}


OPS = {"mass": "mass_kg", "cg": "cg_m", "name": "name", "group": "group", "quantity": "quantity",
       "inertia": "inertia_kg_m2", "box": "shape"}


def perturb(rng, items, units_b):
    """B's items from A's: one edit per touched item, some removed and added, shuffled."""
    out, expect, removed = [], {}, []
    for it in items:
        b = {**it, "cg": list(it["cg"])}
        if it["variable"]:
            out.append(b)
            continue
        r = rng.random()
        if r < 0.08:
            removed.append(it["id"])
            continue
        if r < 0.45:
            op = rng.choice([o for o in OPS if (o != "inertia" or it["inertia"]) and (o != "box" or it["box"])])
            mu = units_b[0]
            if op == "mass":  # B's own unit, 0.25 more
                b["mass"] = (f"{float(F(it['mass'][0]) * MASS[it['mass'][1]] / MASS[mu]) + 0.25:.6f}", mu)
            elif op == "cg":
                k = rng.randrange(3)
                b["cg"][k] = (f"{float(it['cg'][k][0]) + 1.5:.4f}", it["cg"][k][1])
            elif op == "name":
                b["name"] = it["name"] + " rev B"
            elif op == "group":
                b["group"] = "moved/here"
            elif op == "quantity":
                b["quantity"] = it["quantity"] + 1
            elif op == "inertia":
                n, u = it["inertia"]["xx"]
                b["inertia"] = {**it["inertia"], "xx": (f"{float(n) * 1.05:.6f}", u)}
            elif op == "box":
                n, u = it["box"][0]
                b["box"] = [(f"{float(n) * 2:.4f}", u)] + it["box"][1:]
            expect[it["id"]] = OPS[op]
        out.append(b)
    added = []
    for k in range(rng.randint(0, 3)):
        it = new_item(rng, 900 + k, units_b)
        out.append(it)
        added.append(it["id"])
    rng.shuffle(out)
    return out, expect, removed, added


def random_pair(tmp_path: Path, seed: int):
    rng = random.Random(seed)
    units_a = rng.choice(SYSTEMS)
    units_b = rng.choice(SYSTEMS)
    items = [new_item(rng, k, units_a) for k in range(rng.randint(8, 30))]
    items += [new_item(rng, 100 + k, units_a, variable=True) for k in range(2)]
    cap = exact_of(items[-1])["m"]  # a mass amount must fit in the item: about 30 % of it
    amounts = {items[-2]["id"]: "0.5", items[-1]["id"]: f'"{float(cap * F(3, 10)):.4f} kg"'}
    big_m, c, _, _ = exact_side(items, amounts, True)
    cx, m = float(c[0]), float(big_m)
    env = [(f"{cx - 0.05:.4f}", f"{m * 0.7:.3f}"), (f"{cx - 0.05:.4f}", f"{m * 1.1:.3f}"),
           (f"{cx - 0.01:.4f}", f"{m * 1.4:.3f}"), (f"{cx + 0.04:.4f}", f"{m * 1.4:.3f}"),
           (f"{cx + 0.04:.4f}", f"{m * 0.7:.3f}")]
    items_b, expect, removed, added = perturb(rng, items, units_b)
    pa, pb = tmp_path / f"a{seed}.toml", tmp_path / f"b{seed}.toml"
    pa.write_text(ledger_text(items, units_a, amounts, env))
    pb.write_text(ledger_text(items_b, units_b, amounts, env))
    return pa, pb, items, items_b, amounts, env, expect, removed, added


def shapely_status(env, cg_x: float, mass: float):
    poly = Polygon([(float(F(c)), float(F(m))) for c, m in env])
    chord = poly.intersection(LineString([(-1e3, mass), (1e3, mass)]))
    inside = poly.covers(Point(cg_x, mass))
    if chord.is_empty:
        return inside, None
    lo, _, hi, _ = chord.bounds
    return inside, min(cg_x - lo, hi - cg_x)


def near(x, y, scale, rtol=1e-10):
    return abs(float(x) - float(y)) <= rtol * float(scale) + 1e-15


@pytest.mark.parametrize("loadout", [True, False], ids=["loadout-trip", "no-loadout"])
@pytest.mark.parametrize("seed", range(12))
def test_random_pairs_against_exact_recomputation(tmp_path, seed, loadout):
    pa, pb, items, items_b, amounts, env, expect, removed, added = random_pair(tmp_path, seed)
    name = "trip" if loadout else None
    d = compare(load_ledger(pa), name, load_ledger(pb), name)

    # matching: what the test did to B, nothing else
    assert sorted(d.removed) == sorted(removed)
    assert sorted(d.added) == sorted(added)
    assert {c.id: set(c.fields) for c in d.changed} == {k: {v} for k, v in expect.items()}
    for c in d.changed:
        if "mass_kg" in c.fields:
            old = exact_of(next(i for i in items if i["id"] == c.id))["m"]
            new = exact_of(next(i for i in items_b if i["id"] == c.id))["m"]
            assert c.fields["mass_kg"][0] == pytest.approx(float(old), rel=1e-14)
            assert c.fields["mass_kg"][1] == pytest.approx(float(new), rel=1e-14)

    # totals: each side rolled up exactly on its own
    ma, ca, ia, rows_a = exact_side(items, amounts, loadout)
    mb, cb, ib, rows_b = exact_side(items_b, amounts, loadout)
    assert near(d.delta_mass, mb - ma, ma)
    for k in range(3):
        assert near(d.delta_cg[k], cb[k] - ca[k], 10.0)
    iscale = max(abs(float(x)) for row in ia + ib for x in row)
    for i in range(3):
        for j in range(3):
            assert near(d.delta_inertia[i, j], ib[i][j] - ia[i][j], iscale, 1e-9)
    pa_ = scipy.linalg.eigvalsh(np.array(ia, dtype=float))
    pb_ = scipy.linalg.eigvalsh(np.array(ib, dtype=float))
    assert np.allclose(d.delta_principal, pb_ - pa_, rtol=0, atol=1e-9 * iscale)

    # envelope: shapely chord and inside test on each side's exact CG and mass
    (e,) = d.envelopes
    ins_a, mar_a = shapely_status(env, float(ca[0]), float(ma))
    ins_b, mar_b = shapely_status(env, float(cb[0]), float(mb))
    assert (e.a.inside, e.b.inside) == (ins_a, ins_b)
    if mar_a is not None and mar_b is not None:
        assert e.margin_delta == pytest.approx(mar_b - mar_a, abs=1e-9)

    # ranking: each change applied alone to A, by the weight added/removed formula per axis
    assert {r.id for r in d.ranked} == set(expect) | set(removed) | set(added)
    for r in d.ranked:
        m_old, r_old = rows_a.get(r.id, (F(0), [F(0)] * 3))
        m_new, r_new = rows_b.get(r.id, (F(0), [F(0)] * 3))
        new_total = ma - m_old + m_new
        want = [(m_new * (r_new[k] - ca[k]) - m_old * (r_old[k] - ca[k])) / new_total for k in range(3)]
        assert r.cg_shift == pytest.approx([float(w) for w in want], rel=1e-9, abs=1e-13)
    shifts = [r.shift for r in d.ranked]
    assert shifts == sorted(shifts, reverse=True)


def test_random_pair_json_through_the_command(tmp_path, capsys):
    pa, pb, *_ , expect, removed, added = random_pair(tmp_path, 101)
    rc, out, err = run_main(capsys, "diff", f"{pa}:trip", f"{pb}:trip", "--json")
    assert rc == (0 if not (expect or removed or added) else 1), err
    rec = json.loads(out)
    assert {"added", "removed", "changed", "a", "b", "delta", "envelopes"} <= set(rec)
    assert sorted(rec["added"]) == sorted(added) and sorted(rec["removed"]) == sorted(removed)
    assert {c["id"] for c in rec["changed"]} == set(expect)
    for c in rec["changed"]:
        for old_new in c["fields"].values():
            assert len(old_new) == 2
    for side in ("a", "b"):  # the rollup --json contract (DESIGN.md)
        assert set(rec[side]) == {"loadout", "mass_kg", "cg_m", "inertia_cg_kg_m2", "principal_kg_m2",
                                  "principal_axes", "envelopes"}
        assert rec[side]["loadout"] == "trip"
    assert set(rec["delta"]) >= {"mass_kg", "cg_m", "inertia_cg_kg_m2"}
    assert rec["delta"]["mass_kg"] == pytest.approx(rec["b"]["mass_kg"] - rec["a"]["mass_kg"], rel=1e-12)
    assert len(rec["delta"]["inertia_cg_kg_m2"]) == 3
    (env,) = rec["envelopes"]
    assert set(env) >= {"name", "a_inside", "b_inside", "margin_delta_m"}


# --------------------------------------------------------------------------- matching rules

BASE = """steelyard = 1
[units]
mass = "{mass}"
length = "{length}"

[[item]]
id = "radio"
name = "{name}"
mass = {radio_mass}
cg = [{x}, 0.0, 0.0]

[[item]]
id = "battery"
mass = {battery_mass}
cg = [{bx}, 0.0, 0.0]
"""


def write(path: Path, **kw) -> Path:
    fields = dict(mass="kg", length="m", name="Radio", radio_mass="1.0", x="3.0", battery_mass="20.0", bx="2.0")
    fields.update(kw)
    path.write_text(BASE.format(**fields))
    return path


def test_renamed_item_is_a_change_not_an_add_and_remove(tmp_path, capsys):
    a = write(tmp_path / "a.toml")
    b = write(tmp_path / "b.toml", name="VHF radio")
    rc, out, _ = run_main(capsys, "diff", a, b, "--json")
    rec = json.loads(out)
    assert rc == 1
    assert rec["added"] == [] and rec["removed"] == []
    assert rec["changed"] == [{"id": "radio", "fields": {"name": ["Radio", "VHF radio"]}}]
    assert rec["ranked"][0]["cg_shift_abs_m"] == 0.0


def test_reordered_items_are_no_difference(tmp_path, capsys):
    text = TRAINER.read_text()
    head, *blocks = text.split("\n[[item]]\n")
    last, tail = blocks[-1].split("\n[[loadout]]\n", 1)
    blocks[-1] = last
    random.Random(3).shuffle(blocks)
    shuffled = head + "".join("\n[[item]]\n" + b.rstrip("\n") + "\n" for b in blocks) + "\n[[loadout]]\n" + tail
    assert shuffled != text
    p = tmp_path / "shuffled.toml"
    p.write_text(shuffled)
    rc, out, err = run_main(capsys, "diff", TRAINER, p)
    assert rc == 0, err
    assert len(out.strip().splitlines()) == 1 and "no differences" in out
    rc, out, _ = run_main(capsys, "diff", f"{TRAINER}:takeoff", f"{p}:takeoff", "--json")
    assert rc == 0 and json.loads(out)["identical"] is True


def test_twelve_inches_equal_one_foot(tmp_path, capsys):
    # NIST SP 811: 1 ft = 12 in = 0.3048 m exactly. Read as bare numbers, 12 × 0.0254 and 1 × 0.3048
    # round to different doubles (one ulp apart), so the tolerance is what makes them equal here.
    assert 12.0 * 0.0254 != 0.3048 and abs(12.0 * 0.0254 - 0.3048) <= ULPS * np.spacing(0.3048)
    a = write(tmp_path / "in.toml", length="in", x="12.0", bx="80.0")
    b = write(tmp_path / "ft.toml", length="ft", x="1.0", bx='"80 in"')
    rc, out, err = run_main(capsys, "diff", a, b)
    assert rc == 0, out + err
    assert "no differences" in out
    # the same with the unit inside the value, and pounds against their exact kilograms
    c = write(tmp_path / "c.toml", x='"12 in"', radio_mass='"2 lb"')
    d = write(tmp_path / "d.toml", x='"1 ft"', radio_mass="0.90718474")  # 2 × 0.45359237 kg
    rc, out, err = run_main(capsys, "diff", c, d)
    assert rc == 0, out + err


def test_a_real_small_difference_is_found(tmp_path, capsys):
    a = write(tmp_path / "a.toml", x='"12 in"')
    b = write(tmp_path / "b.toml", x='"12.0001 in"')
    rc, out, _ = run_main(capsys, "diff", a, b, "--json")
    assert rc == 1
    (ch,) = json.loads(out)["changed"]
    old, new = ch["fields"]["cg_m"]
    assert new[0] - old[0] == pytest.approx(0.0001 * 0.0254, rel=1e-6)  # NIST: 1 in = 0.0254 m


def test_close_is_a_few_ulps():
    x = 0.3048
    assert close(x, np.nextafter(x, 1.0))
    assert close(x, x + ULPS * np.spacing(x))
    assert not close(x, x + 4 * ULPS * np.spacing(x))
    assert not close(0.0, 1e-300)
    assert close(float("nan"), float("nan"))


def test_removed_item_moves_cg_by_the_handbook_formula(tmp_path):
    # FAA-H-8083-1: weight removed / new total = ΔCG / (station − old CG), with the sign of removal.
    a = write(tmp_path / "a.toml", radio_mass="1.5", x="5.0", battery_mass="20.0", bx="2.0")
    text = a.read_text().split("[[item]]\nid = \"radio\"")[0] + "[[item]]" + a.read_text().split("[[item]]")[-1]
    b = tmp_path / "b.toml"
    b.write_text(text)
    d = compare(load_ledger(a), None, load_ledger(b), None)
    assert d.removed == ("radio",) and d.added == () and d.changed == ()
    w, station, total = F("1.5"), F(5), F("21.5")
    old_cg = (F("1.5") * 5 + 20 * 2) / total
    want = -w * (station - old_cg) / (total - w)
    (r,) = d.ranked
    assert r.kind == "removed" and r.cg_shift[0] == pytest.approx(float(want), rel=1e-12)
    assert d.delta_cg[0] == pytest.approx(float(want), rel=1e-12)


def test_capacity_of_an_empty_load_item_is_compared(tmp_path):
    tank = '\n[[item]]\nid = "tank"\nmass = 60.0\ncg = [2.5, 0, 0]\nvariable = true\n'
    text = write(tmp_path / "a.toml").read_text() + tank
    (tmp_path / "a.toml").write_text(text)
    (tmp_path / "b.toml").write_text(text.replace("mass = 60.0", "mass = 70.0"))
    d = compare(load_ledger(tmp_path / "a.toml"), None, load_ledger(tmp_path / "b.toml"), None)
    (c,) = d.changed
    assert c.id == "tank" and c.fields == {"capacity_kg": (60.0, 70.0)}
    assert d.delta_mass == 0.0  # empty on both sides


def test_two_loadouts_of_one_file(capsys):
    rc, out, err = run_main(capsys, "diff", f"{TRAINER}:takeoff", f"{TRAINER}:trip", "--json")
    assert rc == 1, err
    rec = json.loads(out)
    assert rec["a"]["loadout"] == "takeoff" and rec["b"]["loadout"] == "trip"
    fields = {c["id"]: c["fields"] for c in rec["changed"]}
    assert set(fields) == {"pilot", "passenger", "fuel-l", "fuel-r", "baggage"}
    assert all(set(f) == {"mass_kg"} for f in fields.values())
    # NIST SP 811: 1 lb = 0.45359237 kg; fuel: 16 gal at 6 lb/gal = 96 lb; takeoff pilot "77 kg"
    assert fields["pilot"]["mass_kg"] == pytest.approx([77.0, float(190 * LB)], rel=1e-14)
    assert fields["fuel-l"]["mass_kg"][1] == pytest.approx(float(96 * LB), rel=1e-12)
    assert rec["loadout_definitions"] is None  # two loadouts: their definitions are not compared


def test_path_with_colon_and_last_colon_split(tmp_path, capsys):
    odd = tmp_path / "rev:2.toml"
    shutil.copy(TRAINER, odd)
    rc, out, err = run_main(capsys, "diff", odd, TRAINER)
    assert rc == 0, err
    rc, out, err = run_main(capsys, "diff", f"{odd}:trip", f"{TRAINER}:trip")
    assert rc == 0, err
    rc, out, err = run_main(capsys, "diff", f"{odd}:trip", f"{TRAINER}:takeoff")
    assert rc == 1, err
    rc, out, err = run_main(capsys, "diff", odd, TRAINER, "--a-loadout", "trip", "--b-loadout", "trip")
    assert rc == 0, err


def test_unknown_loadout_missing_file_and_bad_file_exit_2_one_line(tmp_path, capsys):
    rc, _, err = run_main(capsys, "diff", f"{TRAINER}:nope", TRAINER)
    one_line_error(rc, err, str(TRAINER), "nope", "loadout")
    rc, _, err = run_main(capsys, "diff", tmp_path / "missing.toml", TRAINER)
    one_line_error(rc, err, "missing.toml", "no such file")
    bad = ROOT / "fixtures" / "bad" / "negative-mass.toml"
    rc, _, err = run_main(capsys, "diff", TRAINER, bad)
    one_line_error(rc, err, "negative-mass.toml", "item 'tail-bumper'", "mass")
    rc, _, err = run_main(capsys, "diff", TRAINER, TRAINER, "--max-items", "-1")
    one_line_error(rc, err, "--max-items")


def test_exit_codes_in_a_real_process(tmp_path):
    same = run_process("diff", TRAINER, TRAINER)
    assert same.returncode == 0 and len(same.stdout.strip().splitlines()) == 1 and same.stderr == ""
    diff = run_process("diff", f"{TRAINER}:solo-training", f"{TRAINER}:trip")
    assert diff.returncode == 1 and "Changed items" in diff.stdout and "Planning aid only" in diff.stdout
    bad = run_process("diff", TRAINER)
    assert bad.returncode == 2 and len(bad.stderr.strip().splitlines()) == 1
    missing = run_process("diff", TRAINER, tmp_path / "x.toml")
    assert missing.returncode == 2 and "Traceback" not in missing.stderr
    assert len(missing.stderr.strip().splitlines()) == 1


def test_envelope_status_change_and_margin(tmp_path, capsys):
    env = ('\n[[envelope]]\nname = "fwd-aft"\naxis = "x"\n'
           "points = [[2.0, 10.0], [2.0, 40.0], [2.2, 40.0], [2.2, 10.0]]\n")
    a = write(tmp_path / "a.toml", x="3.0")
    b = write(tmp_path / "b.toml", x="8.0")
    a.write_text(a.read_text() + env)
    b.write_text(b.read_text() + env)
    rc, out, _ = run_main(capsys, "diff", a, b, "--json")
    (e,) = json.loads(out)["envelopes"]
    # CG = Σ m x / Σ m (FAA-H-8083-1): A (1·3 + 20·2)/21, B (1·8 + 20·2)/21; limits 2.0 … 2.2 m at 21 kg
    cg_a, cg_b = (3 + 40) / 21, (8 + 40) / 21
    assert e["a_inside"] is True and e["b_inside"] is False and e["status_changed"] is True
    assert e["a_margin_m"] == pytest.approx(min(cg_a - 2.0, 2.2 - cg_a), abs=1e-12)
    assert e["b_margin_m"] == pytest.approx(2.2 - cg_b, abs=1e-12)
    assert e["margin_delta_m"] == pytest.approx((2.2 - cg_b) - min(cg_a - 2.0, 2.2 - cg_a), abs=1e-12)


def test_frame_change_and_definition_changes_are_differences(tmp_path, capsys):
    a = write(tmp_path / "a.toml")
    b = tmp_path / "b.toml"
    b.write_text(a.read_text().replace("steelyard = 1\n", 'steelyard = 1\n[frame]\nx = "fwd"\ny = "left"\nz = "up"\n'))
    rc, out, _ = run_main(capsys, "diff", a, b, "--json")
    rec = json.loads(out)
    assert rc == 1 and rec["frame"] == {"x": ["aft", "fwd"], "y": ["right", "left"]}
    assert rec["changed"] == []


def test_human_report_has_units_and_the_caution(capsys):
    rc, out, _ = run_main(capsys, "diff", f"{TRAINER}:solo-training", f"{TRAINER}:max-baggage", "--units", "us")
    assert rc == 1
    assert "baggage" in out and "[lb]" in out and "→" in out
    assert "Items ranked" in out and "Planning aid only" in out
    rc, out, _ = run_main(capsys, "diff", f"{TRAINER}:solo-training", f"{TRAINER}:max-baggage", "--max-items", "1")
    assert "more (--max-items 0 shows all" in out


def test_report_sends_no_raw_terminal_escapes(tmp_path, capsys):
    # common practice: text from a file is data; an ESC in a name must not reach the terminal
    nasty = "\\u001b[2J\\u001b[31mred\\u001b[0m [b]bold[/b]"
    a = write(tmp_path / "a.toml")
    b = write(tmp_path / "b.toml", name=nasty)
    rc, out, _ = run_main(capsys, "diff", a, b)
    assert rc == 1
    assert "\x1b" not in out and "[b]bold[/b]" in out and "␛[31mred" in out


def test_diff_lists_the_changes_logged_in_b_with_their_reasons(tmp_path, capsys):
    # B is A after one more logged edit; the diff names it with its reason and change request
    # (tomllib, the standard library, is the reference reading of both files)
    import tomllib

    base = TRAINER.read_text()
    old = ('\n[[change]]\ntime = "2026-01-10T09:00:00Z"\nauthor = "ana"\naction = "edit"\nitem = "wing-l"\n'
           'summary = "first"\nd_mass_kg = 0.0\n')
    new = ('\n[[change]]\ntime = "2026-02-11T10:00:00Z"\nauthor = "bo"\naction = "edit"\nitem = "wing-l"\n'
           'summary = "heavier wing"\nreason = "repair doubler <aft>"\nrequest = "CR-0107"\nd_mass_kg = 1.0\n')
    a = tmp_path / "a.toml"
    b = tmp_path / "b.toml"
    a.write_text(base + old)
    b.write_text(base + old + new)
    assert len(tomllib.loads(b.read_text())["change"]) == 2
    code, out, err = run_main(capsys, "diff", a, b)
    assert code in (0, 1), err
    code, out, err = run_main(capsys, "diff", a, b, "--json")
    logged = json.loads(out)["logged"]
    assert logged == [{"time": "2026-02-11T10:00:00Z", "author": "bo", "action": "edit", "item": "wing-l",
                       "summary": "heavier wing", "reason": "repair doubler <aft>", "request": "CR-0107"}]
    # the text form, with an item changed so the full report prints
    b.write_text(b.read_text().replace("[[change]]", "[[item]]\nid = \"extra\"\nmass = 1.0\ncg = [0.0, 0.0, 0.0]\n\n"
                                       "[[change]]", 1))
    code, out, err = run_main(capsys, "diff", a, b)
    assert code == 1, err
    out = " ".join(out.split())  # the console wraps long lines
    assert "Changes logged in B since A (1)" in out
    assert "heavier wing (why: repair doubler <aft>; request CR-0107)" in out
    assert "2026-01-10" not in out.split("Changes logged in B since A")[1]  # A's own entry is not listed
