"""One battery of invariants that every command keeps, on every generated study.

``run_battery(generated, folder)`` writes the study folder, runs check, fit,
optimize, next, plan, report (HTML and workbook) and confirm through the
command line (``tradeoff.cli.main`` in this process, or a real subprocess),
loads and fits the same study through the public API, and checks:

- ``no_traceback``: every command exits 0, or 2 with exactly one ``error:``
  line on stderr, never with a traceback; ``exit_code``: the code is one the
  study allows (a valid study is analysed, a study without goals is refused);
- ``api_cli``: the command line prints what the API returns;
- ``predict``: each solution's (and suggested run's, confirmation's)
  predictions equal the fitted model's ``predict`` at its coded settings, and
  its settings equal its coded values in natural units;
- ``desirability``: each d equals Derringer & Suich (1980), written out in
  oracle_reference.py; ``overall``: D equals their weighted geometric mean
  (Derringer 1994);
- ``recipe``: each solution's numeric settings sit on their steps (``step``,
  else the power of ten cutting low..high into 20 to 200 steps), at most one
  step from the optimum found; a blend's components too, but the one making up
  the rest;
- ``grid``: the best D as found (before rounding to the steps) is at least
  the best of a dense grid over the numeric factors, every level combination and the bounded simplex, inside the rules
  (within ``oracle_checks.GRID_TOL`` of it); with no feasible setting, no grid
  point is feasible and the shortfall is no larger than the grid's;
- ``region``: solutions and suggestions lie in the searched region, keep the
  rules and use levels of the factors;
- ``intervals``, ``chance``: intervals and chances equal the t-distribution
  formulas (chance within its Monte Carlo error, ``chance_tolerance``);
- ``fit``: each polynomial model's coefficients equal a least-squares fit on
  the README's coding of its printed term labels; ``aliases``: a confounded
  term is printed with the signed combination of terms that rebuilds its
  column exactly; ``fit_text``: the printed effect margins are t times the
  effect's standard error and the scale sentence gives the JSON's power check
  (oracle_fit_text.py);
- ``report_html``, ``report_xlsx``: the page and the workbook show the numbers
  of ``optimize --json`` at the precision the page prints;
- ``next``, ``plan``, ``confirm``: suggestions keep their distance and score
  as the models say; a plan's run sheet lies in the region; each confirmation
  is compared with the interval for the mean of its m runs;
- ``what_if``: the what-if answer at each of the first two solutions is one recipe:
  predictions, d's and D recomputed at the settings it names, D the solution's;
  a blend typed 10 % over its total is named and read as its shares; a Cox move
  of one component keeps the total and the others' ratios (oracle_whatif.py);
- ``frontier``, ``steadiness``: ``frontier --json`` between the first two goals with a
  direction and ``optimize --weights-sensitivity --json`` keep their invariants
  (oracle_frontier.py: no point dominated, every point within every limit, the
  D optimum's D the search's, each change's move its coded distance);
- ``loop``: the workbench's plan is the plan command's file byte for byte;
  pinned solutions side by side show the models' predictions and intervals
  and each one's own what-if D; a batch sheet's grams add up exactly to the
  batch, each within a scale step of its share (oracle_loop.py);
- ``derive``: derived responses equal a recomputation from the raw storage
  and panel tables (oracle_derive.py); ``panel``: the panel command's run F
  and degrees of freedom equal a recomputation (mapped, wide and
  two-session panel tables included);
- ``unjudged``, ``unused_columns``, ``display``, ``error_line``: a factor the
  data cannot judge is held at its ``hold`` level (else its first) and named,
  a level without runs is never chosen; every unused column of the data file
  is named by check; a setting of three or more levels prints as its level
  name with no coded number; a study with a mistake is refused by every
  command in one line naming the file at fault.
"""
from __future__ import annotations

import contextlib
import io
import json
import re
import subprocess
import sys
import traceback
import warnings
from dataclasses import dataclass, field
from pathlib import Path

from oracle_checks import (check_confirm, check_fit, check_next, check_plan, check_report_html,
                           check_report_xlsx, check_solutions, check_unused, check_display,
                           check_unjudged, goals_of)
from oracle_loop import check_loop
from oracle_derive import check_derived, check_panel
from oracle_draft import check_draft
from oracle_fit_text import check_fit_text
from oracle_frontier import check_frontier, check_steadiness, tradable
from oracle_screening import check_screening_fit, check_screening_plan
from oracle_whatif import check_what_if

__all__ = ["Outcome", "run_battery", "TOP"]

TOP = 3  # solutions asked for (small: the oracle checks every one)
NEXT_RUNS = 2


