"""The ``tradeoff`` command line: the top parser, and one run that never ends in
a traceback.

Errors the library raises on purpose print as one ``error:`` line on stderr
and exit with status 2, never with a traceback.
"""
from __future__ import annotations

import argparse
import sys

from .. import __version__
from ..errors import TradeoffError
from . import app, check, confirm, fit, frontier, next_runs, optimize, panel, plan, report

__all__ = ["main", "build_parser"]

# In the order ``tradeoff --help`` lists them: the order of a study's life.
COMMANDS = (check, fit, panel, plan, report, confirm, optimize, frontier, next_runs, app)


class _Parser(argparse.ArgumentParser):
    """argparse, but a mistake on the command line is one ``error:`` line."""

    def error(self, message: str):
        self.exit(2, f"error: {message}: see '{self.prog} --help' for the options\n")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="tradeoff",
        description="Find the factor settings that best balance several responses "
                    "measured in a designed experiment.")
    parser.add_argument("--version", action="version", version=f"tradeoff {__version__}")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND")
    for command in COMMANDS:
        command.add(commands)
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # argparse already printed its usage message
        return int(exc.code or 0)
    if not getattr(args, "run", None):
        parser.print_help()
        return 0
    try:
        return args.run(args)
    except TradeoffError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    except OSError as exc:  # a file the library did not expect to fail (disk, rights)
        name = f"{exc.filename}: " if exc.filename else ""
        print(f"error: {name}{exc.strerror or exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("error: stopped", file=sys.stderr)
        return 2


if __name__ == "__main__":
    sys.exit(main())
