"""`steelyard [FILE]` in a terminal: run the editor, return the exit code."""

from __future__ import annotations

import os
import sys


def launch(path: str | None) -> int:
    """Open FILE (or the demo as an unsaved copy when None); 0 on a normal quit, 2 if it cannot load."""
    from steelyard.tui.app import SteelyardApp

    app = SteelyardApp(os.path.abspath(path) if path else None)
    try:
        app.run()
    finally:
        if app.session is not None:
            app.session.release_lock()  # also after a crash or a lost SSH connection (SIGHUP)
    code = app.return_code
    if code is None:  # pragma: no cover - the app never started
        print("steelyard: the editor did not start", file=sys.stderr)
        return 2
    return int(code)
