"""The `steelyard` command.

With no sub-command it opens the full-screen editor (or, headless, the
demo's roll-up). Sub-commands are the modules `steelyard.cli.commands.cmd_*`, each
with NAME, HELP, add_arguments(parser) and run(args) -> exit code. Headless
commands never import Textual.

Errors: a SteelyardError is one line and exit 2. So is any OSError that
escapes a command (a full disk, a file-size limit, an unwritable folder):
exit 1 means "a limit is broken" to CI, never "could not write".
"""

from __future__ import annotations

import argparse
import importlib
import os
import signal
import sys

from steelyard import __version__
from steelyard.core.errors import SteelyardError

EXIT_OK, EXIT_LIMIT, EXIT_INPUT = 0, 1, 2
NO_CACHE_HELP = ("read every ledger afresh: neither read nor write the read cache (also: environment "
                 "STEELYARD_NO_CACHE=1)")


def _no_cache() -> None:
    from steelyard.io.ledger.cache import turn_off

    turn_off()


class _Parser(argparse.ArgumentParser):
    """argparse, but a usage error is one line and exit 2."""

    def error(self, message: str):  # noqa: D401 - argparse API
        self.exit(EXIT_INPUT, f"steelyard: {message} (see 'steelyard --help')\n")


def _commands(only: str | None = None):
    """The command modules; with `only` (a command's name), that one module alone, so that running
    one command never imports what the other commands import at their top."""
    import pkgutil

    import steelyard.cli.commands as pkg

    if only is not None:
        yield importlib.import_module(f"steelyard.cli.commands.cmd_{only.replace('-', '_')}")
        return
    for info in sorted(pkgutil.iter_modules(pkg.__path__), key=lambda m: m.name):
        if info.name.startswith("cmd_"):
            yield importlib.import_module(f"steelyard.cli.commands.{info.name}")


def build_parser(only: str | None = None) -> argparse.ArgumentParser:
    """The whole command line; with `only`, the sub-command of that name alone (enough to parse a
    command line that starts with it: its usage, help and errors are the same)."""
    parser = _Parser(prog="steelyard", description=(
        "Weight and mass-properties ledger: roll-ups, loadouts, CG envelopes. "
        "Run with no command to open the full-screen editor."))
    parser.add_argument("--version", action="version", version=f"steelyard {__version__}")
    parser.add_argument("--no-cache", action="store_true", help=NO_CACHE_HELP)
    subs = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for mod in _commands(only):
        p = subs.add_parser(mod.NAME, help=mod.HELP, description=getattr(mod, "DESCRIPTION", mod.HELP))
        mod.add_arguments(p)
        # accepted after the command too; SUPPRESS: absent here, it leaves the main parser's value alone
        p.add_argument("--no-cache", action="store_true", default=argparse.SUPPRESS, help=NO_CACHE_HELP)
        p.set_defaults(run=mod.run)
    return parser


def _os_error(exc: OSError) -> str:
    """One line for an OSError that escaped a command: `FILE: <reason>`, never a traceback."""
    reason = exc.strerror or str(exc) or type(exc).__name__
    if exc.filename is None:  # most likely stdout itself (a full disk under a redirection)
        _drop_stdout()
        return f"steelyard: {SteelyardError(reason)}"
    return f"steelyard: {SteelyardError(reason, file=os.fsdecode(exc.filename))}"


def _drop_stdout() -> None:
    """Point stdout at /dev/null, so Python does not fail again flushing it at exit."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        os.close(devnull)
    except (OSError, ValueError, AttributeError):
        pass


def _ignore_file_size_signal() -> None:
    """Over a file-size limit (ulimit -f) write() then fails with EFBIG and is reported, not a core dump."""
    try:
        signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
    except (AttributeError, ValueError):  # not POSIX, or not the main thread
        pass


def main(argv: list[str] | None = None) -> int:
    try:
        return _main(argv)
    finally:  # --no-cache holds for one command line (main may run again in the same process)
        cache = sys.modules.get("steelyard.io.ledger.cache")
        if cache is not None:
            cache.turn_off(False)


def _main(argv: list[str] | None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    _ignore_file_size_signal()
    try:
        while argv and argv[0] == "--no-cache":  # before the command: taken here, so the one-command parser is kept
            argv = argv[1:]
            _no_cache()
        names = _names() if argv else set()
        if not argv or (len(argv) == 1 and not argv[0].startswith("-") and argv[0] not in names):
            from steelyard.cli.open_default import run_default

            return run_default(argv[0] if argv else None)
        parser = build_parser(argv[0] if argv[0] in names else None)
        args = parser.parse_args(argv)
        if getattr(args, "no_cache", False):
            _no_cache()
        if getattr(args, "run", None) is None:
            parser.print_help()
            return EXIT_INPUT
        if hasattr(args, "mass_unit"):  # a command that prints for people: saved settings and unit flags
            from steelyard.cli.unit_options import unit_choice

            args.units = unit_choice(args)
        code = int(args.run(args))
    except SteelyardError as exc:
        print(f"steelyard: {exc}", file=sys.stderr)
        return EXIT_INPUT
    except KeyboardInterrupt:
        return 130
    except BrokenPipeError:
        return EXIT_OK
    except OSError as exc:
        print(_os_error(exc), file=sys.stderr)
        return EXIT_INPUT
    try:
        sys.stdout.flush()  # a full disk under stdout shows here, not as a traceback at exit
    except BrokenPipeError:
        return code
    except OSError as exc:
        _drop_stdout()
        print(f"steelyard: <stdout>: cannot write: {exc.strerror or exc}", file=sys.stderr)
        return EXIT_INPUT
    return code


def _names() -> set[str]:
    """Every command's name, from the file names alone (pkgutil would import inspect: 5 ms)."""
    import steelyard.cli.commands as pkg

    try:
        files = [f for folder in pkg.__path__ for f in os.listdir(folder)]
    except OSError:  # not a folder (a zip import): ask pkgutil
        import pkgutil

        files = [f"{m.name}.py" for m in pkgutil.iter_modules(pkg.__path__)]
    stems = {os.path.splitext(f)[0] for f in files if f.endswith((".py", ".pyc"))}
    return {f[4:].replace("_", "-") for f in stems if f.startswith("cmd_")}


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
