"""Running the `steelyard` command in a fresh interpreter, as a user or a script would."""

from __future__ import annotations

import subprocess
import sys

# Runs the CLI's main() and then says on stderr whether Textual was imported on the way.
_HEADLESS = ("import sys; from steelyard.cli.main import main; rc = main(sys.argv[1:]); "
             "print('TEXTUAL' if 'textual' in sys.modules else 'CLEAN', file=sys.stderr); sys.exit(rc)")


def run_process(*args, cwd=None, env=None) -> subprocess.CompletedProcess:
    """`python -m steelyard ARGS` in a fresh interpreter: the finished process, its output as text."""
    return subprocess.run([sys.executable, "-m", "steelyard", *map(str, args)], capture_output=True, text=True,
                          cwd=cwd, env=env)


def run_cli(*args) -> tuple[int, str, str]:
    """`python -m steelyard ARGS`: (exit code, stdout, stderr)."""
    out = run_process(*args)
    return out.returncode, out.stdout, out.stderr


def run_main(capsys, *args) -> tuple[int, str, str]:
    """The CLI's main() in this process: (exit code, stdout, stderr) as pytest's `capsys` caught them."""
    from steelyard.cli.main import main  # here, so that importing this module imports no steelyard

    code = main([str(a) for a in args])
    out = capsys.readouterr()
    return code, out.out, out.err


def one_line_error(code: int, err: str, *parts: str) -> str:
    """Bad input ends with exit 2 and one line on stderr, no traceback, holding every part
    (DESIGN.md: the file, the item or table and the field); returns that line."""
    assert code == 2, err
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in err, err
    for p in parts:
        assert p in lines[0], (p, lines[0])
    return lines[0]


def process_one_line_error(out: subprocess.CompletedProcess, *parts: str) -> str:
    """`one_line_error` for a process from `run_process`."""
    return one_line_error(out.returncode, out.stderr, *parts)


def run_python(code: str, *args) -> tuple[int, str, str]:
    """`python -c CODE ARGS`: (exit code, stdout, stderr)."""
    out = subprocess.run([sys.executable, "-c", code, *map(str, args)], capture_output=True, text=True)
    return out.returncode, out.stdout, out.stderr


def run_headless(*args) -> tuple[int, str, str]:
    """The CLI with ARGS; stderr's last line is CLEAN if Textual was never imported, else TEXTUAL."""
    return run_python(_HEADLESS, *args)
