"""The ``tradeoff`` command line: one sub-command per job.

Errors the library raises on purpose print as one ``error:`` line on stderr
and exit with status 2, never with a traceback.
"""
from __future__ import annotations

import argparse
import json
import sys

from . import __version__
from .errors import TradeoffError

__all__ = ["main", "build_parser"]


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="tradeoff",
        description="Find the factor settings that best balance several responses "
                    "measured in a designed experiment.")
    parser.add_argument("--version", action="version", version=f"tradeoff {__version__}")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND")

    check = commands.add_parser("check", help="load a study, validate it, print a summary")
    check.add_argument("study", help="the study file (.toml)")
    check.add_argument("--json", action="store_true", help="print the summary as JSON")
    check.set_defaults(run=_run_check)
    return parser


def _run_check(args) -> int:
    from .study import load_study
    from .summary import study_summary, summary_text

    study = load_study(args.study)
    summary = study_summary(study)
    if args.json:
        print(json.dumps(summary, indent=2))
    else:
        print(summary_text(summary))
    return 0




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
    except KeyboardInterrupt:
        print("error: stopped", file=sys.stderr)
        return 2


if __name__ == "__main__":
    sys.exit(main())
