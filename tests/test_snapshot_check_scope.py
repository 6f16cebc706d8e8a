"""`check` of a snapshot applies scopes as `check --loadout` of its source did.

A snapshot is one loadout's state frozen; an envelope or limit scoped to that
loadout (or to its condition) must apply to it, and one scoped elsewhere must
not. The expected scope comes from the fixture's own text (tomllib): the
trainer's "utility" envelope names loadouts = ["solo-training"] and its
landing-mass limit conditions = ["landing"] (docs/limits.md: a scoped rule
applies to the states carrying one of its tags).
"""

from __future__ import annotations

import json
import tomllib

import pytest

from support.cli import run_cli
from support.paths import FIXTURES

TRAINER = FIXTURES / "trainer.toml"
SOURCE = tomllib.loads(TRAINER.read_text())


def applies(check: dict) -> dict[str, bool]:
    state = next(s for s in check["states"] if s["kind"] == "loadout")
    return {f["name"]: f["applies"] for f in state["findings"]}


@pytest.mark.parametrize("loadout", ["solo-training", "trip"])
def test_scopes_of_a_snapshot_are_its_loadouts(tmp_path, loadout):
    snap = tmp_path / "s.toml"
    rc, _, err = run_cli("snapshot", TRAINER, "--loadout", loadout, "-o", snap)
    assert rc == 0, err
    rc, out, err = run_cli("check", snap, "--json")
    assert rc in (0, 1), err
    got = applies(json.loads(out))
    rc, out, err = run_cli("check", TRAINER, "--loadout", loadout, "--json")
    want = applies(json.loads(out))
    assert got == want  # the same rules apply to the frozen state as to the loadout it froze
    utility = next(e for e in SOURCE["envelope"] if e["name"] == "utility")
    assert got["utility"] is (loadout in utility["loadouts"])  # independent of steelyard: the file's text
