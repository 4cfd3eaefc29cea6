"""The search's result: Solution, ResponseOutcome, OptimizationResult.

Also the assembly of the result from the settings found (intervals, chances,
ranking, labels) and the warnings about the whole search and about each
solution's settings.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from .chance import (NOT_STATED, beyond_reach, chance_in_limits, chance_text,
                     withhold_beyond_reach)
from ..study.mixture import is_component
from ..cautions import FOOD_CAUTION, FOOD_CAUTIONS
from .production import factor_goal_chances, production_chance
from .result_notes import (_general_warnings, _not_informed_text, _point_warnings,
                           fewer_solutions_text)
from .rounding import clean_value, lab_recipes
from .spread import transmitted_spread
from ..study.coding import decode_values

__all__ = ["ResponseOutcome", "Solution", "OptimizationResult", "_result", "pair_text",
           "fewer_solutions_text"]



@dataclass(frozen=True)
class ResponseOutcome:
    """One response at one solution.

    Attributes
    ----------
    name : str
    goal : str
        The goal kind (``none`` when the response takes no part).
    predicted : float
        Model prediction of the mean, natural units.
    desirability : float or None
        Individual desirability (None when the goal is ``none``).
    ci, pi : tuple of float
        Confidence interval of the mean and prediction interval of one new
        measurement, at the study's confidence level.
    chance_in_limits : float or None
        Monte Carlo chance that one batch made at these settings lands within
        the goal's limits (None when the goal is ``none``).
    transmitted_sd : float or None
        Standard deviation of the response caused by the factors' production
        spread at these settings (natural units; None when no factor has a
        ``production_sd``).
    mean_shift : float or None
        How far the average response moves because of that spread.
    extrapolated : str
        For a time derived from a storage study (``study.reach``): ``""`` when the
        prediction lies within the storage, ``"beyond"`` past its last storage
        time, ``"far"`` past the longest time stated (``chance_in_limits`` is then
        None: no chance is stated).
    storage_needed : float or None
        With ``"far"``: the storage time that would support the prediction.
    chance_in_production : float or None
        The chance that one production batch (factors drawn from their
        production spread) lands within this goal's limits; None when no factor
        spreads (then it equals ``chance_in_limits``).
    """

    name: str
    goal: str
    predicted: float
    desirability: float | None
    ci: tuple
    pi: tuple
    chance_in_limits: float | None
    transmitted_sd: float | None = None
    mean_shift: float | None = None
    extrapolated: str = ""
    storage_needed: float | None = None
    chance_in_production: float | None = None


@dataclass(frozen=True)
class Solution:
    """One recommended setting.

    Attributes
    ----------
    rank : int
        Position in the result (1 = best under the chosen ranking).
    label : str
        ``S1``, ``S2``, ... in order of D, stable whatever the ranking.
    settings : dict
        Factor name -> natural value (level name for a categorical factor).
    coded : dict
        Factor name -> coded value (-1/+1 for a categorical factor).
    desirability : float
        Overall desirability D at these settings.
    predictions : dict
        Response name -> predicted value (every modelled response).
    responses : dict
        Response name -> ResponseOutcome.
    factor_desirability : dict
        Factor name -> desirability, for factors that have a goal.
    chance_all : float or None
        Chance that every response with a goal lands within its limits at once.
    out_of_limits : tuple of str
        Goals (responses or factors) whose desirability is 0 here.
    shortfall : float
        Weighted squared distance outside the limits (0 when D > 0).
    warnings : tuple of str
        Warnings about these settings (edge of the region, outside the data).
        Warnings about the whole search are in ``OptimizationResult.warnings``;
        ``OptimizationResult.to_dict`` lists both under each solution.
    proportions : dict
        For a blend: component name -> its proportion of the total (the
        settings give the amounts); empty otherwise.
    chance_all_production : float or None
        Chance that one production batch (factors drawn from their production
        spread) meets every limit; None when no factor has a ``production_sd``
        and no production ranking was asked for.
    d_given_up : float
        How much lower D is here than at the best balance found.
    found_settings : dict
        The settings the search ended on, before rounding to each factor's
        step (``tradeoff.search.rounding``); every other figure is for
        ``settings``, the rounded recipe.
    found_desirability : float or None
        D at ``found_settings``.
    factor_chance_production : dict
        Factor name -> the chance that the factor, made with its production
        spread, lands within its own goal's limits (factors with a goal, when
        some factor spreads): the factor rows behind ``chance_all_production``.
    """

    rank: int
    label: str
    settings: dict
    coded: dict
    desirability: float
    predictions: dict
    responses: dict
    factor_desirability: dict
    chance_all: float | None
    out_of_limits: tuple
    shortfall: float
    warnings: tuple
    proportions: dict = field(default_factory=dict)
    chance_all_production: float | None = None
    d_given_up: float = 0.0
    found_settings: dict = field(default_factory=dict)
    found_desirability: float | None = None
    factor_chance_production: dict = field(default_factory=dict)

    @property
    def chance_withheld(self) -> bool:
        """True when a goal's predicted time lies past what its storage study supports:
        then no chance is stated for it, nor for every limit at once."""
        return any(o.extrapolated == "far" and o.goal != "none"
                   for o in self.responses.values())

    def to_dict(self, digits: int = 6) -> dict:
        """JSON-ready dict in the CLI's shape (this solution's own warnings only)."""
        r = _rounder(digits)
        blend = {"proportions": {k: r(v) for k, v in self.proportions.items()}} \
            if self.proportions else {}
        return {
            "rank": self.rank, "label": self.label,
            "settings": {k: (v if isinstance(v, str) else r(v))
                         for k, v in self.settings.items()},
            "coded": {k: (v if isinstance(v, int) else r(v)) for k, v in self.coded.items()},
            "desirability": r(self.desirability),
            "responses": {
                name: {"predicted": r(o.predicted), "desirability": r(o.desirability),
                       "ci": [r(o.ci[0]), r(o.ci[1])], "pi": [r(o.pi[0]), r(o.pi[1])],
                       "chance_in_limits": r(o.chance_in_limits), "goal": o.goal,
                       "transmitted_sd": r(o.transmitted_sd), "mean_shift": r(o.mean_shift),
                       "extrapolated": o.extrapolated,
                       "storage_needed": r(o.storage_needed),
                       "chance_in_production": r(o.chance_in_production)}
                for name, o in self.responses.items()},
            "factor_desirability": {k: r(v) for k, v in self.factor_desirability.items()},
            "factor_chance_production": {k: r(v) for k, v in
                                         self.factor_chance_production.items()},
            "chance_all": r(self.chance_all),
            "chance_all_production": r(self.chance_all_production),
            "d_given_up": r(self.d_given_up),
            "out_of_limits": list(self.out_of_limits),
            "warnings": list(self.warnings),
            "found": {"settings": {k: (v if isinstance(v, str) else r(v))
                                   for k, v in self.found_settings.items()},
                      "desirability": r(self.found_desirability)},
        } | blend


@dataclass(frozen=True)
class OptimizationResult:
    """What ``optimize`` found.

    Attributes
    ----------
    study : str
        The study's name.
    solutions : tuple of Solution
        Best first (by D, or by the chance of meeting all limits when
        ``rank_by == "chance"``); distinct local optima at least
        ``min_distance`` coded units apart.
    rank_by : str
        ``desirability``, ``chance`` or ``production``.
    aim : str
        ``balance`` (the best D first) or ``production`` (the settings most
        likely to hold in production first, then the best balance).
    seed : int
        Seed of the Sobol batch and of the Monte Carlo draws.
    feasible : bool
        True when some setting makes every desirability positive (D > 0).
    unreachable : tuple of str
        Goals that no setting in the searched region brings within limits.
    warnings : tuple of str
        Warnings about the whole search (models left out, poor models).
    assumptions : tuple of str
        How the chances were computed.
    evaluations : int
        Number of points at which the models were evaluated.
    correlation : pandas.DataFrame
        Correlation between responses used for the chances.
    not_informed : tuple of dict
        Categorical factors the search did not choose freely because the runs
        cannot judge their levels: ``factor``, ``why``, ``held_at`` (the level
        held, or None) and ``left_out`` (levels not searched); see
        ``tradeoff.search.informed``.
    steps : dict
        Numeric factor name -> the step its settings are rounded to.
    """

    study: str
    solutions: tuple
    rank_by: str
    seed: int
    feasible: bool
    unreachable: tuple
    warnings: tuple
    assumptions: tuple
    evaluations: int
    correlation: pd.DataFrame = field(default=None, compare=False, repr=False)
    aim: str = "balance"
    production_sd: dict = field(default_factory=dict)
    not_informed: tuple = ()
    steps: dict = field(default_factory=dict)
    step_units: dict = field(default_factory=dict, compare=False, repr=False)

    def rounding_note(self) -> str:
        """What the settings are rounded to, in a sentence."""
        steps = ", ".join(f"{k} {_g(v)} {self.step_units.get(k, '')}".strip()
                          for k, v in self.steps.items())
        return (f"settings are rounded to steps a lab can weigh or set ({steps}; change "
                "one with step = <amount> under the factor); every figure is for the "
                "rounded recipe")

    def not_informed_notes(self) -> tuple[str, ...]:
        """One sentence per factor in ``not_informed``, for a reader."""
        return tuple(_not_informed_text(n) for n in self.not_informed)

    @property
    def best(self) -> Solution:
        """The first solution."""
        return self.solutions[0]

    def to_dict(self, digits: int = 6) -> dict:
        """The CLI's ``--json`` output: ``best``, ``solutions`` and a few more keys."""
        solutions = []
        for s in self.solutions:
            entry = s.to_dict(digits)
            entry["warnings"] = list(s.warnings) + list(self.warnings)
            solutions.append(entry)
        return {
            "best": solutions[0],
            "solutions": solutions,
            "study": self.study, "rank_by": self.rank_by, "aim": self.aim,
            "seed": self.seed, "production_sd": dict(self.production_sd),
            "feasible": self.feasible, "unreachable": list(self.unreachable),
            "not_informed": [dict(n) for n in self.not_informed],
            "steps": dict(self.steps),
            "warnings": list(self.warnings), "assumptions": list(self.assumptions),
            "cautions": list(FOOD_CAUTIONS),
            "evaluations": self.evaluations,
        }

    def table(self) -> pd.DataFrame:
        """Tidy table: one row per solution and response.

        Columns: solution (label), rank, one column per factor (natural
        setting), response, predicted, desirability, ci_low, ci_high, pi_low,
        pi_high, chance_in_limits, transmitted_sd, mean_shift, D (overall
        desirability), chance_all, chance_all_production, d_given_up.
        """
        rows = []
        for s in self.solutions:
            for name, o in s.responses.items():
                row = {"solution": s.label, "rank": s.rank}
                row.update(s.settings)
                row.update({"response": name, "predicted": o.predicted,
                            "desirability": o.desirability, "ci_low": o.ci[0],
                            "ci_high": o.ci[1], "pi_low": o.pi[0], "pi_high": o.pi[1],
                            "chance_in_limits": o.chance_in_limits,
                            "transmitted_sd": o.transmitted_sd, "mean_shift": o.mean_shift,
                            "D": s.desirability, "chance_all": s.chance_all,
                            "chance_all_production": s.chance_all_production,
                            "d_given_up": s.d_given_up})
                rows.append(row)
        return pd.DataFrame(rows)

    def text(self) -> str:
        """A readable summary for the terminal."""
        lines = []
        if not self.feasible:
            lines.append("No setting in the searched region brings every goal within its "
                         "limits (D = 0 everywhere). Closest settings shown.")
            if self.unreachable:
                lines.append("Cannot be brought within limits anywhere: "
                             + ", ".join(self.unreachable))
        spread = bool(self.production_sd)
        for s in self.solutions:
            head = "Best settings" if s.rank == 1 else f"Alternative {s.rank - 1}"
            if self.aim == "production":
                head = ("Most likely to hold in production" if s.rank == 1 else
                        "Best balance" if s.d_given_up == 0 else f"Alternative {s.rank - 1}")
            chance = (f", chance all within limits {NOT_STATED} (a time past what the "
                      "storage study supports: see the note)") if s.chance_withheld else \
                "" if s.chance_all is None else \
                f", chance all within limits {chance_text(s.chance_all)}"
            if s.chance_all_production is not None:
                chance += f", in production {chance_text(s.chance_all_production)}"
            gave = f" (gives up {s.d_given_up:.3f} of D)" if s.d_given_up > 0 else ""
            lines.append(f"\n{head} ({s.label}): overall desirability D = "
                         f"{s.desirability:.3f}{gave}{chance}")
            for name, value in s.settings.items():
                shown = value if isinstance(value, str) else f"{value:.4g}"
                code = s.coded[name]
                code = f"{code:+d}" if isinstance(code, int) else f"{code:+.3f}"
                share = s.proportions.get(name)
                if isinstance(value, str):  # a level is its name: no coded number
                    lines.append(f"  {name:<18} {shown:>12}")
                    continue
                lines.append(f"  {name:<18} {shown:>12}   " + (
                    f"(coded {code})" if share is None else f"({share:.2%} of the total)"))
            lines.append(f"  {'response':<18} {'predicted':>10} {'d':>6}  "
                         f"{'prediction interval':>23} {'chance':>10}"
                         + (f" {'in production':>13} {'spread SD':>10} {'shift':>9}"
                            if spread else ""))
            for name, o in s.responses.items():
                d = "-" if o.desirability is None else f"{o.desirability:.3f}"
                far = o.extrapolated == "far" and o.goal != "none"
                ch = NOT_STATED if far else chance_text(o.chance_in_limits)
                pi = pair_text(*o.pi)
                extra = ""
                if spread:
                    extra = (f" {NOT_STATED if far else chance_text(o.chance_in_production):>13}"
                             f" {_g_or_dash(o.transmitted_sd):>10} "
                             f"{_g_or_dash(o.mean_shift, signed=True):>9}")
                lines.append(f"  {name:<18} {o.predicted:>10.4g} {d:>6}  {pi:>23} {ch:>10}"
                             + extra)
            # a factor's own goal is a row like a response's: its limits count in
            # the chance of all at once (in production the factor strays from them)
            for name, d in s.factor_desirability.items():
                value = s.settings[name]
                inside = "-" if d is None else chance_text(1.0 if d > 0 else 0.0)
                extra = ""
                if spread:
                    extra = (f" {chance_text(s.factor_chance_production.get(name)):>13}"
                             f" {'-':>10} {'-':>9}")
                lines.append(f"  {name:<18} {value:>10.4g} {d:>6.3f}  "
                             f"{'(factor goal)':>23} {inside:>10}" + extra)
            if s.out_of_limits:
                lines.append("  outside limits: " + ", ".join(s.out_of_limits))
            for w in s.warnings:
                lines.append(f"  note: {w}")
        if self.steps:
            lines.append("rounded: " + self.rounding_note())
        for n in self.not_informed_notes():
            lines.append("not informed: " + n)
        for w in self.warnings:
            lines.append(f"note: {w}")
        for a in self.assumptions:
            lines.append(f"chances: {a}")
        lines.append("cautions: " + FOOD_CAUTION)
        return "\n".join(lines).lstrip("\n")