@dataclass
class Outcome:
    """What the battery found on one study."""

    kind: str
    replay: str
    features: set
    commands: int = 0
    failures: list = field(default_factory=list)  # (invariant, command, message)

    def fail(self, invariant: str, command: str, message: str) -> None:
        self.failures.append((invariant, command, message[:2000]))

    @property
    def ok(self) -> bool:
        return not self.failures

    def summary(self) -> str:
        lines = [f"{self.kind} ({self.replay}): {len(self.failures)} failure(s)"]
        lines += [f"  [{inv}] {cmd}: {msg}" for inv, cmd, msg in self.failures]
        return "\n".join(lines)


class _Runner:
    """Runs the command line in-process (or as a subprocess) and checks its exit."""

    def __init__(self, generated, outcome, path, subprocess_run):
        self.generated = generated
        self.outcome = outcome
        self.path = path
        self.subprocess_run = subprocess_run

    def __call__(self, command: str, *args) -> tuple[int | None, str]:
        """(exit code, stdout); exit None when the command ended in a traceback."""
        name = command.split()[0]
        key = name if name != "report" else ("report_html" if str(args[1]).endswith(".html")
                                            else "report_xlsx")
        argv = [name, str(self.path), *map(str, args)]
        self.outcome.commands += 1
        if self.subprocess_run:
            proc = subprocess.run([sys.executable, "-m", "tradeoff.cli", *argv],
                                  capture_output=True, text=True, timeout=600)
            rc, out, err = proc.returncode, proc.stdout, proc.stderr
        else:
            from tradeoff.cli import main

            out_buf, err_buf = io.StringIO(), io.StringIO()
            try:
                with warnings.catch_warnings(), contextlib.redirect_stdout(out_buf), \
                        contextlib.redirect_stderr(err_buf):
                    warnings.simplefilter("ignore")
                    rc = main(argv)
            except Exception:  # any escape from main() is a traceback for the user
                self.outcome.fail("no_traceback", key, traceback.format_exc(limit=-4))
                return None, ""
            out, err = out_buf.getvalue(), err_buf.getvalue()
        if "Traceback (most recent call last)" in err:
            self.outcome.fail("no_traceback", key, err[-1500:])
            return None, out
        if rc == 2:
            lines = [line for line in err.splitlines() if line.strip()]
            if len(lines) != 1 or not lines[0].startswith("error: "):
                self.outcome.fail("no_traceback", key,
                                  f"exit 2 must print one 'error:' line, found: {err!r}")
            mentions = self.generated.mentions
            if mentions and not any(m in err for m in mentions):
                self.outcome.fail("error_line", key, f"the error names none of "
                                  f"{list(mentions)}: {err.strip()!r}")
        elif rc != 0:
            self.outcome.fail("no_traceback", key, f"exit {rc}: {err[-800:]}")
        refusal = self.generated.refusals.get(key)
        if rc == 2 and refusal and re.match(refusal, err.strip()):
            return rc, out
        # frontier's own exits are judged by oracle_frontier.check_frontier
        if rc not in self.generated.expect.get(key, {0, 2}):
            self.outcome.fail("exit_code", key, f"exit {rc} (expected "
                              f"{sorted(self.generated.expect[key])}): {err.strip()[:600]}")
        return rc, out


def run_battery(generated, folder: Path, *, subprocess_run: bool = False,
                charts: bool = True) -> Outcome:
    """Every command on one generated study; the failures found."""
    outcome = Outcome(generated.kind, generated.replay, set(generated.features))
    path = generated.write(folder)
    cli = _Runner(generated, outcome, path, subprocess_run)
    seed = 7
    try:
        _battery(generated, folder, path, cli, outcome, seed, charts)
    except Exception:  # a fault of the oracle itself, or of the API, is a failure too
        outcome.fail("no_traceback", "api", traceback.format_exc(limit=-6))
    return outcome


