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


class _Parser(argparse.ArgumentParser):
    """argparse, but a mistake on the command line is one ``error:`` line."""

    def error(self, message: str):
        self.exit(2, f"error: {message}: see '{self.prog} --help' for the options\n")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="tradeoff",
        description="Find the factor settings that best balance several responses "
                    "measured in a designed experiment.")
    parser.add_argument("--version", action="version", version=f"tradeoff {__version__}")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND")

    check = commands.add_parser("check", help="load a study, validate it, print a summary")
    check.add_argument("study", help="the study file (.toml)")
    check.add_argument("--json", action="store_true", help="print the summary as JSON")
    check.set_defaults(run=_run_check)

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
    fit.set_defaults(run=_run_fit)

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
    plan.add_argument("--seed", type=_seed, help="seed of the random run order "
                                               "(default: the study's seed)")
    plan.add_argument("--effect", type=float, metavar="SIZE",
                      help="smallest change (low to high) worth detecting, for power")
    plan.add_argument("--sd", type=float, metavar="SD",
                      help="expected run-to-run standard deviation, for power")
    # blends (plan/mixture_plan.py)
    plan.add_argument("--design", metavar="NAME",
                      help="factorial (default), central-composite, box-behnken or optimal; "
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
    plan.set_defaults(run=_run_plan)

    report = commands.add_parser(
        "report", help="write the result sheet: one HTML page (.html) or a workbook (.xlsx)")
    report.add_argument("study", help="the study file (.toml)")
    report.add_argument("--out", required=True, metavar="FILE",
                        help="the file to write: report.html (a page that works offline) "
                             "or report.xlsx (a workbook)")
    report.add_argument("--top", type=_at_least_one, default=5, metavar="N",
                        help="show the best settings and up to N-1 alternatives (default 5)")
    report.add_argument("--seed", type=_seed, default=None, metavar="S",
                        help="seed of the search and of the chances (default: the study's "
                             "seed)")
    report.set_defaults(run=_run_report)

    confirm = commands.add_parser(
        "confirm", help="compare the study's confirmation runs with the predictions")
    confirm.add_argument("study", help="the study file (.toml) with [[confirmations]]")
    confirm.add_argument("--json", action="store_true", help="print the check as JSON")
    confirm.set_defaults(run=_run_confirm)

    best = commands.add_parser(
        "optimize", help="find the settings that best balance every goal, with alternatives")
    best.add_argument("study", help="the study file (.toml) with goals")
    best.add_argument("--json", action="store_true", help="print the result as JSON")
    best.add_argument("--top", type=_at_least_one, default=5, metavar="N",
                      help="show the best settings and up to N-1 distinct alternatives "
                           "(default 5)")
    best.add_argument("--seed", type=_seed, default=None, metavar="S",
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
    best.set_defaults(run=_run_optimize)

    make_next = commands.add_parser(
        "next", help="suggest the next runs to make: those most likely to improve the "
                     "best balance (expected improvement of D)")
    make_next.add_argument("study", help="the study file (.toml) with goals and runs")
    make_next.add_argument("--runs", type=_at_least_one, required=True, metavar="N",
                           help="how many runs to suggest")
    make_next.add_argument("--seed", type=_seed, default=None, metavar="S",
                           help="seed of the candidates and draws (default: the study's "
                                "seed)")
    make_next.add_argument("--min-distance", type=_positive, default=None, metavar="D",
                           help="no suggestion closer than D coded units to a run made or "
                                "another suggestion (default 0.3)")
    make_next.add_argument("--json", action="store_true", help="print the batch as JSON")
    make_next.add_argument("--out", metavar="SHEET",
                           help="also write the suggestions as a run sheet (.csv or .xlsx) "
                                "with the data file's columns, responses blank")
    make_next.set_defaults(run=_run_next)

    app = commands.add_parser(
        "app", help="open the point-and-click workbench in your web browser")
    app.add_argument("study", nargs="?",
                     help="the study file (.toml); the invented demo study if left out")
    app.add_argument("--port", type=_port, default=8501,
                     help="the local port to serve on (default 8501)")
    app.set_defaults(run=_run_app)
    return parser


def _whole_number(minimum: int):
    """An argparse type: a whole number no smaller than ``minimum``."""

    def parse(text: str) -> int:
        try:
            value = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(
                f"expected a whole number, found '{text}'") from None
        if value < minimum:
            raise argparse.ArgumentTypeError(
                f"expected a whole number, {minimum} or more, found {value}")
        return value

    return parse


_seed = _whole_number(0)


def _positive(text: str) -> float:
    """An argparse type: a number above 0."""
    try:
        value = float(text)
    except ValueError:
        value = float("nan")
    if not value > 0 or value == float("inf"):
        raise argparse.ArgumentTypeError(f"expected a number above 0, found '{text}'")
    return value
_at_least_one = _whole_number(1)


def _run_optimize(args) -> int:
    from .search.search import optimize
    from .derive.load import load_study

    study = load_study(args.study)
    result = optimize(study, top=args.top, seed=args.seed, rank_by=args.rank_by,
                      aim=args.aim)
    if args.json:
        from .report.provenance import provenance

        # tool version, file fingerprints, date and seed: enough to reproduce it
        block = provenance(study, seed=result.seed)
        print(json.dumps(result.to_dict() | {"provenance": block}, indent=2))
    else:
        print(result.text())
    return 0


def _run_plan(args) -> int:
    from .plan.mixture_plan import mixture_route
    from .plan.runsheet import plan_command

    # a study with components (or a mixture design asked for) gets a blend plan
    routed = mixture_route(args)
    report, text = routed if routed is not None else plan_command(args)
    print(json.dumps(report, indent=2) if args.json else text)
    return 0


def _run_check(args) -> int:
    from .derive.load import load_study
    from .report.summary import study_summary, summary_text

    study = load_study(args.study)
    summary = study_summary(study)
    if args.json:
        print(json.dumps(summary, indent=2))
    else:
        print(summary_text(summary))
    return 0


def _run_fit(args) -> int:
    from .report.fit_text import fit_text
    from .model.study_fit import fit_response, fit_study
    from .derive.load import load_study

    study = load_study(args.study)
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
        from .model.compare import compare_models

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
        from .model.compare import comparison_text

        print(comparison_text(comparisons, not_compared), end="")
    else:
        print(fit_text(report), end="")
    return 0


def _run_next(args) -> int:
    from .derive.load import load_study
    from .search.next_batch import DEFAULT_MIN_DISTANCE, next_batch

    study = load_study(args.study)
    distance = DEFAULT_MIN_DISTANCE if args.min_distance is None else args.min_distance
    batch = next_batch(study, runs=args.runs, seed=args.seed, min_distance=distance)
    path = None
    if args.out:
        from .plan.runsheet import write_run_sheet

        # refuses the study file, its data file and a sheet holding measurements
        path = write_run_sheet(batch.sheet, args.out, study=study)
    if args.json:
        from .report.provenance import provenance

        out = batch.to_dict() | {"sheet": None if path is None else str(path)}
        print(json.dumps(out | {"provenance": provenance(study, seed=batch.seed)},
                         indent=2))
    else:
        print(batch.text())
        if path is not None:
            print(f"wrote {path}")
    return 0


def _run_report(args) -> int:
    from .report.write import write_report
    from .derive.load import load_study

    study = load_study(args.study)
    path = write_report(study, args.out, top=args.top, seed=args.seed)
    print(f"wrote {path}")
    return 0


def _run_confirm(args) -> int:
    from .confirm.check import check_confirmations
    from .study.confirmations import confirmation_files
    from .report.provenance import provenance
    from .derive.load import load_study

    study = load_study(args.study)
    check = check_confirmations(study)
    if args.json:
        block = provenance(study, extra_files=confirmation_files(study))
        print(json.dumps(check.to_dict() | {"provenance": block}, indent=2))
    else:
        print(check.text())
    return 0


def _port(text: str) -> int:
    try:
        port = int(text)
    except ValueError:
        port = -1
    if not 1024 <= port <= 65535:
        raise argparse.ArgumentTypeError(
            f"expected a port number from 1024 to 65535, found '{text}'")
    return port


def _run_app(args) -> int:
    import importlib.resources
    import os
    from pathlib import Path

    from .study.demo import demo_study_path
    from .study.intake import MAX_TABLE_BYTES
    from .derive.load import load_study

    study = Path(args.study) if args.study else demo_study_path()
    load_study(study)  # a bad study file stops here with one line, not in the browser
    app_file = importlib.resources.files("tradeoff_ui") / "app.py"
    argv = [sys.executable, "-m", "streamlit", "run", str(app_file),
            "--server.address", "127.0.0.1", "--server.port", str(args.port),
            "--server.headless", "true", "--browser.gatherUsageStats", "false",
            # uploads above the library's own limit are refused in the browser
            "--server.maxUploadSize", str(MAX_TABLE_BYTES // 2**20),
            "--client.toolbarMode", "minimal", "--", str(study.resolve())]
    print(f"Opening the workbench: open http://127.0.0.1:{args.port} in your web "
          "browser (press Ctrl+C here to stop it)", flush=True)
    # Replace this process, so stopping it (Ctrl+C, kill) stops the server too.
    os.execv(sys.executable, argv)
    return 0  # not reached




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
    except OSError as exc:  # a file the library did not expect to fail (disk, rights)
        name = f"{exc.filename}: " if exc.filename else ""
        print(f"error: {name}{exc.strerror or exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("error: stopped", file=sys.stderr)
        return 2


if __name__ == "__main__":
    sys.exit(main())
