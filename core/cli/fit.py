"""``tradeoff fit``: a model for each response, its effects, ANOVA and fit figures.
"""
from __future__ import annotations

import json

from ..errors import TradeoffError

__all__ = ["add", "run"]


def add(commands) -> None:
    """Add ``fit`` and its options to the sub-command parsers."""
    fit = commands.add_parser(
        "fit", help="fit a model to each response: effects, p-values, R2, ANOVA")
    fit.add_argument("study", help="the study file (.toml)")
    fit.add_argument("--json", action="store_true", help="print the models as JSON")
    fit.add_argument("--response", metavar="NAME", action="append",
                     help="fit only this response (may be given more than once)")
    fit.add_argument("--reduce", action="store_true",
                     help="drop terms that are not needed (keeping the model hierarchical)")
    fit.add_argument("--compare", action="store_true",
                     help="rank the models main, interactions, quadratic and smooth by how "
                          "well each predicts runs left out of its fit")
    fit.add_argument("--screening", action="store_true",
                     help="the two-stage analysis of a definitive screening design: "
                          "active main effects, then second-order terms among them")
    fit.set_defaults(run=run)


def run(args) -> int:
    from ..report.fit_text import fit_text
    from ..model.study_fit import fit_response, fit_study
    from ..derive.load import load_study

    study = load_study(args.study)
    if getattr(args, "screening", False):
        from ..report.screening_text import screening_report, screening_text

        report = screening_report(study, args.study, responses=args.response,
                                  reduce=args.reduce)
        print(json.dumps(report, indent=2) if args.json else screening_text(report), end=""
              if not args.json else "\n")
        return 0
    if args.response:
        # a response asked for by name that cannot be modelled is an error
        fits = {name: fit_response(study, name, reduce=args.reduce)
                for name in dict.fromkeys(args.response)}
        report = {"responses": {k: m.report() for k, m in fits.items()}, "skipped": {}}
    else:
        report = fit_study(study, reduce=args.reduce).report()
        if not report["responses"]:
            raise TradeoffError("no response could be modelled: "
                                + "; ".join(report["skipped"].values()))
    comparisons, not_compared = {}, {}
    if args.compare:
        from ..model.compare import compare_models

        comparisons, not_compared = compare_models(study, responses=args.response)
        for name, c in comparisons.items():
            entry = report["responses"].get(name)
            if entry is not None:
                entry.update(comparison=c.to_list(), comparison_method=c.method,
                             best_model=c.best, comparison_notes=list(c.notes))
        report["not_compared"] = not_compared
    if args.json:
        print(json.dumps(report, indent=2))
    elif args.compare:
        from ..model.compare import comparison_text

        print(comparison_text(comparisons, not_compared), end="")
    else:
        print(fit_text(report), end="")
    return 0
