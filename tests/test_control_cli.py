"""Growth, allocations and uncertainty through the command line and the control tables.

Hand calculations: predicted = basic × (1 + growth allowance) per item
(ANSI/AIAA S-120A concept, REFERENCES.md), CG = Σ moment / Σ mass
(FAA-H-8083-1), first-order propagation (JCGM 100, the GUM), and the normal
distribution function Φ(z) = (1 + erf(z/√2)) / 2 for Monte Carlo checks,
with the binomial standard error of a sampled probability.
"""

import json
import math
from fractions import Fraction as F

import numpy as np
import pytest
from rich.console import Console

from steelyard.cli.render.control import print_control
from steelyard.core.caution import CAUTION
from steelyard.core.control.growth import DEFAULT_GROWTH
from steelyard.core.loading.loadout import resolve
from steelyard.io.ledger.file import load_ledger
from steelyard.io.report.control import control_record, uncertainty_region
from support.cli import run_process
from support.paths import ROOT
from support.units import IN, LB


GROWTH = """steelyard = 1
[units]
mass = "lb"
length = "in"

[[item]]
id = "spar"
group = "structure/wing"
mass = 80.0
cg = [130.0, 0.0, 50.0]
maturity = "layout"          # the ledger's [growth] sets layout to 20 %

[[item]]
id = "skin"
group = "structure"
mass = 40.0
quantity = 2
cg = [140.0, 0.0, 45.0]
maturity = "released"        # default table: 5 %

[[item]]
id = "radio"
group = "avionics"
mass = 5.0
cg = [100.0, 10.0, 30.0]
maturity = "estimated"
growth = 0.30                # explicit, wins over the maturity

[[item]]
id = "seat"
group = "interior"
mass = 25.0
cg = [120.0, 0.0, 10.0]      # unclassified: no allowance

[[item]]
id = "fuel"
group = "fuel"
mass = 150.0
cg = [95.0, 0.0, 20.0]
variable = true

[growth]
layout = 0.20

[[allocation]]
group = "structure"
mass = 190.0

[[allocation]]
group = ""
mass = "90 kg"            # 198.4 lb: broken by the predicted 211.5 lb
"""


def _hand():
    """(group -> (basic, predicted, basic moment x, predicted moment x)) in lb and lb·in, exactly."""
    rows = {  # group, basic mass (lb, quantity applied), allowance, x (in)
        "spar": ("structure", F(80), F(1, 5), F(130)),
        "skin": ("structure", F(80), F(DEFAULT_GROWTH["released"]).limit_denominator(1000), F(140)),
        "radio": ("avionics", F(5), F(3, 10), F(100)),
        "seat": ("interior", F(25), F(0), F(120)),
        "fuel": ("fuel", F(0), F(0), F(95)),  # variable and empty with no loadout
    }
    assert DEFAULT_GROWTH["released"] == 0.05  # the table value this calculation uses
    out: dict = {}
    for group, m, g, x in rows.values():
        b, p, mb, mp = out.get(group, (0, 0, 0, 0))
        out[group] = (b + m, p + m * (1 + g), mb + m * x, mp + m * (1 + g) * x)
    return out


def test_growth_roll_up_through_cli_matches_hand_calculation(tmp_path):
    path = tmp_path / "g.toml"
    path.write_text(GROWTH)
    out = run_process("export", path, "--json", "-")
    assert out.returncode == 0, out.stderr
    control = json.loads(out.stdout)["control"]
    hand = _hand()
    groups = {g["group"]: g for g in control["growth"]["groups"]}
    assert set(groups) == set(hand)
    for name, (b, p, mb, mp) in hand.items():
        g = groups[name]
        assert g["basic_mass_kg"] == pytest.approx(float(b * LB), rel=1e-14, abs=1e-15)
        assert g["predicted_mass_kg"] == pytest.approx(float(p * LB), rel=1e-14, abs=1e-15)
        if b:
            assert g["basic_cg_m"][0] == pytest.approx(float(mb / b * IN), rel=1e-14)
            assert g["predicted_cg_m"][0] == pytest.approx(float(mp / p * IN), rel=1e-14)
    B = sum(v[0] for v in hand.values())
    P = sum(v[1] for v in hand.values())
    total = control["growth"]["total"]
    # basic 190 lb; predicted 80*1.2 + 80*1.05 + 5*1.3 + 25 = 211.5 lb
    assert B == 190 and P == F(4230, 20)
    assert total["basic_mass_kg"] == pytest.approx(float(B * LB), rel=1e-14)
    assert total["predicted_mass_kg"] == pytest.approx(float(P * LB), rel=1e-14)
    assert total["growth_fraction"] == pytest.approx(float((P - B) / B), rel=1e-13)
    MP = sum(v[3] for v in hand.values())
    assert total["predicted_cg_m"][0] == pytest.approx(float(MP / P * IN), rel=1e-14)
    alloc = {a["group"]: a for a in control["allocations"]}
    # margin = allocation - predicted: structure 190 - (96 + 84) = 10 lb
    assert alloc["structure"]["margin_kg"] == pytest.approx(float((190 - hand["structure"][1]) * LB), rel=1e-13)
    assert alloc[""]["margin_kg"] == pytest.approx(float(90 - P * LB), rel=1e-13)


