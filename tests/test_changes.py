"""Change log, effects and undo/redo (core.changes).

Effects are checked against exact rational arithmetic (fractions.Fraction) of
the published weight-and-balance definitions (FAA-H-8083-1 Aircraft Weight and
Balance Handbook): CG = Σ moment / Σ weight, and for a weight added or removed
ΔCG = Δw × (station − old CG) / new total. Envelope chords come from shapely.
"""

from __future__ import annotations

import math
import tomllib
from fractions import Fraction as F

import numpy as np
import pytest
import tomli_w
from shapely.geometry import LineString, Polygon

from steelyard.core.history.changes import (Change, Effect, History, compact, effect_between, ledger_with_log,
                                    log_from_ledger)
from steelyard.core.errors import SteelyardError
from steelyard.core.loading.loadout import resolve
from steelyard.core.document.model import Amount, Envelope, Item, Ledger, Loadout
from steelyard.core.physics.rollup import rollup_state
from steelyard.io.ledger.file import load_ledger
from steelyard.io.ledger.read import ledger_from_data
from steelyard.io.ledger.write import ledger_to_toml

LB = 0.45359237  # kg, exact (NIST SP 811, the 1959 international pound)
IN = 0.0254  # m, exact (NIST SP 811)

# an invented small vehicle, SI
ITEMS = (
    Item("frame", 41.5, (3.10, 0.02, 0.40), name="Frame"),
    Item("motor", 12.25, (1.05, 0.0, 0.55)),
    Item("battery-1", 18.0, (2.20, -0.31, 0.30), quantity=2),
    Item("tank", 60.0, (2.90, 0.0, 0.70), variable=True),
)
# a slanted forward edge so the chord depends on mass
ENVELOPE = Envelope("takeoff", "x", ((2.0, 50.0), (2.0, 85.0), (2.3, 150.0), (3.0, 150.0), (3.0, 50.0)))
HIGH = Envelope("heavy-only", "x", ((2.0, 400.0), (2.0, 500.0), (3.0, 500.0), (3.0, 400.0)))
LEDGER = Ledger(ITEMS, envelopes=(ENVELOPE, HIGH),
                loadouts=(Loadout("half", {"tank": Amount("fraction", 0.5)}),))


def exact_cg(rows) -> tuple[F, list[F]]:
    """Σm and Σm·x / Σm per axis, exactly, from (mass, quantity, fill, cg) rows."""
    total = sum(F(m) * q * F(f) for m, q, f, _ in rows)
    cg = [sum(F(m) * q * F(f) * F(c[k]) for m, q, f, c in rows) / total for k in range(3)]
    return total, cg


def rows_of(ledger: Ledger, fills: dict[str, float] | None = None):
    fills = fills or {}
    return [(it.mass, it.quantity, fills.get(it.id, 0.0 if it.variable else 1.0), it.cg) for it in ledger.items]


def chord(env: Envelope, mass: float) -> tuple[float, float]:
    """Allowed CG range at `mass`: the polygon cut by a horizontal line (shapely)."""
    cut = Polygon(env.points).intersection(LineString([(-1e3, mass), (1e3, mass)]))
    xs = [x for x, _ in cut.coords]
    return min(xs), max(xs)


def margin(env: Envelope, cg: float, mass: float) -> float:
    lo, hi = chord(env, mass)
    return min(cg - lo, hi - cg)


def close(a: float, b: F | float, rel: float = 1e-12, abs_: float = 1e-15) -> bool:
    return math.isclose(a, float(b), rel_tol=rel, abs_tol=abs_)


# --------------------------------------------------------------------------- effects


def test_added_item_effect_matches_exact_sums_and_handbook_formula():
    radio = Item("radio", 1.0432624510000323, (3.6068, 0.1, 0.9))
    after = LEDGER.with_item(radio)
    eff = effect_between(LEDGER, after, None)
    m0, c0 = exact_cg(rows_of(LEDGER))
    m1, c1 = exact_cg(rows_of(after))
    assert close(eff.d_mass, m1 - m0)
    for k in range(3):
        # FAA-H-8083-1: ΔCG = Δw (station − old CG) / new total, exactly the change of Σm·x/Σm
        handbook = F(radio.mass) * (F(radio.cg[k]) - c0[k]) / m1
        assert handbook == c1[k] - c0[k]
        assert close(eff.d_cg[k], handbook, rel=1e-9)
    # margin on the slanted envelope, chord from shapely
    name, dmar = eff.d_margin[0]
    assert name == "takeoff"
    want = margin(ENVELOPE, float(c1[0]), float(m1)) - margin(ENVELOPE, float(c0[0]), float(m0))
    assert math.isclose(dmar, want, rel_tol=1e-9, abs_tol=1e-12)
    # outside "heavy-only"'s mass range on both sides: margin undefined
    assert eff.d_margin[1] == ("heavy-only", None)


