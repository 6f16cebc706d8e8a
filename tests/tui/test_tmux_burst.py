"""The real program in tmux at 80x24: a whole item typed in one burst right after `a`.

One `send-keys` call carries `a` and every field with its Tabs, as a paste
over SSH without bracketing arrives; the fields must hold what was typed,
each in its own field. The file is then checked with tomllib (not steelyard).
"""

from __future__ import annotations

import os
import tomllib

import pytest

from support.tmux import AVIONICS

pytestmark = pytest.mark.slow  # a real terminal and a real program


def test_burst_after_a_fills_each_field_in_order(tmp_path, tmux):
    path = tmp_path / "ledger.toml"
    path.write_text(AVIONICS)
    name = "burst"
    # the program under test, whichever checkout this is (a relative PYTHONPATH would not survive the cd)
    import steelyard

    src = os.path.dirname(os.path.dirname(os.path.abspath(steelyard.__file__)))
    tmux.start(name, tmp_path, path.name, env=dict(os.environ, TEXTUAL_ANIMATIONS="none", PYTHONPATH=src))
    tmux.wait_for(name, "Mass ")
    # Tab order: id, name, group, quantity, mass, density, x, y, z (quantity and density left as they are)
    tmux.run("send-keys", "-t", name, "a", "fuse-01", "Tab", "Fuselage shell", "Tab", "structure", "Tab",
             "Tab", "2.5", "Tab", "Tab", "120", "Tab", "0", "Tab", "10")
    screen = tmux.wait_for(name, "all fields valid")
    assert "Fuselage shell" in screen and "fuse-01" in screen
    tmux.run("send-keys", "-t", name, "Enter")
    tmux.wait_for(name, "* ledger.toml")
    tmux.run("send-keys", "-t", name, "C-s")
    tmux.wait_for(name, "reason for the change")  # the save asks why (optional)
    tmux.run("send-keys", "-t", name, "Enter")
    # the save clears the title's marker (its absence alone proves nothing: the question hides the title too)
    tmux.wait_for(name, "ledger.toml — steelyard", timeout=20)
    items = tomllib.loads(path.read_text())["item"]
    item = next(it for it in items if it["id"] == "fuse-01")
    assert (item["name"], item["group"], item["mass"]) == ("Fuselage shell", "structure", 2.5)
    assert item["cg"] == [120.0, 0.0, 10.0]
