"""The `steelyard` command.

With no sub-command it opens the full-screen editor (or, headless, the
demo's roll-up). Sub-commands are the modules `steelyard.cli.commands.cmd_*`, each
with NAME, HELP, add_arguments(parser) and run(args) -> exit code. Headless
commands never import Textual.
"""

from __future__ import annotations

import argparse
import importlib
import pkgutil
import sys

from steelyard import __version__
from steelyard.core.errors import SteelyardError

EXIT_OK, EXIT_LIMIT, EXIT_INPUT = 0, 1, 2


class _Parser(argparse.ArgumentParser):
    """argparse, but a usage error is one line and exit 2."""

    def error(self, message: str):  # noqa: D401 - argparse API
        self.exit(EXIT_INPUT, f"steelyard: {message} (see 'steelyard --help')\n")


def _commands():
    import steelyard.cli.commands as pkg

    for info in sorted(pkgutil.iter_modules(pkg.__path__), key=lambda m: m.name):
        if info.name.startswith("cmd_"):
            yield importlib.import_module(f"steelyard.cli.commands.{info.name}")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="steelyard", description=(
        "Weight and mass-properties ledger: roll-ups, loadouts, CG envelopes. "
        "Run with no command to open the full-screen editor."))
    parser.add_argument("--version", action="version", version=f"steelyard {__version__}")
    subs = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for mod in _commands():
        p = subs.add_parser(mod.NAME, help=mod.HELP, description=getattr(mod, "DESCRIPTION", mod.HELP))
        mod.add_arguments(p)
        p.set_defaults(run=mod.run)
    return parser


def main(argv: list[str] | None = None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    try:
        if not argv or (len(argv) == 1 and not argv[0].startswith("-") and argv[0] not in _names()):
            from steelyard.cli.open_default import run_default

            return run_default(argv[0] if argv else None)
        parser = build_parser()
        args = parser.parse_args(argv)
        if getattr(args, "run", None) is None:
            parser.print_help()
            return EXIT_INPUT
        return int(args.run(args))
    except SteelyardError as exc:
        print(f"steelyard: {exc}", file=sys.stderr)
        return EXIT_INPUT
    except KeyboardInterrupt:
        return 130
    except BrokenPipeError:
        return EXIT_OK


def _names() -> set[str]:
    import steelyard.cli.commands as pkg

    return {m.name[4:] for m in pkgutil.iter_modules(pkg.__path__) if m.name.startswith("cmd_")}


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
