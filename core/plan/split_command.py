"""``tradeoff plan`` for a study with hard-to-change factors: a split-plot
factorial or an optimal split-plot design, its run sheet grouped by whole plot,
and its judging under the assumed variance ratio (``--ratio``)."""
from __future__ import annotations

import numpy as np

from ..errors import PlanError
from .split_plot import (WHOLE_PLOT_COLUMN, check_ratio, group_runs, hard_and_easy,
                         split_plot_evaluation, split_plot_factorial)

__all__ = ["split_plot_route", "split_plot_text"]


def split_plot_route(args) -> tuple[dict, str] | None:
    """The split-plot plan when the study has hard-to-change factors, else None."""
    from ..derive.load import load_study

    study = load_study(args.study, with_data=False)
    whole_plots = getattr(args, "whole_plots", None)
    ratio_given = getattr(args, "ratio", None)
    if not any(f.hard_to_change for f in study.factors):
        if whole_plots is not None or ratio_given is not None:
            raise PlanError("--whole-plots and --ratio plan runs that share a batch, but no "
                            "factor is marked hard_to_change = true in the study file: mark "
                            "the factors set once per batch, or leave the options out")
        return None
    ratio = check_ratio(ratio_given)
    hard, _ = hard_and_easy(study)
    design = getattr(args, "design", None) or "factorial"
    if design not in ("factorial", "optimal"):
        raise PlanError(f"--design {design} does not group runs into whole plots: a study "
                        "with hard-to-change factors is planned with --design factorial "
                        "or --design optimal")
    clash = [name for name, given in (("--augment", bool(args.augment)),
                                      ("--foldover", args.foldover),
                                      ("--blocks", args.blocks != 1),
                                      ("--keep", bool(getattr(args, "keep", False))))
             if given]
    if clash:
        raise PlanError(f"{', '.join(clash)} cannot be used with hard-to-change factors "
                        "(the runs are grouped in whole plots instead): leave "
                        f"{'them' if len(clash) > 1 else 'it'} out")
    seed = study.seed if args.seed is None else args.seed
    model = _model(args, study)
    column = study.whole_plot or WHOLE_PLOT_COLUMN
    if design == "factorial":
        plan, wp_summary = split_plot_factorial(
            study, runs=args.runs, resolution=args.resolution, whole_plots=whole_plots,
            replicates=args.replicates, center=args.center or 0, seed=seed)
    else:
        plan, wp_summary = _optimal(study, args, hard, model, ratio, seed, column)
    coded = plan.coded.to_numpy(float)
    plots = plan.runs[column].to_numpy(dtype=object)
    from .evaluation import evaluate_design
    from .layouts import prediction_figures
    from .runsheet import plan_text, run_sheet, write_run_sheet

    evaluation = evaluate_design(study.factors, coded, model, effect=args.effect,
                                 sd=args.sd, alpha=1 - study.confidence)
    sheet = run_sheet(plan, study)
    path = write_run_sheet(sheet, args.out, study=study)
    report = plan.summary()
    report["layout"] = design
    report["model"] = evaluation.summary()
    split = split_plot_evaluation(study, coded, plots, model, ratio=ratio,
                                  effect=args.effect, sd=args.sd,
                                  alpha=1 - study.confidence)
    split.update(column=column, hard_to_change=[study.factors[j].name for j in hard],
                 whole_plot_design=wp_summary,
                 runs_per_plot=sorted({int(v) for v in
                                       plan.runs[column].value_counts().to_numpy()}))
    report["split_plot"] = split
    report["prediction_variance"] = prediction_figures(study, plan, model)
    report["run_sheet"] = str(path)
    text = plan_text(report, sheet, path).splitlines()
    return report, "\n".join(text[:-1] + split_plot_text(split) + text[-1:])


def _model(args, study):
    from .runsheet import _model_option

    model = _model_option(getattr(args, "model", None))
    model = model or (study.terms if study.terms is not None else study.model)
    return "interactions" if model == "smooth" else model


def _optimal(study, args, hard, model, ratio, seed, column):
    from .designs import Plan
    from .layouts import model_builder
    from .region import study_region
    from .split_optimal import split_plot_exchange

    if args.whole_plots is None or args.runs is None:
        raise PlanError("--design optimal with hard-to-change factors needs the number of "
                        "whole plots and of runs: add --whole-plots W --runs N")
    if args.center:
        raise PlanError("--center is not used by an optimal design (the builder places "
                        "every run): leave it out")
    if args.replicates != 1 or args.resolution is not None:
        raise PlanError("--replicates and --resolution belong to factorial plans, not to "
                        "--design optimal: leave them out")
    matrix, terms = model_builder(study, model)
    criterion = getattr(args, "criterion", "d")
    X, codes, value, starts = split_plot_exchange(
        matrix, study_region(study), hard, args.whole_plots, args.runs, ratio=ratio,
        criterion=criterion, seed=seed)
    table, coded = group_runs(tuple(study.factors), X, codes, ["optimal"] * len(X), seed,
                              column)
    label = {"d": "D-optimal", "i": "I-optimal"}[criterion]
    notes = (f"{label} split plot for {len(terms)} model terms at variance ratio "
             f"{ratio:g}; the best of {len(starts)} random starts",
             f"set {', '.join(study.factors[j].name for j in hard)} once per whole plot "
             f"(column '{column}') and make its runs in the order listed")
    plan = Plan(factors=tuple(study.factors), runs=table, coded=coded, design=None,
                notes=notes, kind=f"{label} split plot, {args.whole_plots} whole plots, "
                                  f"{args.runs} runs")
    return plan, {"design": label, "whole_plots": int(args.whole_plots),
                  "criterion_value": value}


def split_plot_text(split: dict) -> list[str]:
    """The grouping in a technician's words, and each term's stratum, SE and power."""
    hard = ", ".join(split["hard_to_change"])
    sizes = split["runs_per_plot"]
    each = f"{sizes[0]}" if len(sizes) == 1 else f"{sizes[0]} to {sizes[-1]}"
    df = split["error_df"]
    lines = [f"Whole plots: {split['whole_plots']} groups of {each} runs (column "
             f"'{split['column']}'). Make the groups in the order listed; set {hard} once "
             "per group and keep it for every run of the group; make the runs of a group "
             "one after the other, in the order listed.",
             f"Split-plot judging at variance ratio {split['ratio']:g} (between whole "
             f"plots / within): {df['whole plot']} df for the whole-plot error, "
             f"{df['within']} df within"]
    power = any("power" in r for r in split["terms"].values())
    lines.append("  term                          stratum       std error"
                 + ("    power" if power else ""))
    for term, row in split["terms"].items():
        line = f"  {term:<28}  {row['stratum']:<12}  {row['std_error']:9.4g}"
        if power:
            line += "      -" if row.get("power") is None else f"  {row['power']:7.2f}"
        lines.append(line)
    return lines
