"""Tables behind the workbench's pictures: runs with marks, desirability
curves, interaction means, contour grids of predictions and D, chances.

Every function returns a tidy DataFrame with fixed, documented columns, so a
front end (or a report) only draws them. Grids are evaluated in one batch:
an (n*n, k) array of coded settings in, one prediction per row out.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..study.coding import code_values, to_coded
from ..search.desirability import desirability, limits
from ..errors import StudyError

__all__ = ["OUTSIDE_TOL", "runs_table", "desirability_curves", "interaction_means",
           "effect_table", "half_normal_table", "residual_table",
           "contour_grid", "WhatIf", "what_if"]

# A run counts as outside the tested box when a coded setting passes +-1 by more
# than this (settings typed with a few decimals land a hair outside).
OUTSIDE_TOL = 1e-6


def runs_table(study, fit=None, *, unusual: float = 3.0) -> pd.DataFrame:
    """The runs with natural and coded settings and a plain-words mark per run.

    Parameters
    ----------
    study : Study
        With runs loaded.
    fit : StudyFit, optional
        When given, runs whose externally studentized residual for a response
        exceeds ``unusual`` in size are marked (3 is a common practice cut-off).

    Returns
    -------
    pandas.DataFrame
        Indexed by spreadsheet row. Columns: ``run``; one column per factor
        (natural settings); ``<factor> coded`` per factor; one per response;
        ``outside`` (True when any coded setting lies beyond -1..+1);
        ``marks`` (text: outside the tested box, blank responses, unusual
        results; empty when nothing to say).
    """
    runs = study.runs
    if runs is None:
        raise StudyError(f"study '{study.name}' has no runs loaded yet")
    coded = to_coded(study.factors, runs)
    out = pd.DataFrame({"run": runs["run"].to_numpy()}, index=runs.index)
    for j, f in enumerate(study.factors):
        out[f.name] = runs[f.name].to_numpy()
    for j, f in enumerate(study.factors):
        out[f"{f.name} coded"] = coded[:, j]
    for r in study.responses:
        if r.name in runs:
            out[r.name] = runs[r.name].to_numpy(float)
    # a level is never outside the tested box (three or more levels are coded by
    # position 0, 1, 2, ..., not -1..+1)
    beyond = (np.abs(coded) > 1 + OUTSIDE_TOL) & ~np.array(
        [f.is_categorical for f in study.factors], dtype=bool)[None, :]
    for j, f in enumerate(study.factors):  # a component: its amount beyond low..high
        if getattr(f, "is_component", False):
            beyond[:, j] = [_beyond(f, v, 0.0) for v in runs[f.name].to_numpy(float)]
    out["outside"] = beyond.any(axis=1)
    marks: list[list[str]] = [[] for _ in range(len(out))]
    for j, f in enumerate(study.factors):
        for i in np.flatnonzero(beyond[:, j]):
            marks[i].append(f"outside the tested box in {f.name} "
                            + (f"({runs[f.name].iloc[i]:.4g} {f.unit}, allowed "
                               f"{f.low:g}..{f.high:g})".replace(" ,", ",")
                               if getattr(f, "is_component", False) else
                               f"(coded {coded[i, j]:+.2f})"))
    for r in study.responses:
        if r.name in runs:
            for i in np.flatnonzero(np.isnan(runs[r.name].to_numpy(float))):
                marks[i].append(f"{r.name} blank")
    if fit is not None:
        run_ids = {run: i for i, run in enumerate(out["run"])}
        for name, model in fit.models.items():
            t = _studentized(model)
            if t is None:
                continue
            for key, value in t.items():
                i = run_ids.get(str(key))
                if i is not None and np.isfinite(value) and abs(value) > unusual:
                    marks[i].append(f"unusual {name} (studentized residual {value:+.1f})")
    # a time derived from storage past the last storage time (derive/reach.py)
    for name, reach in (getattr(study, "reach", {}) or {}).items():
        u = f" {reach.unit}" if reach.unit else ""
        for group, how in ((reach.beyond, f"past the last storage time, {reach.last:g}{u}"),
                           (reach.far, f"past {reach.stated_to:g}{u}, 1.5 times the last "
                                       "storage time: no chance stated")):
            for run in group:
                for i in np.flatnonzero(out["run"].astype(str).to_numpy() == run):
                    marks[i].append(f"extrapolated {name} ({how})")
    out["marks"] = ["; ".join(m) for m in marks]
    return out


def _studentized(model) -> pd.Series | None:
    """A model's deleted studentized residuals keyed by run id (None when absent)."""
    diag = getattr(model, "diagnostics_", None)
    if diag is None or "studentized_deleted" not in diag:
        return None
    return diag["studentized_deleted"]


