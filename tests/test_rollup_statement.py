"""The text roll-up's weight statement: group subtotals and the printed text.

References:
- subtotals: exact fractions over the standard library's tomllib reading of the
  file, with the NIST SP 811 pound and inch (support.units): a group's mass is
  Σ m, its CG Σ m·r / Σ m (FAA-H-8083-1), its inertia about that CG
  Σ (I_own + m (|d|² E − d dᵀ)) (parallel-axis theorem, any dynamics text);
  a box's own inertia m (b² + c²) / 12 ... (docs/shapes.md, handbook forms).
- text: rich itself drawing the same tables (Console.print of a Table, what
  `steelyard rollup` printed before it drew them itself), with the group
  figures from a plain per-item loop written here.
"""

from __future__ import annotations

import io
import re
import sys
import tomllib
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest
from rich.text import Text

import steelyard.cli.render.rollup as rollup_render
from steelyard.cli.render.plain import Out, _to_rich
from steelyard.core.loading.loadout import resolve
from steelyard.core.physics.groups import GroupTotal, subtotals
from steelyard.core.physics.rollup import rollup_state
from steelyard.io.ledger.file import open_ledger
from support.exact import carried
from support.paths import FIXTURES
from support.units import IN, LB

sys.path.insert(0, str(Path(__file__).resolve().parent / "perf"))
from make_ledger import ledger_text  # noqa: E402

UNGROUPED = "(ungrouped)"
SGR = re.compile(r"\x1b\[[0-9;]*m")


def _paths(group: str) -> list[str]:
    parts = [p for p in group.split("/") if p] or [UNGROUPED]
    return ["/".join(parts[:k]) for k in range(1, len(parts) + 1)]


def _own_exact(it: dict) -> list[list[Fraction]]:
    """Own inertia of one unit, lb·in²: the file's table (products as integrals: off-diagonal −P)
    or a solid box's closed form."""
    if "inertia" in it:
        t = {k: Fraction(str(v)) for k, v in it["inertia"].items()}
        return [[t["xx"], -t["xy"], -t["xz"]], [-t["xy"], t["yy"], -t["yz"]], [-t["xz"], -t["yz"], t["zz"]]]
    zero = [[Fraction(0)] * 3 for _ in range(3)]
    if "shape" in it:
        assert it["shape"]["kind"] == "box"
        a, b, c = (Fraction(str(v)) for v in it["shape"]["size"])
        m = Fraction(str(it["mass"]))
        zero[0][0], zero[1][1], zero[2][2] = m * (b * b + c * c) / 12, m * (a * a + c * c) / 12, m * (a * a + b * b) / 12
    return zero


def _exact_groups(text: str, loadout: str | None) -> dict[str, dict]:
    """Per group path: count, mass (kg), CG (m) and inertia about it (kg·m²), exact."""
    data = tomllib.loads(text)
    if loadout is None:
        rows = [(it, Fraction(0) if it.get("variable") else Fraction(str(it["mass"])) * it.get("quantity", 1))
                for it in data["item"]]
    else:
        rows = [(it, m) for it, m in carried(data, loadout, {"lb": Fraction(1)})]
    members: dict[str, list] = {}
    for it, m_lb in rows:
        full = Fraction(str(it["mass"])) * it.get("quantity", 1)
        scale = it.get("quantity", 1) * (m_lb / full if full else 0)  # quantity × fill
        own = [[v * scale * LB * IN * IN for v in row] for row in _own_exact(it)]
        r = [Fraction(str(v)) * IN for v in it["cg"]]
        for path in _paths(it.get("group", "")):
            members.setdefault(path, []).append((m_lb * LB, r, own))
    out = {}
    for path, ms in members.items():
        mass = sum(m for m, _, _ in ms)
        cg = [sum(m * r[k] for m, r, _ in ms) / mass for k in range(3)] if mass else None
        inertia = [[sum(o[j][k] for _, _, o in ms) for k in range(3)] for j in range(3)]
        if mass:
            for m, r, _ in ms:
                d = [r[k] - cg[k] for k in range(3)]
                dd = sum(x * x for x in d)
                for j in range(3):
                    for k in range(3):
                        inertia[j][k] += m * ((dd if j == k else 0) - d[j] * d[k])
        out[path] = {"count": len(ms), "mass": mass, "cg": cg, "inertia": inertia}
    return out