def test_growth_with_a_loadout_counts_the_carried_amount(tmp_path):
    path = tmp_path / "g.toml"
    path.write_text(GROWTH + '\n[[loadout]]\nname = "half"\n[loadout.set]\nfuel = 0.5\n')
    ledger = load_ledger(path)
    rec = control_record(ledger, resolve(ledger, "half"))
    fuel = next(g for g in rec["growth"]["groups"] if g["group"] == "fuel")
    assert fuel["basic_mass_kg"] == pytest.approx(float(75 * LB), rel=1e-15)  # half of 150 lb
    assert fuel["growth_kg"] == 0


def test_print_control_tables(tmp_path):
    path = tmp_path / "g.toml"
    path.write_text(GROWTH)
    ledger = load_ledger(path)
    console = Console(record=True, width=140, file=open("/dev/null", "w"))
    print_control(console, ledger, resolve(ledger, None), None)
    text = console.export_text()
    assert "Basic vs predicted" in text and "Allocations" in text
    assert "211.50" in text and "190.00" in text  # hand calculation above, lb
    assert "basic [lb]" in text  # headers keep their units
    assert "OVER" in text  # whole vehicle: 90 kg = 198.42 lb < 211.5 lb predicted
    assert "within" in text  # structure: 190 - 180 = 10 lb to spare
    assert "10.00" in text


def test_print_control_prints_nothing_without_the_keys():
    ledger = load_ledger(ROOT / "fixtures" / "trainer.toml")
    console = Console(record=True, width=100, file=open("/dev/null", "w"))
    assert print_control(console, ledger, resolve(ledger, "takeoff"), "us") == {}
    assert console.export_text() == ""


UNCERTAIN = """steelyard = 1
[[item]]
id = "structure"
mass = 30.0
cg = [1.0, 0.0, 0.0]

[[item]]
id = "battery"
mass = 10.0
cg = [1.4, 0.0, 0.0]
tolerance = {{ cg = [{sigma}, 0.0, 0.0], kind = "{kind}" }}

[[envelope]]
name = "box"
axis = "x"
points = [[0.9, 10.0], [0.9, 100.0], [{aft}, 100.0], [{aft}, 10.0]]
"""


def _phi(z: float) -> float:
    return 0.5 * (1.0 + math.erf(z / math.sqrt(2.0)))


def test_monte_carlo_matches_normal_probability(tmp_path):
    # CG = (30·1.0 + 10·x_b) / 40 is linear in the battery's CG, so a normal x_b gives an
    # exactly normal CG: σ_cg = (10/40)·σ_b (GUM, first order = exact for linear models)
    sigma_b, aft = 0.08, 1.12
    path = tmp_path / "u.toml"
    path.write_text(UNCERTAIN.format(sigma=sigma_b, kind="sigma", aft=aft))
    ledger = load_ledger(path)
    rec = control_record(ledger, resolve(ledger, None), samples=40000, seed=7)
    q = rec["uncertainty"]
    cg = (30 * 1.0 + 10 * 1.4) / 40
    sigma = 10 / 40 * sigma_b
    assert q["sigma_cg_m"][0] == pytest.approx(sigma, rel=1e-12)
    assert q["sigma_mass_kg"] == 0
    assert q["worst_cg_m"][0] == pytest.approx(3 * sigma, rel=1e-12)  # sigma-kind counts as 3σ
    mc = q["monte_carlo"]["envelopes"][0]
    expected = 1.0 - _phi((aft - cg) / sigma)  # only the aft limit is within reach
    se = math.sqrt(expected * (1 - expected) / 40000)
    assert abs(mc["p_outside"] - expected) <= 4 * se, (mc, expected)
    assert mc["std_error"] == pytest.approx(se, rel=0.05)