def test_removed_item_effect_uses_negative_weight():
    after = LEDGER.without_item("motor")
    eff = effect_between(LEDGER, after, None)
    m0, c0 = exact_cg(rows_of(LEDGER))
    m1, _ = exact_cg(rows_of(after))
    motor = LEDGER.item("motor")
    assert close(eff.d_mass, -F(motor.mass))
    for k in range(3):
        handbook = -F(motor.mass) * (F(motor.cg[k]) - c0[k]) / m1  # FAA-H-8083-1, weight removed
        assert close(eff.d_cg[k], handbook, rel=1e-9)


def test_weight_addition_worked_example():
    # Weight addition: 6,860 lb at 80.0 in plus 140 lb at station 150 gives 81.4 in
    # (FAA-H-8083-1 example, figures from memory; derivable: 569,800 lb·in / 7,000 lb)
    before = Ledger((Item("basic", 6860 * LB, (80.0 * IN, 0.0, 0.0)),))
    after = before.with_item(Item("cargo", 140 * LB, (150.0 * IN, 0.0, 0.0)))
    eff = effect_between(before, after, None)
    assert close(eff.d_mass, F(140) * F(LB))
    assert math.isclose(eff.d_cg[0] / IN, 1.4, rel_tol=1e-12)
    assert eff.d_cg[1] == 0.0 and eff.d_cg[2] == 0.0


def test_effect_under_a_loadout_counts_the_fill():
    heavier = LEDGER.with_item(LEDGER.item("tank").evolve(cg=(3.00, 0.0, 0.70)))
    eff = effect_between(LEDGER, heavier, "half")
    _, c0 = exact_cg(rows_of(LEDGER, {"tank": 0.5}))
    m1, c1 = exact_cg(rows_of(heavier, {"tank": 0.5}))
    assert eff.d_mass == 0.0
    # weight shift (FAA-H-8083-1): ΔCG = w_moved × distance / total, w_moved = half of 60 kg
    shift = F(30) * (F(3.00) - F(2.90)) / m1
    assert shift == c1[0] - c0[0]
    assert close(eff.d_cg[0], shift, rel=1e-9)
    # with no loadout the tank is empty, so moving it changes nothing
    assert effect_between(LEDGER, heavier, None).d_cg == (0.0, 0.0, 0.0)


def test_a_loadout_missing_on_one_side_counts_as_empty():
    without = LEDGER.evolve(loadouts=())
    eff = effect_between(LEDGER, without, "half")
    assert close(eff.d_mass, -F(30))


# --------------------------------------------------------------------------- history


def _edit(ledger: Ledger, item_id: str, **changes) -> Ledger:
    return ledger.with_item(ledger.item(item_id).evolve(**changes))


def totals(ledger: Ledger, loadout=None):
    mp = rollup_state(resolve(ledger, loadout))
    return mp.mass, mp.cg.copy(), mp.inertia_cg.copy()


def test_apply_records_author_time_action_and_fields():
    h = History(LEDGER)
    c = h.apply(_edit(LEDGER, "motor", mass=13.0), action="edit", item="motor", summary="heavier\nmotor",
                loadout=None, author="ana", now="2026-05-04T09:12:33Z")
    assert (c.time, c.author, c.action, c.item, c.summary) == ("2026-05-04T09:12:33Z", "ana", "edit", "motor",
                                                               "heavier motor")
    assert c.before == {"id": "motor", "mass_kg": 12.25} and c.after == {"id": "motor", "mass_kg": 13.0}
    assert math.isclose(c.effect.d_mass, 0.75, rel_tol=0, abs_tol=1e-15)
    assert h.log == (c,) and h.can_undo and not h.can_redo
    tomli_w.dumps({"before": c.before, "after": c.after})  # TOML-able

    added = h.apply(h.ledger.with_item(Item("light", 0.4, (4.0, 0.0, 1.0))), action="add", item="light",
                    summary="add light", loadout=None, author="ana")
    assert added.before is None and added.after["mass_kg"] == 0.4 and added.after["cg_m"] == [4.0, 0.0, 1.0]
    assert added.time.endswith("Z") and "T" in added.time
    gone = h.apply(h.ledger.without_item("light"), action="delete", item="light", summary="drop light",
                   loadout=None, author="ana")
    assert gone.after is None and gone.before["id"] == "light"