def desirability_curves(study, *, n: int = 201, margin: float = 0.25) -> pd.DataFrame:
    """Each active goal's desirability over its limits and a margin either side.

    Returns
    -------
    pandas.DataFrame
        Columns ``name`` (response or factor), ``value`` (natural units) and
        ``desirability`` (0..1), ``n`` rows per active goal, values from
        ``lower - margin*(upper - lower)`` to ``upper + margin*(upper - lower)``.
    """
    frames = []
    for item in (*study.responses, *study.factors):
        goal = item.goal
        if not goal.active:
            continue
        width = goal.upper - goal.lower
        values = np.linspace(goal.lower - margin * width, goal.upper + margin * width, n)
        # Make the kinks (limits and target) exact points of the curve.
        kinks = [goal.lower, goal.upper] + ([goal.target] if goal.kind == "target" else [])
        values = np.unique(np.concatenate([values, kinks]))
        frames.append(pd.DataFrame({"name": item.name, "value": values,
                                    "desirability": desirability(values, goal)}))
    if not frames:
        return pd.DataFrame(columns=["name", "value", "desirability"])
    return pd.concat(frames, ignore_index=True)


def interaction_means(study, response: str, a: str, b: str) -> pd.DataFrame:
    """Mean of a response at each low/high end (or level) of two factors (measured runs).

    A numeric or two-level factor is read at its low and high ends: runs at
    its centre (coded 0) are left out, runs outside -1..+1 count at the nearer
    end. A categorical factor of three or more levels is read at every level.
    Blank results are skipped.

    Returns
    -------
    pandas.DataFrame
        One row per combination that was run (four for two numeric factors).
        Columns ``a_level`` and ``b_level`` (natural setting or level name),
        ``a_coded`` and ``b_coded`` (-1 or +1, or the level's position for
        three or more levels), ``mean`` and ``runs``.
    """
    if a == b:
        raise StudyError(f"an interaction plot needs two different factors, found "
                         f"'{a}' twice: choose another factor")
    fa, fb = study.factor(a), study.factor(b)
    runs = study.runs
    y = runs[study.response(response).name].to_numpy(float)

    def read(factor):
        coded = code_values(factor, runs[factor.name].to_numpy())
        if _many_levels(factor):  # every level, by its position
            return coded, np.ones(len(coded), dtype=bool)
        return np.sign(coded), np.abs(coded) > 1e-9

    (sa, ka), (sb, kb) = read(fa), read(fb)
    keep = ka & kb & ~np.isnan(y)
    frame = pd.DataFrame({"a_coded": sa[keep], "b_coded": sb[keep], "y": y[keep]})
    cells = frame.groupby(["a_coded", "b_coded"])["y"].agg(["mean", "size"]).reset_index()
    cells = cells.rename(columns={"size": "runs"})

    def end(factor, coded):
        if _many_levels(factor):
            return factor.levels[int(round(coded))]
        return factor.levels[0 if coded < 0 else 1] if factor.is_categorical else \
            (factor.low if coded < 0 else factor.high)

    cells.insert(0, "a_level", [end(fa, c) for c in cells["a_coded"]])
    cells.insert(1, "b_level", [end(fb, c) for c in cells["b_coded"]])
    return cells[["a_level", "b_level", "a_coded", "b_coded", "mean", "runs"]]


def _many_levels(factor) -> bool:
    """A categorical factor of three or more levels (coded by the level's position)."""
    return factor.is_categorical and len(factor.levels) > 2