def _battery(generated, folder, path, cli, outcome, seed, charts):
    import tradeoff

    rc, out = cli("check", "--json")
    if rc == 0:
        json.loads(out)
    if generated.unused_columns:
        rc_text, text = cli("check")
        if rc_text == 0:
            check_unused(generated, text, outcome)
    try:
        study = tradeoff.load_study(path)
    except tradeoff.TradeoffError as exc:
        if rc == 0:
            outcome.fail("api_cli", "check", f"check passed but load_study refused: {exc}")
        # a study that cannot be read: every command refuses it in one line
        for args in (("fit",), ("optimize", "--json"), ("next", "--runs", 1),
                     ("plan", "--out", folder / "plan_sheet.csv", *_plan_args(generated)),
                     ("report", "--out", folder / "report.html"),
                     ("report", "--out", folder / "report.xlsx"), ("confirm",)):
            cli(*args)
        return
    check_draft(study, outcome)  # the same study, declared in the workbench's new-study form
    if generated.derived:
        check_derived(generated, study, outcome)
    if "panel" in generated.features:
        rc, out = cli("panel", "--json")
        if rc == 0:
            check_panel(generated, json.loads(out), outcome)
    try:
        fit = tradeoff.fit_study(study)
    except tradeoff.TradeoffError:
        fit = None

    rc, out = cli("fit", "--json")
    if rc == 0 and fit is not None:
        check_fit(generated, study, fit, json.loads(out), outcome)
        rc_text, text = cli("fit")
        if rc_text == 0:
            check_fit_text(json.loads(out), text, outcome)

    rc, out = cli("fit", "--screening", "--json")
    if rc == 0:
        check_screening_fit(generated, study, json.loads(out), outcome)

    result = None
    rc, out = cli("optimize", "--json", "--top", TOP, "--seed", seed)
    if rc == 0:
        printed = json.loads(out)
        try:
            result = tradeoff.optimize(study, top=TOP, seed=seed, fit=fit)
        except tradeoff.TradeoffError as exc:
            outcome.fail("api_cli", "optimize", f"the command line answered, the API "
                         f"refused: {exc}")
        if result is not None:
            mine = result.to_dict()
            for key in ("solutions", "feasible", "unreachable", "warnings"):
                if mine[key] != printed[key]:
                    outcome.fail("api_cli", "optimize", f"'{key}' differs between "
                                 f"optimize --json and tradeoff.optimize")
            check_solutions(generated, study, fit, result, outcome)
            check_what_if(generated, study, fit, result, goals_of(generated, fit), outcome)
            if generated.unjudged or generated.empty_levels:
                check_unjudged(generated, study, fit, result, outcome)
            if any(f.kind == "categorical" and len(f.levels) > 2 for f in generated.region.factors):
                rc_text, text = cli("optimize", "--top", TOP, "--seed", seed)
                if rc_text == 0:
                    check_display(generated, result, text, outcome)

    goals = goals_of(generated, fit) if fit is not None else []
    trade = tradable(goals)
    if len(trade) >= 2:
        rc, out = cli("frontier", "--between", f"{trade[0][1]},{trade[1][1]}", "--points", 7,
                      "--seed", seed, "--json")
        check_frontier(generated, study, fit, goals, result, rc, out, outcome, seed)
    if result is not None:
        rc, out = cli("optimize", "--json", "--top", TOP, "--seed", seed,
                      "--weights-sensitivity")
        if rc == 0:
            check_steadiness(generated, study, fit, goals, result, json.loads(out), outcome)

    rc, out = cli("next", "--runs", NEXT_RUNS, "--seed", seed, "--json")
    if rc == 0 and fit is not None:
        check_next(generated, study, fit, json.loads(out), outcome)

    sheet = folder / "plan_sheet.csv"
    plan_args = _plan_args(generated)
    rc, out = cli("plan", "--out", sheet, "--json", *plan_args)
    if rc == 0:
        check_plan(generated, study, sheet, plan_args, outcome)
        if "definitive-screening" in plan_args:
            check_screening_plan(generated, study, sheet, outcome)
    check_loop(generated, study, fit, result, path, sheet if rc == 0 else None, plan_args,
               outcome)

    with _charts(charts):
        page = folder / "report.html"
        rc, _ = cli("report", "--out", page, "--top", TOP, "--seed", seed)
    if rc == 0 and result is not None:
        check_report_html(generated, study, result.to_dict(), page.read_text("utf-8"),
                          outcome)
    book = folder / "report.xlsx"
    rc, _ = cli("report", "--out", book, "--top", TOP, "--seed", seed)
    if rc == 0 and result is not None:
        check_report_xlsx(generated, study, result.to_dict(), book, outcome)

    rc, out = cli("confirm", "--json")
    if rc == 0 and fit is not None:
        check_confirm(generated, study, fit, json.loads(out), outcome)


def _plan_args(generated) -> list:
    region = generated.region
    if region.components:
        design = "lattice" if "rules" not in generated.features else "vertices"
        return ["--design", design]
    plots = "whole_plots" in generated.features
    if generated.region.rules:
        if plots:  # an optimal split plot at an assumed variance ratio
            return ["--design", "optimal", "--whole-plots", 4, "--runs", 12, "--model",
                    "main", "--ratio", 2, "--seed", 3]
        return ["--design", "optimal", "--runs", 12, "--model", "main", "--seed", 3]
    if plots:  # a split-plot factorial, its whole plots replicated
        return ["--replicates", 2]
    if "screening" in generated.features:
        return ["--design", "definitive-screening", "--extra", 4, "--seed", 3]
    return []


@contextlib.contextmanager
def _charts(render: bool):
    """With ``render`` False the report's charts are built but not drawn to SVG
    (vl-convert costs most of a report's time; the numbers do not pass through it)."""
    if render:
        yield
        return
    import importlib

    patched = []
    for name in ("charts", "map_sections", "ternary_sections", "frontier_sections"):
        module = importlib.import_module(f"tradeoff.report.{name}")
        if hasattr(module, "_svg"):
            patched.append((module, module._svg))
            module._svg = _no_svg
    try:
        yield
    finally:
        for module, original in patched:
            module._svg = original


def _no_svg(chart) -> str:
    return "<svg></svg>"  # the chart object was built; only its drawing is skipped
