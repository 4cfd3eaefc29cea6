"""``tradeoff plan``: the runs to make (factorial, fraction, response surface, blend,
optimal), their aliases and blocks, and the run sheet.
"""
from __future__ import annotations

import json

from .arguments import at_least_one, positive_number, seed_number, whole_number

__all__ = ["add", "run"]


def add(commands) -> None:
    """Add ``plan`` and its options to the sub-command parsers."""
    plan = commands.add_parser(
        "plan", help="plan the runs: factorial or fraction, aliases, blocks, run sheet")
    plan.add_argument("study", help="the study file (.toml); its data file need not exist")
    plan.add_argument("--runs", type=int, metavar="N",
                      help="runs in the two-level part (a power of two: 8, 16, 32, ...); "
                           "with --design optimal, the number of runs to plan")
    plan.add_argument("--alpha", metavar="A",
                      help="axial distance of a central composite: face, rotatable "
                           "(default), orthogonal or a number")
    plan.add_argument("--criterion", choices=("d", "i"), default="d",
                      help="optimal design: d (precise coefficients, default) or i "
                           "(precise predictions over the region)")
    plan.add_argument("--model", metavar="MODEL",
                      help="the model to plan for: main, interactions, full, quadratic "
                           "or terms joined by commas (a,b,a:b)")
    plan.add_argument("--extra", type=whole_number(0), default=0, metavar="N",
                      help="with --design definitive-screening: N more runs (even) "
                           "through fake factors, for an error estimate (4 is a good start)")
    plan.add_argument("--keep", action="store_true",
                      help="optimal design: keep the study's measured runs and choose "
                           "the new runs around them")
    plan.add_argument("--resolution", type=int, metavar="R",
                      help="least resolution wanted: 3, 4 or 5 (default: 5)")
    plan.add_argument("--center", type=int, metavar="N",
                      help="centre points in each block (default 0; 2 per categorical "
                           "level combination with --augment)")
    plan.add_argument("--replicates", type=int, default=1, metavar="N",
                      help="run the two-level part N times (default 1)")
    plan.add_argument("--blocks", type=int, default=1, metavar="B",
                      help="split the runs into 2, 4 or 8 blocks (days, batches)")
    plan.add_argument("--foldover", action="store_true",
                      help="add the mirror image of the fraction as a further block")
    plan.add_argument("--augment", choices=("face", "rotatable"),
                      help="add axial and centre runs to the study's measured runs "
                           "(a new block) so a quadratic model can be fitted")
    # runs sharing a batch (plan/split_plot.py, plan/split_optimal.py)
    plan.add_argument("--whole-plots", type=at_least_one, metavar="W",
                      help="with hard-to-change factors: the number of whole plots "
                           "(batches); with --design factorial, per replicate (a power "
                           "of two)")
    plan.add_argument("--ratio", type=positive_number, metavar="R",
                      help="with hard-to-change factors: the assumed variance between "
                           "whole plots over the variance within them (default 1)")
    plan.add_argument("--seed", type=seed_number, help="seed of the random run order "
                                               "(default: the study's seed)")
    plan.add_argument("--effect", type=float, metavar="SIZE",
                      help="smallest change (low to high) worth detecting, for power")
    plan.add_argument("--sd", type=float, metavar="SD",
                      help="expected run-to-run standard deviation, for power")
    # blends (plan/mixture_plan.py)
    plan.add_argument("--design", metavar="NAME",
                      help="factorial (default), central-composite, box-behnken, optimal or "
                           "definitive-screening (three levels, 2 runs per factor + 1); "
                           "for a study with components: lattice, centroid or vertices "
                           "(extreme vertices of the bounded region)")
    plan.add_argument("--degree", type=int, metavar="M",
                      help="with --design lattice: the lattice's degree (proportions in "
                           "steps of 1/M; default: the mixture model's degree)")
    plan.add_argument("--centroids", metavar="LIST",
                      help="with --design vertices: centroids to add, any of edges,faces,"
                           "overall (default overall)")
    plan.add_argument("--axial", action="store_true",
                      help="with a mixture design: add check blends half-way between the "
                           "overall centroid and each vertex")
    plan.add_argument("--out", required=True, metavar="FILE",
                      help="the run sheet to write (.csv or .xlsx)")
    plan.add_argument("--json", action="store_true", help="print the plan as JSON")
    plan.set_defaults(run=run)


def run(args) -> int:
    from ..plan.mixture_plan import mixture_route
    from ..plan.runsheet import plan_command
    from ..plan.split_command import split_plot_route

    # a study with components (or a mixture design asked for) gets a blend plan;
    # one with hard-to-change factors a split plot
    routed = mixture_route(args)
    if routed is None:
        routed = split_plot_route(args)
    report, text = routed if routed is not None else plan_command(args)
    print(json.dumps(report, indent=2) if args.json else text)
    return 0