@pytest.fixture(scope="module")
def generated(tmp_path_factory):
    path = tmp_path_factory.mktemp("statement") / "gen.toml"
    path.write_text(ledger_text(1500, seed=23))
    return path


@pytest.mark.parametrize("loadout", [None, "full", "partial"])
def test_subtotals_match_exact_sums(generated, loadout):
    text = generated.read_text()
    loaded = open_ledger(generated, cache=False)
    state = resolve(loaded.ledger, loadout)
    groups = [it.group for it in loaded.ledger.items]
    got = subtotals(groups, state.mass, state.cg, state.own_sparse())
    exact = _exact_groups(text, loadout)
    # every prefix once, parents before children, siblings by name: sorting by the list of parts
    assert [g.path for g in got] == sorted(exact, key=lambda p: p.split("/"))
    assert len(got) > 100  # a statement of many groups, several levels deep
    assert max(g.depth for g in got) == 2
    for g in got:
        ref = exact[g.path]
        assert g.depth == g.path.count("/")
        assert g.count == ref["count"]
        assert g.mass == pytest.approx(float(ref["mass"]), rel=1e-13)
        if ref["cg"] is None:
            assert np.isnan(g.cg).all()
        else:
            assert np.allclose(g.cg, [float(v) for v in ref["cg"]], rtol=1e-12, atol=1e-13)
        want = np.array([[float(v) for v in row] for row in ref["inertia"]])
        assert np.allclose(g.inertia_cg, want, rtol=1e-9, atol=1e-9 * max(1.0, np.abs(want).max()))


def test_dense_and_sparse_own_give_the_same_subtotals(generated):
    loaded = open_ledger(generated, cache=False)
    state = resolve(loaded.ledger, "partial")
    groups = [it.group for it in loaded.ledger.items]
    a = subtotals(groups, state.mass, state.cg, state.own)
    b = subtotals(groups, state.mass, state.cg, state.own_sparse())
    assert [(g.path, g.count, g.mass) for g in a] == [(g.path, g.count, g.mass) for g in b]
    for x, y in zip(a, b):
        assert np.array_equal(x.cg, y.cg, equal_nan=True) and np.array_equal(x.inertia_cg, y.inertia_cg)


def test_groups_one_level_deep_and_empty_groups():
    # one level only (a path per row, no expansion) and a group whose every row carries nothing
    groups = ["b", "a", "b", "", "c"]
    mass = np.array([1.0, 2.0, 3.0, 4.0, 0.0])
    cg = np.array([[1.0, 0, 0], [2, 0, 0], [5, 0, 0], [0, 1, 0], [9, 9, 9]])
    got = {g.path: g for g in subtotals(groups, mass, cg, (np.array([], dtype=int), np.zeros((0, 3, 3))))}
    assert list(got) == ["(ungrouped)", "a", "b", "c"]
    assert got["b"].mass == 4.0 and got["b"].cg[0] == 4.0  # (1·1 + 3·5) / 4
    # about its CG x = 4: 1·(1−4)² + 3·(5−4)² = 12 on Iyy and Izz, nothing on Ixx
    assert np.array_equal(got["b"].inertia_cg, np.diag([0.0, 12.0, 12.0]))
    assert got["c"].mass == 0.0 and np.isnan(got["c"].cg).all() and got["c"].count == 1


# -- the printed statement ---------------------------------------------------------------------


