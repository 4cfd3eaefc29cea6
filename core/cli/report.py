"""``tradeoff report``: the result sheet as one HTML page or a workbook.
"""
from __future__ import annotations

from .arguments import at_least_one, seed_number

__all__ = ["add", "run"]


def add(commands) -> None:
    """Add ``report`` and its options to the sub-command parsers."""
    report = commands.add_parser(
        "report", help="write the result sheet: one HTML page (.html) or a workbook (.xlsx)")
    report.add_argument("study", help="the study file (.toml)")
    report.add_argument("--out", required=True, metavar="FILE",
                        help="the file to write: report.html (a page that works offline) "
                             "or report.xlsx (a workbook)")
    report.add_argument("--top", type=at_least_one, default=5, metavar="N",
                        help="show the best settings and up to N-1 alternatives (default 5)")
    report.add_argument("--seed", type=seed_number, default=None, metavar="S",
                        help="seed of the search and of the chances (default: the study's "
                             "seed)")
    report.set_defaults(run=run)


def run(args) -> int:
    from ..report.write import write_report
    from ..derive.load import load_study

    study = load_study(args.study)
    path = write_report(study, args.out, top=args.top, seed=args.seed)
    print(f"wrote {path}")
    return 0
