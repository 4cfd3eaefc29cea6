"""``tradeoff frontier``: what one goal costs in another, along the trade-off frontier.
"""
from __future__ import annotations

import json

from .arguments import seed_number, whole_number

__all__ = ["add", "run"]


def add(commands) -> None:
    """Add ``frontier`` and its options to the sub-command parsers."""
    front = commands.add_parser(
        "frontier", help="the settings where one goal gains only at another's cost, "
                         "with the knee and the exchange rate")
    front.add_argument("study", help="the study file (.toml) with goals")
    front.add_argument("--between", required=True, metavar="A,B[,C]",
                       help="two or three goals to trade, separated by commas "
                            "(e.g. liking,cost)")
    front.add_argument("--points", type=whole_number(3), default=21, metavar="N",
                       help="number of frontier points (default 21)")
    front.add_argument("--seed", type=seed_number, default=None, metavar="S",
                       help="seed of the search and of the chances (default: the study's seed)")
    front.add_argument("--json", action="store_true", help="print the frontier as JSON")
    front.add_argument("--out", metavar="FILE", default=None,
                       help="also save the frontier: a .csv file gets one row per point, "
                            "any other name the JSON")
    front.set_defaults(run=run)


def run(args) -> int:
    from ..derive.load import load_study
    from ..search.frontier import frontier

    between = [b for b in args.between.split(",")]
    study = load_study(args.study)
    result = frontier(study, between, points=args.points, seed=args.seed)
    data = result.to_dict()
    if args.json or (args.out and not args.out.lower().endswith(".csv")):
        from ..report.provenance import provenance

        data = data | {"provenance": provenance(study, seed=result.seed)}
    if args.out:
        from ..study.files import write_atomic

        if args.out.lower().endswith(".csv"):
            from ..study.safe_cells import csv_bytes

            write_atomic(args.out, csv_bytes(result.table()))
        else:
            write_atomic(args.out, json.dumps(data, indent=2) + "\n")
    print(json.dumps(data, indent=2) if args.json else result.text())
    return 0