def effect_table(model) -> pd.DataFrame:
    """A fitted model's effects (change from coded -1 to +1, twice the coefficient;
    for each level of a factor with three or more levels, the last one derived,
    its deviation from the average over levels: ``model.effect_scales_``).

    Returns
    -------
    pandas.DataFrame
        One row per main effect or interaction (not the intercept nor
        squares), largest size first. Columns ``term``, ``effect``,
        ``std_error`` (of the effect; NaN without residual degrees of freedom)
        and ``p_value`` (NaN likewise).
    """
    labels = list(model.terms_)
    effects = np.asarray(model.effects_, dtype=float)
    # effect = scale x coefficient: 2 for a low-to-high change, 1 for a level's
    # deviation from the average over levels (tradeoff.model.notes.effect_scale)
    scale = np.asarray(model.effect_scales_, dtype=float)
    se = (np.full(len(labels), np.nan) if model.std_errors_ is None or
          model.residual_df_ == 0 else scale * np.asarray(model.std_errors_, dtype=float))
    p = (np.full(len(labels), np.nan) if model.p_values_ is None or
         model.residual_df_ == 0 else np.asarray(model.p_values_, dtype=float))
    keep = ~np.isnan(effects)
    derived = [d for d in getattr(model, "derived_coefficients_", None) or []
               if d.get("effect") is not None]
    table = pd.DataFrame({"term": list(np.array(labels, dtype=object)[keep])
                          + [d["term"] for d in derived],
                          "effect": list(effects[keep]) + [d["effect"] for d in derived],
                          "std_error": list(se[keep]) + [
                              np.nan if d["effect_std_error"] is None
                              or not np.isfinite(d["effect_std_error"])
                              else d["effect_std_error"] for d in derived],
                          "p_value": list(p[keep]) + [d["p"] for d in derived]})
    order = np.argsort(-np.abs(table["effect"].to_numpy()), kind="stable")
    return table.iloc[order].reset_index(drop=True)


def half_normal_table(model) -> pd.DataFrame:
    """Half-normal plot coordinates of a model's effects (see ``tradeoff.lenth``).

    Columns ``term``, ``effect``, ``abs_effect``, ``quantile``.
    """
    from ..model.lenth import half_normal_points

    table = effect_table(model)
    return half_normal_points(list(table["term"]), table["effect"].to_numpy())


def residual_table(model) -> pd.DataFrame:
    """Per-run residuals of a model with normal quantiles for a quantile plot.

    Columns ``run``, ``order`` (position in the data file), ``observed``,
    ``fitted``, ``residual`` (modelling scale), ``studentized``,
    ``studentized_deleted``, ``leverage``, ``cooks_distance``, ``flagged``
    and ``quantile``: the standard normal quantile of the deleted studentized
    residual's rank, ``Phi^-1((i - 0.5) / n)`` (common practice). The quantile
    plot shows the deleted studentized residual, the value runs are flagged
    on (beyond +-3), so a flagged run sits beyond +-3 in the plot too. When it
    does not exist (no spare degrees of freedom) the column falls back to the
    internally studentized residual, then to the raw residual.
    """
    from scipy import stats

    diag = model.diagnostics_.reset_index()
    diag.insert(1, "order", np.arange(1, len(diag) + 1))
    values = diag["studentized_deleted"].to_numpy(float)
    for fallback in ("studentized", "residual"):
        if np.isnan(values).all():
            values = diag[fallback].to_numpy(float)
    ranks = pd.Series(values).rank(method="first").to_numpy()
    diag["quantile"] = stats.norm.ppf((ranks - 0.5) / len(diag))
    diag["studentized_deleted"] = values
    return diag


