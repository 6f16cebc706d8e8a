"""The real program in tmux at 80x24 on the Quad Freighter tree: placed rows marked with their
file, an edit refused with its reason, the pod file opened in place, edited, saved, and back in the
vehicle with the new totals. Checked against the files with tomllib and exact arithmetic."""

from __future__ import annotations

import os
import time
import tomllib

import pytest

from support.assembly import as_floats, copy_tree, totals
from support.sigfig import sig_text

pytestmark = pytest.mark.slow  # a real terminal and a real program: seconds


def test_open_a_placed_file_in_tmux_edit_save_and_back(tmp_path, tmux):
    path = copy_tree(tmp_path)
    name = "tree"
    tmux.timeout = 20
    tmux.start(name, path.parent, path.name, keep_pane=True, env=dict(os.environ, TEXTUAL_ANIMATIONS="none"))
    screen = tmux.wait_for(name, "Mass ")
    lines = screen.splitlines()
    assert len(lines) <= 24 and max(len(line) for line in lines) <= 80
    tmux.keys(name, "g")  # a flat list: file order, own items first, then the placed ones
    tmux.wait_for(name, "flat")
    tmux.keys(name, *["Down"] * 4)  # hub, battery, gear, cargo, then pod-fr/motor
    screen = tmux.wait_for(name, "‹lift-pod›")
    assert "pod-fr/…" in screen  # at 80 columns the id column shows the placement, then an ellipsis
    tmux.keys(name, "e")
    tmux.wait_for(name, "belongs to")  # the message names the file (a toast: wrapped)
    tmux.keys(name, "o")
    tmux.wait_for(name, "lift-pod.toml — in quad-freighter.toml")
    tmux.wait_for(name, f"Mass {sig_text(913)} g")  # the pod alone, in its own units (pod file: 410+96+142+265 g)
    tmux.keys(name, "Home", "e")  # the table stays flat: the pod's rows in file order, motor first
    tmux.wait_for(name, "Edit item motor")
    time.sleep(1.0)  # the form's first field takes the focus once it is mounted
    tmux.keys(name, "End", *["BSpace"] * 8, "5", "0", "0")
    tmux.wait_for(name, "Δmass +90")  # the preview: 500 - 410 g
    tmux.keys(name, "Enter")
    tmux.wait_for(name, "* lift-pod.toml")
    tmux.keys(name, "C-s")
    tmux.wait_for(name, "reason for the change")
    tmux.keys(name, "Enter")  # no reason given: Enter skips it
    tmux.wait_gone(name, "* lift-pod.toml", timeout=20)
    tmux.wait_gone(name, "reason for the change", timeout=20)  # the prompt closed: the key goes to the table
    tmux.keys(name, "BSpace")
    mass, _cg = as_floats(totals(motor_g=500))  # by hand, exact (support.assembly)
    screen = tmux.wait_for(name, f"Mass {sig_text(mass)} kg")
    assert "quad-freighter.toml" in screen and "in quad-freighter" not in screen
    tmux.keys(name, "C-q")
    assert "Mass " not in tmux.wait_gone(name, "Mass ", timeout=30)
    pod = tomllib.loads((path.parent / "pods" / "lift-pod.toml").read_text())
    assert next(it for it in pod["item"] if it["id"] == "motor")["mass"] == 500.0
    vehicle = tomllib.loads(path.read_text())
    assert all("/" not in it["id"] for it in vehicle["item"])  # no placed item written into the parent