def test_undo_is_bit_identical_and_redo_returns():
    h = History(LEDGER)
    start = totals(LEDGER, "half")
    l1 = _edit(LEDGER, "motor", mass=12.2500001)
    h.apply(l1, action="edit", item="motor", summary="s1", loadout="half", author="a")
    l2 = l1.with_item(Item("ballast", 2.0 / 3.0, (5.123456789, 0.0, 0.1)))
    h.apply(l2, action="add", item="ballast", summary="s2", loadout="half", author="a")
    l3 = _edit(l2, "frame", cg=(3.1000000001, 0.02, 0.4))
    h.apply(l3, action="edit", item="frame", summary="s3", loadout="half", author="a")
    after3 = totals(h.ledger, "half")
    assert len(h.log) == 3

    for _ in range(3):
        assert h.undo() is not None
    assert h.undo() is None and not h.can_undo
    assert h.ledger is LEDGER
    back = totals(h.ledger, "half")
    assert back[0] == start[0] and np.array_equal(back[1], start[1]) and np.array_equal(back[2], start[2])
    assert h.log == ()

    assert [h.redo().summary for _ in range(3)] == ["s1", "s2", "s3"]
    assert h.redo() is None and not h.can_redo
    assert h.ledger is l3
    again = totals(h.ledger, "half")
    assert again[0] == after3[0] and np.array_equal(again[1], after3[1]) and np.array_equal(again[2], after3[2])


def test_apply_after_undo_drops_the_redo_branch():
    h = History(LEDGER)
    a = _edit(LEDGER, "motor", mass=13.0)
    h.apply(a, action="edit", item="motor", summary="a", loadout=None, author="x")
    h.apply(_edit(a, "motor", mass=14.0), action="edit", item="motor", summary="b", loadout=None, author="x")
    h.undo()
    assert h.can_redo
    c = h.apply(_edit(a, "frame", mass=40.0), action="edit", item="frame", summary="c", loadout=None, author="x")
    assert not h.can_redo and h.redo() is None
    assert [x.summary for x in h.log] == ["a", "c"]
    # c's effect is measured from a, not from the dropped b
    assert math.isclose(c.effect.d_mass, -1.5, abs_tol=1e-15)


def test_persisted_changes_are_history_not_undoable():
    old = Change("2026-01-02T03:04:05Z", "bo", "add", "frame", "first", Effect(41.5, (0.0, 0.0, 0.0), ()),
                 None, {"id": "frame"})
    h = History(LEDGER, (old,))
    assert h.log == (old,) and not h.can_undo and h.undo() is None
    c = h.apply(_edit(LEDGER, "motor", mass=13.0), action="edit", item="motor", summary="m", loadout=None,
                author="ana")
    assert h.log == (old, c)
    assert h.undo() is c and h.undo() is None
    assert h.log == (old,) and h.ledger is LEDGER


def test_apply_rejects_fields_that_are_not_toml():
    h = History(LEDGER)
    with pytest.raises(SteelyardError) as e:
        h.apply(LEDGER, action="weighing", item=None, summary="w", loadout=None, author="a",
                before={"x": object()}, after=None)
    assert e.value.field == "before"
    assert not h.can_undo


# --------------------------------------------------------------------------- persistence


