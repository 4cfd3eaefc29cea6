"""``tradeoff confirm``: confirmation runs against their prediction intervals.
"""
from __future__ import annotations

import json


__all__ = ["add", "run"]


def add(commands) -> None:
    """Add ``confirm`` and its options to the sub-command parsers."""
    confirm = commands.add_parser(
        "confirm", help="compare the study's confirmation runs with the predictions")
    confirm.add_argument("study", help="the study file (.toml) with [[confirmations]]")
    confirm.add_argument("--json", action="store_true", help="print the check as JSON")
    confirm.set_defaults(run=run)


def run(args) -> int:
    from ..confirm.check import check_confirmations
    from ..study.confirmations import confirmation_files
    from ..report.provenance import provenance
    from ..derive.load import load_study

    study = load_study(args.study)
    check = check_confirmations(study)
    if args.json:
        block = provenance(study, extra_files=confirmation_files(study))
        print(json.dumps(check.to_dict() | {"provenance": block}, indent=2))
    else:
        print(check.text())
    return 0