def contour_grid(study, fit, x: str, y: str, held: dict, *, n: int = 41) -> pd.DataFrame:
    """Predictions of every modelled response and D over a grid of two factors.

    Parameters
    ----------
    study : Study
    fit : StudyFit
        The fitted models (``fit.models``: response name -> model whose
        ``predict`` takes coded (n, k) settings and returns natural units).
    x, y : str
        Two different numeric factors, spanned over their searched ranges.
    held : dict
        Natural settings of the other factors (level names for categorical
        ones), typically a chosen solution's settings.
    n : int
        Grid points per axis (n * n points, evaluated in one batch).

    Returns
    -------
    pandas.DataFrame
        ``n * n`` rows. Columns ``x`` and ``y`` (natural settings), one column
        per modelled response (predicted mean, natural units), ``D`` (overall
        desirability; NaN when no goal is set), ``within_limits`` (every
        response with a goal predicted within its limits, and every factor
        goal met), ``allowed`` (the study's rules among factors hold) and
        ``feasible`` (both).
    """
    from ..study.constraints import rules_satisfied
    from ..search.problem import goal_columns, overall_desirability
    from .contours import _axis_values

    xs, ys = _axis_values(study, x, y, n)
    gx, gy = np.meshgrid(xs, ys, indexing="xy")
    natural = {}
    for f in study.factors:
        if f.name == x:
            natural[f.name] = gx.ravel()
        elif f.name == y:
            natural[f.name] = gy.ravel()
        else:
            if f.name not in held:
                raise StudyError(f"no setting given for factor '{f.name}': the map "
                                 "holds every other factor at a setting")
            natural[f.name] = np.repeat(np.array([held[f.name]], dtype=object
                                                 if f.is_categorical else float), n * n)
    X = to_coded(study.factors, pd.DataFrame(natural))
    out = pd.DataFrame({"x": gx.ravel(), "y": gy.ravel()})
    models = dict(fit.models)
    within = np.ones(n * n, dtype=bool)
    for r in study.responses:
        if r.name not in models:
            continue
        pred = np.asarray(models[r.name].predict(X), dtype=float).reshape(n * n)
        out[r.name] = pred
        if r.goal.active:
            lo, hi = limits(r.goal)
            within &= (pred >= lo) & (pred <= hi)
    for j, f in enumerate(study.factors):
        if not f.is_categorical and f.goal.active:
            lo, hi = limits(f.goal)
            value = np.asarray(natural[f.name], dtype=float)
            within &= (value >= lo) & (value <= hi)
    out["D"] = overall_desirability(study, fit, X)[0] if goal_columns(study, fit) else np.nan
    out["within_limits"] = within
    out["allowed"] = rules_satisfied(study, X)
    out["feasible"] = out["within_limits"] & out["allowed"]
    return out


@dataclass(frozen=True)
class WhatIf:
    """Predictions at settings typed by hand: every figure from one recipe.

    Attributes
    ----------
    table : pandas.DataFrame
        One row per modelled response. Columns ``response``, ``predicted``,
        ``ci_low``, ``ci_high``, ``pi_low``, ``pi_high`` (intervals at the
        study's confidence level), ``lower_limit``, ``upper_limit`` (the goal's
        acceptable interval; NaN when unbounded or no goal), ``desirability``
        (NaN when no goal) and ``chance_in_limits`` (NaN when no goal).
    desirability : float
        Overall desirability D (NaN when no goal is set).
    chance_all : float
        Chance that every response with a goal lands within its limits at once.
    outside : tuple of str
        Factors set outside their tested range (the model is extrapolating).
    allowed : bool
        The study's rules among factors hold.
    settings : dict
        The one recipe every figure above is for (natural units): the settings
        given, except a blend that does not add up to the study's total, which
        is scaled to it (same shares; ``notes`` says so).
    notes : tuple of str
        What the reader must know about the recipe (a blend off its total).
    factor_desirability : dict
        Factor name -> d of each factor with a goal (it takes part in D too).
    """

    table: pd.DataFrame
    desirability: float
    chance_all: float
    outside: tuple
    allowed: bool
    settings: dict | None = None
    notes: tuple = ()
    factor_desirability: dict | None = None


