"""The real program in a real terminal: a tmux server on a private socket.

Each test gets its own socket, so `kill-session` only ever reaches sessions
the test started. tmux is required (.ci/run installs it).
"""

from __future__ import annotations

import subprocess
import sys
import time
import uuid

# An invented two-item ledger (lb, in) that the tmux tests edit: one keystroke path
# (Down, e) reaches the shelf's form.
AVIONICS = """steelyard = 1

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
"""

class Tmux:
    """Sessions at 80x24 on one private tmux socket; keys sent and the screen read as a user would."""

    def __init__(self, prefix: str = "steelyard-test", timeout: float = 30.0, key_gap: float = 0.05,
                 poll: float = 0.2, wait: float = 30.0):
        self.sock = f"{prefix}-{uuid.uuid4().hex[:8]}"
        self.timeout = timeout  # per tmux command
        self.key_gap = key_gap  # between keys, as fingers would
        self.poll = poll  # between screen reads while waiting
        self.wait = wait  # how long wait_for waits by default (generous: a loaded machine is only slower)
        self.sessions: list[str] = []

    def run(self, *args: str) -> subprocess.CompletedProcess:
        return subprocess.run(["tmux", "-L", self.sock, *args], capture_output=True, text=True,
                              timeout=self.timeout)

    def start(self, name: str, folder, file_name: str, *, keep_pane: bool = False, env=None) -> int:
        """`python -m steelyard FILE` in a new detached session at 80x24; returns the pane's pid.

        keep_pane: the shell waits 30 s after the program ends (a traceback stays readable);
        otherwise the program is exec'd, so the pane's pid is the program's.
        """
        if keep_pane:
            command = f"cd {folder} && TERM=xterm-256color {sys.executable} -m steelyard {file_name}; sleep 30"
        else:
            command = (f"cd {folder} && exec env TERM=xterm-256color TEXTUAL_ANIMATIONS=none "
                       f"{sys.executable} -m steelyard {file_name}")
        subprocess.run(["tmux", "-L", self.sock, "new-session", "-d", "-s", name, "-x", "80", "-y", "24", command],
                       check=True, env=env, timeout=self.timeout)
        self.sessions.append(name)
        return int(self.run("display-message", "-p", "-t", name, "#{pane_pid}").stdout.strip())

    def screen(self, name: str) -> str:
        return self.run("capture-pane", "-p", "-t", name).stdout

    def keys(self, name: str, *keys: str) -> None:
        """One key at a time, a little apart."""
        for key in keys:
            self.run("send-keys", "-t", name, key)
            time.sleep(self.key_gap)

    def wait_for(self, name: str, text: str, timeout: float | None = None) -> str:
        """The screen once `text` is on it; fails with the last screen if it never appears."""
        end = time.monotonic() + (self.wait if timeout is None else timeout)
        screen = ""
        while time.monotonic() < end:
            screen = self.screen(name)
            if text in screen:
                return screen
            time.sleep(self.poll)
        raise AssertionError(f"{text!r} never appeared; the screen was:\n{screen}")

    def wait_gone(self, name: str, text: str, timeout: float) -> str:
        """Poll until `text` leaves the screen or the time is up; returns the screen then (the caller checks)."""
        end = time.monotonic() + timeout
        while time.monotonic() < end and text in self.screen(name):
            time.sleep(self.poll)
        return self.screen(name)

    def close(self) -> None:
        for name in self.sessions:
            self.run("kill-session", "-t", name)  # only this socket's sessions
