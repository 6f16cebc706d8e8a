"""The real program in a real terminal: tmux at 80x24, keys sent as a user types them.

Starts `python -m steelyard FILE` in a detached tmux session on a private
socket, reads the screen with `capture-pane -p`, changes one item's mass with
`send-keys`, saves, quits, and checks the file with tomllib (not steelyard).
tmux is required (.ci/run installs it); without it this test fails.
"""

from __future__ import annotations

import os
import tomllib

import pytest

from support.tmux import AVIONICS

pytestmark = pytest.mark.slow  # a real terminal and a real program: seconds, not milliseconds

LEDGER = "# a small invented ledger for the smoke test\n" + AVIONICS + """
[[envelope]]
name = "normal"
axis = "x"
points = [[100.0, 1.0], [100.0, 20.0], [150.0, 20.0], [150.0, 1.0]]
"""


def test_real_program_in_tmux_edit_one_value_save_and_quit(tmp_path, tmux):
    path = tmp_path / "ledger.toml"
    path.write_text(LEDGER)
    name = "smoke"
    tmux.timeout = 20
    tmux.start(name, tmp_path, path.name, keep_pane=True, env=dict(os.environ, TEXTUAL_ANIMATIONS="none"))
    for text in ("Mass ", "INSIDE", "Planning aid only"):  # the screen may be painted a part at a time
        screen = tmux.wait_for(name, text)
    lines = screen.splitlines()
    assert len(lines) <= 24 and max(len(line) for line in lines) <= 80
    assert "shelf" in screen and "INSIDE" in screen and "Planning aid only" in screen
    # rows: the group "avionics", then its items in file order; the cursor starts on the group
    tmux.keys(name, "Down", "e")
    tmux.wait_for(name, "Edit item shelf")
    tmux.keys(name, "End", *["BSpace"] * 6, "5", ".", "2", "5")
    screen = tmux.wait_for(name, "Δmass +0.8500 lb")  # 5.25 - 4.4 lb, shown before applying
    tmux.keys(name, "Enter")
    tmux.wait_for(name, "* ledger.toml")  # the unsaved marker in the title
    tmux.wait_for(name, "5.250")  # the row shows the new mass
    tmux.keys(name, "C-s")  # the file has a comment: kept; the one question is the change's reason
    tmux.wait_for(name, "Save: reason")
    tmux.keys(name, "Enter")  # skipped
    # the unsaved marker goes with the save (the "saved" notice lasts seconds: a busy machine may miss it)
    assert "* ledger.toml" not in tmux.wait_gone(name, "* ledger.toml", timeout=20)
    tmux.keys(name, "C-q")
    screen = tmux.wait_gone(name, "Mass ", timeout=30)
    assert "Mass " not in screen, f"the program did not quit; the screen was:\n{screen}"
    assert path.read_text().startswith("# a small invented ledger")
    data = tomllib.loads(path.read_text())
    shelf = next(it for it in data["item"] if it["id"] == "shelf")
    assert shelf["mass"] == 5.25
    assert data["change"][-1]["item"] == "shelf"  # the change log went into the file