def pair_text(low, high, digits: int = 4) -> str:
    """An interval as 'low .. high', both ends to the same decimals: ``digits``
    significant digits of the larger end ('20.09 .. 26.00', '0.567 .. 0.591');
    a missing end is left blank."""
    ends = [None if v is None or not math.isfinite(float(v)) else float(v)
            for v in (low, high)]
    known = [abs(v) for v in ends if v is not None]
    if not known:
        return ""
    big = max(known)
    places = max(0, digits - 1 - math.floor(math.log10(big))) if big > 0 else digits - 1
    shown = ["" if v is None else f"{v:.{places}f}" for v in ends]
    return f"{shown[0]} .. {shown[1]}".strip()


def _g_or_dash(x, signed: bool = False) -> str:
    if x is None:
        return "-"
    return f"{x:+.3g}" if signed else f"{x:.3g}"


def _rounder(digits):
    def r(x):
        if x is None:
            return None
        x = float(x)
        if not math.isfinite(x):
            return None
        return float(f"{x:.{digits}g}")
    return r


def _result(study, problem, models, fit, X, top, seed, rank_by, feasible, unreachable,
            draws, aim="balance", extra_notes=(), as_given=False) -> OptimizationResult:
    """Assemble the result for the settings X (coded, best first by D).

    With ``aim == "production"``, ``X[0]`` is the setting most likely to hold
    in production: it comes first and the rest follow ``rank_by``. With
    ``as_given`` the settings are neither rounded nor reordered (the frontier's
    points, in frontier order, each judged at the point found).
    """
    found = np.atleast_2d(np.asarray(X, dtype=float))
    D_found = problem.score(problem.values(found))[0]
    # Every figure below is for the recipe a lab can make (search/rounding.py).
    X, source = ((found, np.arange(len(found))) if as_given else
                 lab_recipes(study, problem, found))
    found, D_found = found[source], D_found[source]
    # coded from the settings as printed, so a reader recomputing from them gets
    # the very figures shown
    for j in problem.num:
        f = study.factors[j]
        natural = [clean_value(f, float(v)) for v in f.centre + f.half_range * X[:, j]]
        X[:, j] = (np.asarray(natural) - f.centre) / f.half_range
    X = problem.tidy(X)
    Y = problem.values(X)
    D, d = problem.score(Y)
    S = problem.shortfall(Y)
    names = problem.names()
    chances = chance_in_limits(study, models, X, draws=draws, seed=seed)
    # Each response's intervals as one array (rows: solutions; columns:
    # predicted, ci_low, ci_high, pi_low, pi_high), so no table is indexed per cell.
    intervals = {r.name: _interval_array(models[r.name], X, study.confidence)
                 for r in study.responses if r.name in models}
    # a shelf life past what the storage supports gets no chance (derive/reach.py)
    predicted = {n: a[:, 0] for n, a in intervals.items()}
    chances = withhold_beyond_reach(study, chances, predicted)
    reach_state = beyond_reach(study, predicted)
    chance_col = {n: i for i, n in enumerate(chances.responses)}
    spread_sd = {f.name: f.production_sd for f in study.factors
                 if not f.is_categorical and f.production_sd}
    held = spread = prod = None
    factor_held = {}
    if spread_sd:
        spread = transmitted_spread(study, models, X, seed=seed)
        prod = withhold_beyond_reach(study, production_chance(
            study, models, X, draws=draws, seed=seed), predicted)
        held = prod.all
        factor_held = factor_goal_chances(study, X, draws=draws, seed=seed)
    elif rank_by == "production" or aim == "production":
        held = chances.all  # no spread: the chance in production is the ordinary one
    # by D at the recipes (rounding can reorder peaks of nearly equal D)
    order = np.arange(len(X)) if as_given else np.lexsort((S, -D))
    if rank_by == "chance":
        order = np.lexsort((-D, -np.nan_to_num(chances.all, nan=-1.0)))
    elif rank_by == "production":
        order = np.lexsort((-D, -np.nan_to_num(held, nan=-1.0)))
    if aim == "production":
        order = np.concatenate([[0], order[order != 0]])
    order = order[:top]
    by_d = {int(i): n for n, i in enumerate(np.lexsort((S, -D)), start=1)}
    d_best = float(D.max()) if len(D) else 0.0
    general = _general_warnings(study, problem, models, fit)

    solutions = []
    for rank, i in enumerate(order, start=1):
        i = int(i)
        x = X[i]
        settings, coded = {}, {}
        for j, f in enumerate(study.factors):
            if f.is_categorical:
                settings[f.name] = str(decode_values(f, x[j:j + 1])[0])
                coded[f.name] = int(x[j])
            else:
                settings[f.name] = clean_value(f, float(f.centre + f.half_range * x[j]))
                coded[f.name] = float(x[j])
                if is_component(f):  # 1 - (the others) leaves rounding dust at a bound
                    settings[f.name] = round(settings[f.name], 12) + 0.0
        outcomes, predictions = {}, {}
        for r in study.responses:
            if r.name not in models:
                continue
            sd = shift = None
            if spread is not None:
                col_s = spread.responses.index(r.name)
                sd = float(spread.sd[i, col_s])
                shift = float(spread.mean_shift[i, col_s])
            pred, ci_low, ci_high, pi_low, pi_high = intervals[r.name][i].tolist()
            col = names.index(r.name) if r.name in names else None
            state = str(reach_state[r.name][i]) if r.name in reach_state else ""
            outcomes[r.name] = ResponseOutcome(
                name=r.name, goal=r.goal.kind if col is not None else "none",
                predicted=pred,
                desirability=float(d[i, col]) if col is not None else None,
                ci=(ci_low, ci_high),
                pi=(pi_low, pi_high),
                chance_in_limits=(_finite(chances.each[i, chance_col[r.name]])
                                  if r.name in chance_col else None),
                transmitted_sd=sd, mean_shift=shift, extrapolated=state,
                storage_needed=(study.reach[r.name].needed(pred) if state == "far"
                                else None),
                chance_in_production=(_finite(prod.each[i, chance_col[r.name]])
                                      if prod is not None and r.name in chance_col
                                      else None))
            predictions[r.name] = pred
        factor_d = {n: float(d[i, k]) for k, (kind, n) in enumerate(problem.columns)
                    if kind == "factor"}
        out = tuple(n for k, n in enumerate(names) if d[i, k] == 0)
        solutions.append(Solution(
            rank=rank, label=f"S{by_d[i]}", settings=settings, coded=coded,
            desirability=float(D[i]), predictions=predictions, responses=outcomes,
            factor_desirability=factor_d,
            chance_all=_finite(chances.all[i]) if chances.responses else None,
            out_of_limits=out, shortfall=float(S[i]),
            warnings=tuple(_point_warnings(study, problem, x, D[i])) + tuple(
                study.reach[n].sentence(o.predicted) for n, o in outcomes.items()
                if o.extrapolated and o.goal != "none"),
            proportions={f.name: settings[f.name] / f.total for f in study.factors
                         if is_component(f)},
            chance_all_production=(_finite(held[i]) if held is not None and
                                   chances.responses else None),
            d_given_up=max(0.0, d_best - float(D[i])),
            found_settings={f.name: (settings[f.name] if f.is_categorical else
                                     float(f.centre + f.half_range * found[i, j]))
                            for j, f in enumerate(study.factors)},
            found_desirability=float(D_found[i]),
            factor_chance_production={n: float(c[i]) for n, c in factor_held.items()}))
    assumptions = (
        f"{chances.assumption}; each chance is for one batch made at the settings and "
        f"measured once, from the models' prediction distributions ({chances.draws} "
        f"seeded draws, seed {seed})",)
    if spread_sd:
        listed = ", ".join(f"{k} {_g(v)}" for k, v in spread_sd.items())
        exact = all(m == "exact" for m in spread.method.values())
        assumptions += (
            f"in production each factor lands around its setting with the given standard "
            f"deviation ({listed}), independently of the others; the chance in production "
            "draws the settings from that spread as well as the run-to-run noise and the "
            "models' uncertainty; the spread SD and shift of each response are "
            + ("exact moments of the fitted polynomial" if exact else
               "exact moments for polynomial models, Monte Carlo for transformed ones"),)
    elif held is not None:
        assumptions += ("no factor has a production_sd: the chance in production counts "
                        "the run-to-run noise and the models' uncertainty only",)
    return OptimizationResult(
        study=study.name, solutions=tuple(solutions), rank_by=rank_by, seed=seed,
        feasible=feasible, unreachable=unreachable, warnings=tuple(general) + tuple(extra_notes),
        assumptions=assumptions, evaluations=problem.evaluations,
        correlation=chances.correlation, aim=aim, production_sd=spread_sd,
        not_informed=tuple(problem.not_informed),
        steps={f.name: f.lab_step for f in study.factors if not f.is_categorical},
        step_units={f.name: f.unit for f in study.factors if not f.is_categorical})


def _interval_array(model, X, level) -> np.ndarray:
    """(n, 5) predicted, ci_low, ci_high, pi_low, pi_high, without building a table."""
    fast = getattr(model, "interval_array", None)
    if fast is not None:
        return np.asarray(fast(X, level=level), dtype=float)
    return model.intervals(X, level=level)[
        ["predicted", "ci_low", "ci_high", "pi_low", "pi_high"]].to_numpy(dtype=float)


def _finite(x) -> float | None:
    x = float(x)
    return x if math.isfinite(x) else None


def _g(x: float) -> str:
    return f"{x:.4g}"
