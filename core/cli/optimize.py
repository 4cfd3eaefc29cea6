"""``tradeoff optimize``: the settings that best balance every goal, with alternatives.
"""
from __future__ import annotations

import json

from .arguments import at_least_one, seed_number

__all__ = ["add", "run"]


def add(commands) -> None:
    """Add ``optimize`` and its options to the sub-command parsers."""
    best = commands.add_parser(
        "optimize", help="find the settings that best balance every goal, with alternatives")
    best.add_argument("study", help="the study file (.toml) with goals")
    best.add_argument("--json", action="store_true", help="print the result as JSON")
    best.add_argument("--top", type=at_least_one, default=5, metavar="N",
                      help="show the best settings and up to N-1 distinct alternatives "
                           "(default 5)")
    best.add_argument("--seed", type=seed_number, default=None, metavar="S",
                      help="seed of the search and of the chances (default: the study's seed)")
    best.add_argument("--rank-by", choices=("desirability", "chance", "production"),
                      default="desirability",
                      help="order solutions by overall desirability (default), by the "
                           "chance of meeting every limit, or by that chance for one "
                           "production batch (factors spread by their production_sd)")
    best.add_argument("--for", dest="aim", choices=("balance", "production"),
                      default="balance",
                      help="balance: the best overall desirability first (default); "
                           "production: first the settings most likely to meet every limit "
                           "in production (factors spread by their production_sd), beside "
                           "the best balance, with the D each gives up")
    best.add_argument("--weights-sensitivity", action="store_true",
                      help="also say how steady the best settings are: each goal's weight "
                           "halved and doubled, each limit moved 10%% of its span, one at "
                           "a time, and how far the settings and predictions move")
    best.set_defaults(run=run)


def run(args) -> int:
    from ..search.search import optimize
    from ..derive.load import load_study

    study = load_study(args.study)
    fit = steady = None
    if args.weights_sensitivity:
        from ..model.study_fit import fit_study

        fit = fit_study(study)  # one fit for the search and the changes
    result = optimize(study, top=args.top, seed=args.seed, rank_by=args.rank_by,
                      aim=args.aim, fit=fit)
    unsteady = None  # why the steadiness could not be judged
    if args.weights_sensitivity:
        from ..errors import SearchError
        from ..search.sensitivity import sensitivity

        try:
            steady = sensitivity(study, result=result, fit=fit, seed=result.seed)
        except SearchError as exc:  # no setting within every limit: the result still prints
            unsteady = str(exc)
    if args.json:
        from ..report.provenance import provenance

        # tool version, file fingerprints, date and seed: enough to reproduce it
        block = provenance(study, seed=result.seed)
        data = result.to_dict() | {"provenance": block}
        if steady is not None:
            data["sensitivity"] = steady.to_dict()
        elif unsteady is not None:
            data["sensitivity"] = {"note": unsteady}
        print(json.dumps(data, indent=2))
    else:
        from ..search.result import fewer_solutions_text

        print(result.text())
        fewer = fewer_solutions_text(result, args.top)
        if fewer:
            print(f"fewer solutions: {fewer}")
        if steady is not None:
            print()
            print(steady.text())
        elif unsteady is not None:
            print(f"steadiness not judged: {unsteady}")
    return 0