def test_bound_tolerance_is_uniform_and_worst_case_is_the_bound(tmp_path):
    # uniform on ±b: σ = b/√3; P(CG > aft) = (cg + (10/40) b − aft) / (2 (10/40) b) (uniform distribution)
    b, aft = 0.2, 1.13
    path = tmp_path / "u.toml"
    path.write_text(UNCERTAIN.format(sigma=b, kind="bound", aft=aft))
    ledger = load_ledger(path)
    q = control_record(ledger, resolve(ledger, None), samples=40000, seed=3)["uncertainty"]
    cg, half = 1.1, 10 / 40 * b
    assert q["worst_cg_m"][0] == pytest.approx(half, rel=1e-12)
    assert q["sigma_cg_m"][0] == pytest.approx(half / math.sqrt(3), rel=1e-12)
    p = (cg + half - aft) / (2 * half)
    mc = q["monte_carlo"]["envelopes"][0]
    assert abs(mc["p_outside"] - p) <= 4 * math.sqrt(p * (1 - p) / 40000)


def test_print_control_shows_probability_and_caution(tmp_path):
    path = tmp_path / "u.toml"
    path.write_text(UNCERTAIN.format(sigma=0.08, kind="sigma", aft=1.12))
    ledger = load_ledger(path)
    console = Console(record=True, width=120, file=open("/dev/null", "w"))
    rec = print_control(console, ledger, resolve(ledger, None), "si", samples=5000)
    text = " ".join(console.export_text().split())
    assert "Probability outside" in text and "box" in text
    assert f"{rec['uncertainty']['monte_carlo']['envelopes'][0]['p_outside']:.4f}" in text
    assert " ".join(CAUTION.split()) in text


def test_uncertainty_region_is_the_k_sigma_ellipse():
    # the k-sigma ellipse is where the Mahalanobis distance (p - c)ᵀ Σ⁻¹ (p - c) equals k²
    cov = np.zeros((4, 4))
    cov[0, 0], cov[1, 1], cov[0, 1] = 4.0, 0.0004, 0.02  # mass, x; correlated (ρ = 0.5)
    cov[1, 0] = cov[0, 1]
    pts = uncertainty_region(cov, 1.5, 300.0, "x", k=2.0, points=50)
    sub = np.array([[cov[1, 1], cov[1, 0]], [cov[0, 1], cov[0, 0]]])
    d = pts - [1.5, 300.0]
    md = np.einsum("ni,ij,nj->n", d, np.linalg.inv(sub), d)
    np.testing.assert_allclose(md, 4.0, rtol=1e-9)


def test_export_json_items_in_si(tmp_path):
    out = run_process("export", ROOT / "fixtures" / "trainer.toml", "--json", "-")
    assert out.returncode == 0, out.stderr
    data = json.loads(out.stdout)
    wing = next(it for it in data["items"] if it["id"] == "wing-l")
    # trainer.toml: mass = 99.0 lb, cg = [138, -84, 50] in (NIST SP 811 factors)
    assert wing["mass_kg"] == pytest.approx(float(99 * LB), rel=1e-15)
    assert wing["cg_m"] == pytest.approx([float(138 * IN), float(-84 * IN), float(50 * IN)], rel=1e-15)
    assert data["rollup"]["loadout"] is None
    assert [r["loadout"] for r in data["loadouts"]] == [
        "solo-training", "two-up-full-fuel", "trip", "max-baggage", "takeoff"]
    assert "control" not in data  # the trainer carries no growth, allocation or tolerance keys
    # the embedded record is the rollup --json contract
    contract = json.loads(run_process("rollup", ROOT / "fixtures" / "trainer.toml", "--json", "--loadout", "takeoff").stdout)
    assert data["loadouts"][-1] == contract