def what_if(study, fit, settings: dict, *, draws: int = 20000) -> WhatIf:
    """Predictions, intervals, desirability and chances at one hand-set point.

    ``settings`` holds a natural value (level name for a categorical factor)
    for every factor. Chances use the seeded Monte Carlo of
    ``tradeoff.chance.chance_in_limits`` with the study's seed. Every figure
    (predictions, each d, D, chances) is computed at one coded vector: the d's
    and D score the very predictions in the table. A blend whose components do
    not add up to the total is scaled to it first (a blend is its shares), with
    a note saying so.
    """
    from ..search.chance import chance_in_limits, withhold_beyond_reach
    from ..study.constraints import rules_satisfied
    from ..study.mixture import components_of
    from ..search.problem import _Problem
    from .mixture_tables import blend_on_total

    missing = [f.name for f in study.factors if f.name not in settings]
    if missing:
        raise StudyError(f"no setting given for factor(s) {missing}: set every factor")
    used = {k: settings[k] for k in study.factor_names}
    notes = []
    comps = components_of(study)
    if comps:
        scaled, given = blend_on_total(study, used)
        total = comps[0].total
        if abs(given - total) > 1e-9 * total:
            unit = f" {comps[0].unit}" if comps[0].unit else ""
            notes.append(f"the components add up to {given:.6g}{unit}, not the blend's "
                         f"total {total:g}{unit}: a blend is known by its shares, so every "
                         f"figure is for the same shares scaled to {total:g}{unit} ("
                         + ", ".join(f"{c.label} {scaled[c.name]:.4g}" for c in comps)
                         + ")")
        used.update(scaled)
    X = to_coded(study.factors, pd.DataFrame({k: [used[k]] for k in study.factor_names}))
    pred = fit.predict(used)
    table = pred.drop(columns=["point"], errors="ignore").reset_index(drop=True)
    d_by_name = {}
    D = np.nan
    problem = _Problem(study, fit)
    if problem.columns:
        # the d's and D score the predictions of the table itself: one recipe per row
        by_name = dict(zip(table["response"], table["predicted"].astype(float)))
        Y = np.array([[by_name[n] if kind == "response" else float(used[n])
                       for kind, n in problem.columns]])
        D_arr, d = problem.score(Y)
        D = float(D_arr[0])
        d_by_name = {name: float(d[0, i]) for i, (_, name) in enumerate(problem.columns)}
    chance = chance_in_limits(study, dict(fit.models), X, draws=draws, seed=study.seed)
    # no chance for a time past what the storage supports (derive/reach.py)
    chance = withhold_beyond_reach(study, chance, {
        n: np.asarray([v]) for n, v in zip(table["response"], table["predicted"])})
    chance_by_name = {name: float(chance.each[0, i])
                      for i, name in enumerate(chance.responses)}
    lows, highs = [], []
    for name in table["response"]:
        goal = study.response(name).goal
        lo, hi = limits(goal) if goal.active else (np.nan, np.nan)
        lows.append(lo if np.isfinite(lo) else np.nan)
        highs.append(hi if np.isfinite(hi) else np.nan)
    table["lower_limit"], table["upper_limit"] = lows, highs
    table["desirability"] = [d_by_name.get(n, np.nan) for n in table["response"]]
    table["chance_in_limits"] = [chance_by_name.get(n, np.nan) for n in table["response"]]
    # a component's coded value is its pseudo-component share (0 at its low), so its
    # tested range is low..high in amounts, not coded -1..+1
    outside = tuple(f.name for j, f in enumerate(study.factors)
                    if not f.is_categorical and _beyond(f, float(used[f.name]), X[0, j]))
    return WhatIf(table=table, desirability=D,
                  chance_all=float(chance.all[0]) if chance.responses else np.nan,
                  outside=outside, allowed=bool(rules_satisfied(study, X)[0]),
                  settings=used, notes=tuple(notes),
                  factor_desirability={n: d for n, d in d_by_name.items()
                                       if n in study.factor_names})


def _beyond(factor, value: float, coded: float) -> bool:
    """A setting outside the factor's tested range (a component: beyond low..high)."""
    if getattr(factor, "is_component", False):
        tol = OUTSIDE_TOL * factor.total
        return value < factor.low - tol or value > factor.high + tol
    return abs(coded) > 1 + OUTSIDE_TOL
