"""The real program in a real terminal: tmux at 80x24, keys sent as a user types them.

Starts `python -m steelyard FILE` in a detached tmux session on a private
socket, reads the screen with `capture-pane -p`, changes one item's mass with
`send-keys`, saves, quits, and checks the file with tomllib (not steelyard).
tmux is required (.ci/run installs it); without it this test fails.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import time
import tomllib
import uuid

LEDGER = """# a small invented ledger for the smoke test
steelyard = 1

[units]
mass = "lb"
length = "in"

[[item]]
id = "shelf"
name = "Avionics shelf"
group = "avionics"
mass = 4.4
cg = [142.0, 0.0, 24.0]

[[item]]
id = "radio"
name = "Panel radio"
group = "avionics"
mass = 3.1
cg = [106.0, 4.0, 26.0]

[[envelope]]
name = "normal"
axis = "x"
points = [[100.0, 1.0], [100.0, 20.0], [150.0, 20.0], [150.0, 1.0]]
"""


def _tmux(sock: str, *args: str) -> str:
    out = subprocess.run(["tmux", "-L", sock, *args], capture_output=True, text=True, timeout=20)
    return out.stdout


def _keys(sock: str, name: str, *keys: str) -> None:
    """One key at a time, a little apart, as fingers would."""
    for key in keys:
        _tmux(sock, "send-keys", "-t", name, key)
        time.sleep(0.05)


def _screen(sock: str, name: str) -> str:
    return _tmux(sock, "capture-pane", "-p", "-t", name)


def _wait_for(sock: str, name: str, text: str, timeout: float = 30.0) -> str:
    end = time.monotonic() + timeout
    screen = ""
    while time.monotonic() < end:
        screen = _screen(sock, name)
        if text in screen:
            return screen
        time.sleep(0.2)
    raise AssertionError(f"{text!r} never appeared; the screen was:\n{screen}")


def test_real_program_in_tmux_edit_one_value_save_and_quit(tmp_path):
    assert shutil.which("tmux"), "tmux is needed for this test (apt-get install tmux)"
    path = tmp_path / "ledger.toml"
    path.write_text(LEDGER)
    sock, name = f"steelyard-test-{uuid.uuid4().hex[:8]}", "smoke"
    command = f"cd {tmp_path} && TERM=xterm-256color {sys.executable} -m steelyard {path.name}; sleep 30"
    env = dict(os.environ, TEXTUAL_ANIMATIONS="none")
    subprocess.run(["tmux", "-L", sock, "new-session", "-d", "-s", name, "-x", "80", "-y", "24", command],
                   check=True, env=env, timeout=20)
    try:
        screen = _wait_for(sock, name, "Mass ")
        lines = screen.splitlines()
        assert len(lines) <= 24 and max(len(line) for line in lines) <= 80
        assert "shelf" in screen and "INSIDE" in screen and "Planning aid only" in screen
        # rows: the group "avionics", then its items in file order; the cursor starts on the group
        _keys(sock, name, "Down", "e")
        _wait_for(sock, name, "Edit item shelf")
        _keys(sock, name, "End", *["BSpace"] * 6, "5", ".", "2", "5")
        screen = _wait_for(sock, name, "Δmass +0.8500 lb")  # 5.25 - 4.4 lb, shown before applying
        _keys(sock, name, "Enter")
        _wait_for(sock, name, "* ledger.toml")  # the unsaved marker in the title
        _wait_for(sock, name, "5.250")  # the row shows the new mass
        _keys(sock, name, "C-s")
        _wait_for(sock, name, "comments")  # the file had comments: asked first
        _keys(sock, name, "Enter")  # first button: save, drop comments
        _wait_for(sock, name, "saved ")
        end = time.monotonic() + 20
        while time.monotonic() < end and "* ledger.toml" in _screen(sock, name):
            time.sleep(0.2)  # the unsaved marker goes with the save
        assert "* ledger.toml" not in _screen(sock, name)
        _keys(sock, name, "C-q")
        end = time.monotonic() + 30
        while time.monotonic() < end and "Mass " in _screen(sock, name):
            time.sleep(0.2)
        screen = _screen(sock, name)
        assert "Mass " not in screen, f"the program did not quit; the screen was:\n{screen}"
    finally:
        _tmux(sock, "kill-session", "-t", name)  # only this test's session (on its own socket)
    data = tomllib.loads(path.read_text())
    shelf = next(it for it in data["item"] if it["id"] == "shelf")
    assert shelf["mass"] == 5.25
    assert data["change"][-1]["item"] == "shelf"  # the change log went into the file