def test_log_round_trips_through_the_ledger_file(fixtures_dir):
    base = load_ledger(fixtures_dir / "trainer.toml")
    h = History(base, log_from_ledger(base))
    wing = base.items[0]
    h.apply(base.with_item(wing.evolve(mass=wing.mass + 0.1)), action="edit", item=wing.id, summary="repair",
            loadout="takeoff", author="ana", now="2026-05-04T09:12:33Z")
    h.apply(h.ledger.with_item(Item("radio-2", 2.3 * LB, (142 * IN, 0.0, 0.3), name="Radio [b]2[/b]")),
            action="add", item="radio-2", summary="add radio", loadout="takeoff", author="ana")
    h.apply(_edit(h.ledger, "radio-2", group="avionics/comm"), action="move", item="radio-2",
            summary="move radio", loadout=None, author="bo")
    h.apply(h.ledger, action="weighing", item=None, summary="scales", loadout="takeoff", author="bo",
            before={"empty_mass_kg": 500.0}, after={"empty_mass_kg": 501.25, "readings": [1.0, 2.0]})
    log = h.log
    assert any(m is None for c in log for _, m in c.effect.d_margin)  # an undefined margin in memory...

    text = ledger_to_toml(ledger_with_log(h.ledger, log))
    assert "[[change]]" in text and "nan" not in text  # ... is left out of the file, never written as nan
    back = ledger_from_data(tomllib.loads(text), source="x")
    log = tuple(compact(c) for c in log)  # the file holds the compact entries (6 significant figures)
    assert log_from_ledger(back) == log
    assert back.items == h.ledger.items
    assert ledger_to_toml(back) == text  # canonical: saving again gives the same bytes

    # reopening: the old log is history, the new session starts with nothing to undo
    h2 = History(back, log_from_ledger(back))
    assert h2.log == log and not h2.can_undo


def test_no_log_writes_no_change_tables():
    assert "[[change]]" not in ledger_to_toml(ledger_with_log(LEDGER, ()))
    assert log_from_ledger(LEDGER) == ()


GOOD = {"time": "2026-05-04T09:12:33Z", "author": "ana", "action": "edit", "item": "motor", "summary": "s",
        "d_mass_kg": 0.5, "d_cg_m": [0.0, 0.0, 0.001], "d_margin_m": {"takeoff": -0.001}}


@pytest.mark.parametrize("patch, field", [
    ({"time": "yesterday"}, "time"),
    ({"time": 5}, "time"),
    ({"author": ""}, "author"),
    ({"action": None}, "action"),
    ({"item": 3}, "item"),
    ({"d_mass_kg": "1 kg"}, "d_mass_kg"),
    ({"d_mass_kg": True}, "d_mass_kg"),
    ({"d_cg_m": [0.0, 0.0]}, "d_cg_m"),
    ({"d_margin_m": {"takeoff": "x"}}, "d_margin_m.takeoff"),
    ({"before": [1]}, "before"),
])
def test_bad_change_tables_are_located(patch, field):
    table = {**GOOD, **patch}
    table = {k: v for k, v in table.items() if v is not None}
    ledger = LEDGER.evolve(changes=(GOOD, table))
    with pytest.raises(SteelyardError) as e:
        log_from_ledger(ledger)
    assert e.value.subject == "change #2" and e.value.field == field
    assert "\n" not in str(e.value) and "change #2" in str(e.value)


def test_change_must_be_an_array_of_tables():
    # as a file: the reader refuses anything but [[change]] tables (tomllib reads each text below)
    for text in ('change = { time = "x" }', 'change = "text"', "change = [1]"):
        with pytest.raises(SteelyardError, match="change"):
            ledger_from_data(tomllib.loads("steelyard = 1\n" + text), source="t")


def test_toml_datetime_is_accepted_as_time():
    text = (ledger_to_toml(LEDGER) + "\n[[change]]\ntime = 2026-05-04T09:12:33Z\nauthor = \"a\"\n"
            "action = \"edit\"\nd_mass_kg = 0.0\nd_cg_m = [0.0, 0.0, 0.0]\n")
    (c,) = log_from_ledger(ledger_from_data(tomllib.loads(text), source="x"))
    assert c.time == "2026-05-04T09:12:33Z" and c.effect.d_margin == () and c.item is None


# --------------------------------------------------------------------------- compact entries


