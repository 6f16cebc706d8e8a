"""Running the `steelyard` command in a fresh interpreter, as a user or a script would."""

from __future__ import annotations

import subprocess
import sys

# Runs the CLI's main() and then says on stderr whether Textual was imported on the way.
_HEADLESS = ("import sys; from steelyard.cli.main import main; rc = main(sys.argv[1:]); "
             "print('TEXTUAL' if 'textual' in sys.modules else 'CLEAN', file=sys.stderr); sys.exit(rc)")


def run_cli(*args) -> tuple[int, str, str]:
    """`python -m steelyard ARGS`: (exit code, stdout, stderr)."""
    out = subprocess.run([sys.executable, "-m", "steelyard", *map(str, args)], capture_output=True, text=True)
    return out.returncode, out.stdout, out.stderr


def run_python(code: str, *args) -> tuple[int, str, str]:
    """`python -c CODE ARGS`: (exit code, stdout, stderr)."""
    out = subprocess.run([sys.executable, "-c", code, *map(str, args)], capture_output=True, text=True)
    return out.returncode, out.stdout, out.stderr


def run_headless(*args) -> tuple[int, str, str]:
    """The CLI with ARGS; stderr's last line is CLEAN if Textual was never imported, else TEXTUAL."""
    return run_python(_HEADLESS, *args)