def _loop_subtotals(groups, mass, cg, own) -> list[GroupTotal]:
    """Group mass and CG by a plain loop over the rows in file order: the mean, then the mean
    of what is left (two passes, as a careful mean is taken). In float, row by row: where a CG
    falls exactly on a rounding tie of its printed digits (cargo-drone's avionics, y = 0.00895 m),
    the float sums decide, and these are the sums of a straightforward loop."""
    members: dict[str, list[int]] = {}
    for i, g in enumerate(groups):
        for path in _paths(g):
            members.setdefault(path, []).append(i)
    out = []
    for path in sorted(members, key=lambda p: p.split("/")):
        rows = members[path]
        total = 0.0
        for i in rows:
            total += float(mass[i])
        safe = total if total > 0 else 1.0
        c = []
        for k in range(3):
            s = 0.0
            for i in rows:
                s += float(mass[i]) * float(cg[i, k])
            mean = s / safe
            rest = 0.0
            for i in rows:
                rest += float(mass[i]) * (float(cg[i, k]) - mean)
            c.append(mean + rest / safe)
        cg_out = np.array(c) if total > 0 else np.full(3, np.nan)
        out.append(GroupTotal(path, path.count("/"), len(rows), total, cg_out, np.zeros((3, 3))))
    return out


class _RichOut(Out):
    """Every paragraph and table drawn by rich."""

    def line(self, text, style=None):
        self.console().print(Text(text, style=style or ""))

    def table(self, t):
        self.console().print(_to_rich(t))


def _ledgers(generated) -> list[Path]:
    files = sorted(FIXTURES.glob("*.toml")) + sorted(FIXTURES.glob("*/*.toml"))
    return [f for f in files if f.parent.name != "bad"] + [generated]


def _print(out_class, loaded, state, mp, system, env) -> tuple[str, Out]:
    buf = io.StringIO()
    out = out_class(buf, environ=env)
    rollup_render.print_rollup(loaded, state, mp, system, out)
    return buf.getvalue(), out


def test_statement_text_matches_rich_with_loop_subtotals(generated, monkeypatch):
    checked = 0
    for path in _ledgers(generated):
        loaded = open_ledger(path, cache=False)
        for loadout in [None] + [lo.name for lo in loaded.ledger.loadouts]:
            state = resolve(loaded.ledger, loadout)
            mp = rollup_state(state)
            for system in (None, "si"):
                for width in (80, 100, 132):
                    env = {"COLUMNS": str(width)}
                    got, out = _print(Out, loaded, state, mp, system, env)
                    if not loaded.ledger.growth and not loaded.ledger.allocations and path == generated:
                        assert out._console is None  # drawn without rich: the comparison is not trivial
                    with monkeypatch.context() as m:
                        m.setattr(rollup_render, "subtotals", _loop_subtotals)
                        want, _ = _print(_RichOut, loaded, state, mp, system, env)
                    assert got == want, (path.name, loadout, system, width)
                    assert "Weight statement by group" in got
                    checked += 1
    assert checked > 50


def test_statement_in_colour_is_the_same_text_with_styles(generated):
    loaded = open_ledger(generated, cache=False)
    state = resolve(loaded.ledger, "full")
    mp = rollup_state(state)
    for width in (80, 132):
        plain, _ = _print(Out, loaded, state, mp, None, {"COLUMNS": str(width)})
        styled, _ = _print(Out, loaded, state, mp, None, {"COLUMNS": str(width), "TTY_COMPATIBLE": "1"})
        assert SGR.sub("", styled) == plain
        lines = styled.splitlines()
        start = next(k for k, s in enumerate(lines) if SGR.sub("", s).startswith("Weight statement by group"))
        assert lines[start].startswith("\x1b[3mWeight statement")  # the title is italic
        rule = next(k for k in range(start, len(lines)) if "──" in lines[k])
        assert "\x1b[1m" in lines[rule - 1]  # the head row is bold
        total = next(k for k in range(rule, len(lines)) if SGR.sub("", lines[k]).startswith(" total "))
        assert all("\x1b[" not in s for s in lines[rule + 1:total])  # group rows carry no style
        assert lines[total].startswith(" \x1b[1mtotal")  # the total's label alone is bold
