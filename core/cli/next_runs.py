"""``tradeoff next``: the next runs most likely to improve the best balance.
"""
from __future__ import annotations

import json

from .arguments import at_least_one, positive_number, seed_number

__all__ = ["add", "run"]


def add(commands) -> None:
    """Add ``next`` and its options to the sub-command parsers."""
    make_next = commands.add_parser(
        "next", help="suggest the next runs to make: those most likely to improve the "
                     "best balance (expected improvement of D)")
    make_next.add_argument("study", help="the study file (.toml) with goals and runs")
    make_next.add_argument("--runs", type=at_least_one, required=True, metavar="N",
                           help="how many runs to suggest")
    make_next.add_argument("--seed", type=seed_number, default=None, metavar="S",
                           help="seed of the candidates and draws (default: the study's "
                                "seed)")
    make_next.add_argument("--min-distance", type=positive_number, default=None, metavar="D",
                           help="no suggestion closer than D coded units to a run made or "
                                "another suggestion (default 0.3)")
    make_next.add_argument("--json", action="store_true", help="print the batch as JSON")
    make_next.add_argument("--out", metavar="SHEET",
                           help="also write the suggestions as a run sheet (.csv or .xlsx) "
                                "with the data file's columns, responses blank")
    make_next.set_defaults(run=run)


def run(args) -> int:
    from ..derive.load import load_study
    from ..search.next_batch import DEFAULT_MIN_DISTANCE, next_batch

    study = load_study(args.study)
    distance = DEFAULT_MIN_DISTANCE if args.min_distance is None else args.min_distance
    batch = next_batch(study, runs=args.runs, seed=args.seed, min_distance=distance)
    path = None
    if args.out:
        from ..plan.runsheet import write_run_sheet

        # refuses the study file, its data file and a sheet holding measurements
        path = write_run_sheet(batch.sheet, args.out, study=study)
    if args.json:
        from ..report.provenance import provenance

        out = batch.to_dict() | {"sheet": None if path is None else str(path)}
        print(json.dumps(out | {"provenance": provenance(study, seed=batch.seed)},
                         indent=2))
    else:
        print(batch.text())
        if path is not None:
            print(f"wrote {path}")
    return 0
