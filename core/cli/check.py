"""``tradeoff check``: load a study, validate it, print its summary.
"""
from __future__ import annotations

import json


__all__ = ["add", "run"]


def add(commands) -> None:
    """Add ``check`` and its options to the sub-command parsers."""
    check = commands.add_parser("check", help="load a study, validate it, print a summary")
    check.add_argument("study", help="the study file (.toml)")
    check.add_argument("--json", action="store_true", help="print the summary as JSON")
    check.set_defaults(run=run)


def run(args) -> int:
    from ..derive.load import load_study
    from ..report.summary import study_summary, summary_text

    study = load_study(args.study)
    summary = study_summary(study)
    if args.json:
        print(json.dumps(summary, indent=2))
    else:
        print(summary_text(summary))
    return 0