def test_float_noise_is_written_as_the_decimal_it_stands_for():
    # two parts of 0.1 kg and 0.2 kg: in binary floating point 0.1 + 0.2 is 0.30000000000000004
    # (IEEE 754 double); the log holds 6 significant figures, so the file says 0.3
    noisy = 0.1 + 0.2
    assert noisy != 0.3
    before = Ledger((Item("base", 1.0, (0.0, 0.0, 0.0)),))
    after = before.with_item(Item("pair", noisy, (1.0, 0.0, 0.0)))
    h = History(before)
    h.apply(after, action="add", item="pair", summary="add pair", loadout=None, author="ana")
    text = ledger_to_toml(ledger_with_log(after, h.log))
    log_text = text[text.index("[[change]]"):]  # the item itself keeps its exact value
    assert "0.30000000000000004" not in log_text
    (entry,) = tomllib.loads(text)["change"]
    # exact arithmetic: the value read back is the double nearest to 3/10, within half an ulp
    # of the exact decimal (IEEE 754 round-to-nearest; fractions.Fraction is exact)
    for got in (entry["after"]["mass_kg"], entry["d_mass_kg"]):
        assert abs(F(got) - F(3, 10)) <= F(math.ulp(0.3)) / 2
    assert "mass_kg = 0.3," in log_text and "d_mass_kg = 0.3\n" in log_text
    # ΔCG: the 0.3 kg part at 1 m joins 1 kg at 0: exactly 0.3/1.3 m (FAA-H-8083-1 weight addition),
    # written to 6 significant figures: within half a unit of the 6th of the exact value
    dx = F(entry["d_cg_m"][0])
    assert abs(dx - F(3, 13)) <= F(1, 2) * F(1, 10**6) + F(math.ulp(0.23))  # 0.230769|23...: 6th figure at 1e-6


def test_undefined_values_are_left_out_never_nan():
    # the first item of an empty ledger: before it there is no mass, so no CG and no margin
    empty = Ledger((), envelopes=(ENVELOPE,))
    after = empty.with_item(Item("frame", 41.5, (3.10, 0.02, 0.40)))
    h = History(empty)
    h.apply(after, action="add", item="frame", summary="first", loadout=None, author="ana")
    text = ledger_to_toml(ledger_with_log(after, h.log))
    assert "nan" not in text
    (entry,) = tomllib.loads(text)["change"]
    assert "d_cg_m" not in entry and "d_margin_m" not in entry
    (back,) = log_from_ledger(ledger_from_data(tomllib.loads(text), source="x"))
    assert back.effect.d_mass == 41.5 and back.effect.d_margin == ()


def test_an_edit_costs_one_line_per_key():
    h = History(LEDGER)
    h.apply(_edit(LEDGER, "motor", mass=13.0), action="edit", item="motor", summary="heavier motor",
            loadout=None, author="ana", now="2026-05-04T09:12:33Z")
    h.annotate("supplier data sheet rev C", "CR-0042")
    text = ledger_to_toml(ledger_with_log(h.ledger, h.log))
    block = text[text.index("[[change]]"):].strip().splitlines()
    assert len(block) == 13, block  # the header and one line per key: 12 keys with reason and request
    (entry,) = tomllib.loads(text)["change"]
    assert entry["reason"] == "supplier data sheet rev C" and entry["request"] == "CR-0042"
    assert entry["before"] == {"id": "motor", "mass_kg": 12.25} and entry["after"] == {"id": "motor", "mass_kg": 13.0}


def test_annotate_skips_saved_changes_and_those_with_a_reason():
    h = History(LEDGER)
    a = h.apply(_edit(LEDGER, "motor", mass=13.0), action="edit", item="motor", summary="a", loadout=None, author="x")
    saved = h.log
    h.apply(_edit(h.ledger, "motor", mass=14.0), action="edit", item="motor", summary="b", loadout=None, author="x")
    assert h.annotate("first reason", None, saved=saved) == 1
    assert h.annotate("second", "CR-9") == 1  # only `a` is left without one
    assert [(c.summary, c.reason, c.request) for c in h.log] == [("a", "second", "CR-9"), ("b", "first reason", None)]
    assert h.annotate("  ", "") == 0
    assert a.reason is None  # the change object handed out before is unchanged (frozen)
    before = h.log[0]
    h.undo()
    h.undo()
    assert h.ledger is LEDGER  # undo hands back the very ledger, whatever the notes
    assert h.redo() == before


@pytest.mark.parametrize("patch, field", [({"reason": 3}, "reason"), ({"request": ["CR-1"]}, "request")])
def test_bad_reason_or_request_is_located(patch, field):
    ledger = LEDGER.evolve(changes=({**GOOD, **patch},))
    with pytest.raises(SteelyardError) as e:
        log_from_ledger(ledger)
    assert e.value.subject == "change #1" and e.value.field == field
