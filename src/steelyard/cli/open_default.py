"""`steelyard [FILE]` with no command: the full-screen editor when there is a
terminal and the editor is installed, else the roll-up (of FILE or the demo)."""

from __future__ import annotations

import argparse
import importlib.util
import sys


def run_default(path: str | None) -> int:
    if sys.stdout.isatty() and sys.stdin.isatty() and importlib.util.find_spec("steelyard.tui.app"):
        from steelyard.tui.launch import launch

        return launch(path)
    from steelyard.io.ledger.demo import demo_path
    from steelyard.cli.commands.cmd_rollup import run

    return run(argparse.Namespace(file=path or str(demo_path()), loadout=None, json=False, units=None))
