"""The invariants of the oracle's battery, one function per command's output.

Each ``check_*`` compares what a command printed (or the API returned) with
an independent computation (oracle_reference.py) or with the fitted model,
and records every disagreement on the study's ``Outcome`` (invariant name,
command, message) instead of stopping at the first, so one study reports all
it breaks.
"""
from __future__ import annotations

import itertools
import math
import re

import numpy as np
import pandas as pd

from oracle_category import category_scale, check_category
from oracle_pages import check_report_html, check_report_xlsx
from oracle_reference import (D_reference, TermError, chance_reference, d_reference,
                              goal_limits, interval_reference, shortfall_reference,
                              reml_reference, storage_reach_reference, term_column)

__all__ = ["check_solutions", "check_fit", "check_next", "check_plan", "check_confirm",
           "check_report_html", "check_report_xlsx", "check_unused", "check_display",
           "check_unjudged", "goals_of", "region_grid", "chance_tolerance"]

# The search may end below the grid's best by this share of it: ten times the polish's
# stopping tolerance on log D (core/search/polish.py, 1e-6).
GRID_TOL = 1e-5
GRID_POINTS = 40000  # at most this many grid points per study


def goals_of(generated, fit) -> list[tuple[str, str, dict]]:
    """(kind, name, goal keys) of every goal taking part in D: responses with a goal
    and a fitted model, then numeric factors with a goal (the README's rule)."""
    out = []
    for r in generated.spec.get("responses", []):
        if r.get("goal", "none") != "none" and r["name"] in fit.models:
            out.append(("response", r["name"], r))
    for f in generated.region.factors:
        if f.kind == "numeric" and f.goal and f.goal["goal"] != "none":
            out.append(("factor", f.name, f.goal))
    return out


def _transform(generated, name) -> str:
    for r in generated.spec.get("responses", []):
        if r["name"] == name:
            return r.get("transform", "none")
    return "none"


def _close(a, b, rel=1e-9, scale=1.0) -> bool:
    if a is None or b is None:
        return a is b
    a, b = float(a), float(b)
    if not (math.isfinite(a) and math.isfinite(b)):
        return (math.isnan(a) and math.isnan(b)) or a == b
    return abs(a - b) <= rel * (abs(a) + abs(b) + scale)


def _d_matches(d, y, goal) -> bool:
    """d equals Derringer-Suich at y, allowing for y a hair either side of a kink."""
    if d is None:
        return False
    eps = 1e-9 * max(1.0, abs(y), goal["upper"] - goal["lower"])
    ref = d_reference(np.array([y - eps, y, y + eps]), goal)
    return bool(min(ref) - 1e-7 <= d <= max(ref) + 1e-7)


def chance_tolerance(p: float, draws: int = 20000) -> float:
    """4.5 Monte Carlo standard errors of a chance p, plus 0.002."""
    return 4.5 * math.sqrt(max(p * (1 - p), 1e-4) / draws) + 0.002


def _region_ok(generated, table: pd.DataFrame, *, search: bool = True, tol=1e-9,
               rule_tol=1e-7, total_tol=1e-7, coded_slack=0.0) -> list[str]:
    """What keeps settings out of the region (empty when they lie inside)."""
    problems = []
    region = generated.region
    for f in region.factors:
        values = table[f.name]
        if f.kind == "categorical":
            bad = [v for v in values if v not in f.levels]
            if bad:
                problems.append(f"'{f.name}' = {bad[0]!r} is not one of its levels")
            continue
        lo, hi = f.search_range if (search and f.kind == "numeric") else (f.low, f.high)
        slack = tol * (hi - lo) + 1e-12
        v = values.to_numpy(float)
        if np.any(v < lo - slack) or np.any(v > hi + slack):
            problems.append(f"'{f.name}' = {v.tolist()} outside {lo}..{hi}")
    if region.components:
        total = sum(table[c.name].to_numpy(float) for c in region.components)
        if np.any(np.abs(total - region.total) > total_tol * region.total):
            problems.append(f"the blend adds up to {total.tolist()}, not {region.total}")
    halves = {f.name: f.half for f in region.numeric}
    for r in region.rules:
        slack = coded_slack * sum(abs(c) * halves.get(n, 0.0) for n, c in r.coef.items())
        if not r.holds(table, tol=rule_tol, slack=slack).all():
            problems.append(f"rule '{r.text}' broken by {r.excess(table):.3g}")
    return problems


def _coded(study, table):
    from tradeoff import to_coded

    return to_coded(study.factors, table)


def _my_coded(generated, f_name, value):
    """A numeric factor's (or component's) coded value, written out from the README."""
    region = generated.region
    f = next(x for x in region.factors if x.name == f_name)
    if f.kind == "component":
        return (value - f.low) / region.blend_scale()
    return (value - f.centre) / f.half


# --------------------------------------------------------------------------
# optimize


def check_solutions(generated, study, fit, result, outcome) -> None:
    goals = goals_of(generated, fit)
    weights = [g.get("weight", 1.0) for _, _, g in goals]
    for s in result.solutions:
        where = f"solution {s.label}"
        table = pd.DataFrame([s.settings])
        for p in _region_ok(generated, table):
            outcome.fail("region", "optimize", f"{where}: {p}")
        for f in generated.region.factors:
            if f.kind != "categorical":
                mine = _my_coded(generated, f.name, float(s.settings[f.name]))
                if not _close(s.coded[f.name], mine, 1e-9):
                    outcome.fail("predict", "optimize", f"{where}: '{f.name}' coded "
                                 f"{s.coded[f.name]} but its setting {s.settings[f.name]} "
                                 f"is coded {mine}")
        X = _coded(study, table)
        for name, o in s.responses.items():
            model = fit.models[name]
            p = float(np.asarray(model.predict(X)).ravel()[0])
            if not _close(o.predicted, p, 1e-9):
                outcome.fail("predict", "optimize", f"{where}: '{name}' predicted "
                             f"{o.predicted}, the model predicts {p} at its settings")
            _check_intervals(generated, study, model, X, name, o, where, outcome)
        ds = []
        for kind, name, g in goals:
            if kind == "response":
                y = s.responses[name].predicted
                d = s.responses[name].desirability
            else:
                y = float(s.settings[name])
                d = s.factor_desirability.get(name)
            ds.append(d)
            if not _d_matches(d, y, g):
                outcome.fail("desirability", "optimize",
                             f"{where}: d of '{name}' is {d} at {y} ({g['goal']} "
                             f"{g.get('lower')}..{g.get('upper')}, target {g.get('target')},"
                             f" shapes {g.get('shape')}/{g.get('shape_below')}/"
                             f"{g.get('shape_above')}): Derringer-Suich gives "
                             f"{float(d_reference(np.array([y]), g)[0])}")
        if goals and None not in ds:
            D = float(D_reference(np.array([ds]), weights)[0])
            if not abs(D - s.desirability) <= 1e-9 + 1e-9 * D:
                outcome.fail("overall", "optimize", f"{where}: D = {s.desirability}, "
                             f"the weighted geometric mean of its d's is {D}")
            out = {name for (_, name, _), d in zip(goals, ds) if d == 0}
            if set(s.out_of_limits) != out:
                outcome.fail("desirability", "optimize", f"{where}: outside limits "
                             f"{sorted(s.out_of_limits)}, d = 0 for {sorted(out)}")
        _check_chances(generated, study, fit, X, s, goals, where, outcome)
        _check_spread(generated, study, fit, s, where, outcome)
    D = [s.desirability for s in result.solutions]
    if result.rank_by == "desirability" and any(a < b - 1e-12 for a, b in zip(D, D[1:])):
        outcome.fail("overall", "optimize", f"solutions not in order of D: {D}")
    # alternatives are distinct peaks, at least 0.25 coded units apart as found,
    # before each is rounded to its steps (README)
    coded = np.array([[float(s.coded[f.name]) if f.kind == "categorical" else
                       _my_coded(generated, f.name, float(s.found_settings[f.name]))
                       for f in generated.region.factors] for s in result.solutions])
    for i, j in itertools.combinations(range(len(coded)), 2):
        gap = float(np.sqrt(((coded[i] - coded[j]) ** 2).sum()))
        if gap < 0.25 - 1e-9:
            outcome.fail("region", "optimize", f"solutions {result.solutions[i].label} and "
                         f"{result.solutions[j].label} are {gap:.3g} coded units apart, "
                         "closer than 0.25")
    total = generated.region.total
    for s in result.solutions:
        for c in generated.region.components:
            if not _close(s.proportions.get(c.name), s.settings[c.name] / total, 1e-12):
                outcome.fail("predict", "optimize", f"{s.label}: '{c.name}' amount "
                             f"{s.settings[c.name]} but proportion {s.proportions.get(c.name)}")
    for s in result.solutions:
        _check_recipe(generated, s, outcome)
    if goals:
        _check_grid(generated, study, fit, result, goals, outcome)


def _on_step(value: float, step: float) -> bool:
    return abs(value / step - round(value / step)) <= 1e-7


def _check_recipe(generated, s, outcome) -> None:
    """Settings on their steps (README: each numeric factor's ``step``, default the
    power of ten cutting low..high into 20 to 200 steps) or at an end of the searched
    range, one step at most from the optimum found; a blend's free components too
    (one of them makes up the rest)."""
    comps = generated.region.components
    for f in generated.region.numeric:
        value, found = float(s.settings[f.name]), float(s.found_settings[f.name])
        if abs(value - found) <= 1e-7 * f.lab_step:
            continue  # kept as found: no neighbouring recipe keeps the rules
        ends = f.search_range  # an end of the searched range is settable too
        on = _on_step(value, f.lab_step) or any(abs(value - e) <= 1e-9 * f.lab_step
                                                for e in ends)
        if not on or abs(value - found) > f.lab_step * (1 + 1e-9):
            outcome.fail("recipe", "optimize", f"{s.label}: '{f.name}' = {value} is not "
                         f"the step ({f.lab_step}) next to the optimum found ({found})")
    moved = [abs(float(s.settings[c.name]) - float(s.found_settings[c.name]))
             > 1e-7 * c.lab_step for c in comps]
    if comps and any(moved):  # else kept as found (no neighbouring recipe would do)
        off = [c.name for c in comps if not _on_step(float(s.settings[c.name]), c.lab_step)
               and not any(abs(float(s.settings[c.name]) - e) <= 1e-9 * c.lab_step
                           for e in c.search_range)]
        if len(off) > 1:
            outcome.fail("recipe", "optimize", f"{s.label}: components {off} are off their "
                         "steps (only the one making up the rest may be)")


def _check_intervals(generated, study, model, X, name, o, where, outcome) -> None:
    mean, se, sigma, df = model.predictive(X)
    if not (np.isfinite(sigma) and df):
        return
    ci_lo, ci_hi, pi_lo, pi_hi = interval_reference(
        np.asarray(mean).ravel(), np.asarray(se).ravel(), float(sigma), df,
        study.confidence, _transform(generated, name))
    got = [o.ci[0], o.ci[1], o.pi[0], o.pi[1]]
    want = [float(v[0]) for v in (ci_lo, ci_hi, pi_lo, pi_hi)]
    if hasattr(model, "logit_"):  # a category summary's interval stops at its scale
        want = list(np.clip(want, *category_scale(model.report())))
    scale = abs(want[3] - want[2])
    if not all(_close(a, b, _interval_tol(df), scale) for a, b in zip(got, want)):
        outcome.fail("intervals", "optimize", f"{where}: '{name}' ci, pi {got}, the t "
                     f"intervals are {want}")


SPREAD_DRAWS = 40000


def _check_spread(generated, study, fit, s, where, outcome) -> None:
    """Each response's spread SD and mean shift under the factors' production SDs
    equal a Monte Carlo of the model over settings drawn around the solution
    (independent normal settings, as the README states); within 4 % of the SD."""
    spread = {f.name: f.production_sd for f in generated.region.numeric if f.production_sd}
    if not spread:
        return
    rng = np.random.default_rng(20240)
    table = pd.DataFrame({k: np.repeat(v, SPREAD_DRAWS) if isinstance(v, str)
                          else np.full(SPREAD_DRAWS, float(v)) for k, v in s.settings.items()})
    for name, sd in spread.items():
        table[name] = table[name] + rng.normal(0.0, sd, SPREAD_DRAWS)
    X = _coded(study, table)
    for name, o in s.responses.items():
        y = np.asarray(fit.models[name].predict(X), float).ravel()
        sd, shift = float(y.std()), float(y.mean() - o.predicted)
        if o.transmitted_sd is None:
            outcome.fail("spread", "optimize", f"{where}: '{name}' has no spread SD")
            continue
        tol = 0.04 * sd + 1e-9 * (abs(o.predicted) + 1)
        if abs(o.transmitted_sd - sd) > tol or abs(o.mean_shift - shift) > tol + 4 * sd / \
                math.sqrt(SPREAD_DRAWS):
            outcome.fail("spread", "optimize", f"{where}: '{name}' spread SD "
                         f"{o.transmitted_sd:.6g}, shift {o.mean_shift:.6g}; Monte Carlo "
                         f"gives {sd:.6g}, {shift:.6g}")


def _interval_tol(df) -> float:
    """A smooth model's posterior is normal; its df (a million) stands for infinity,
    and t and normal quantiles differ there by about 1e-6 of themselves."""
    return 1e-7 if df < 1e5 else 5e-6


def _beyond_storage(generated, fit, X) -> set:
    """Goal responses derived as a time from storage whose prediction at X lies past
    what the storage supports (oracle_reference.storage_reach_reference)."""
    out = set()
    storage = generated.files.get("storage.csv")
    if storage is None:
        return out
    for r in generated.spec.get("responses", []):
        if r.get("derive") not in ("shelf_life", "time_to_limit") or \
                r["name"] not in fit.models:
            continue
        reach = storage_reach_reference(storage, r.get("at_temperature"))
        if float(np.asarray(fit.models[r["name"]].predict(X)).ravel()[0]) > reach:
            out.add(r["name"])
    return out


def _check_chances(generated, study, fit, X, s, goals, where, outcome) -> None:
    chances = []
    far = _beyond_storage(generated, fit, X)
    for kind, name, g in goals:
        if kind != "response":
            continue
        o = s.responses[name]
        model = fit.models[name]
        if name in far:
            # past what the storage supports: no chance, for it or for all at once
            if o.chance_in_limits is not None or s.chance_all is not None or \
                    o.extrapolated != "far":
                outcome.fail("chance", "optimize", f"{where}: '{name}' lies past the "
                             f"storage study's reach, yet a chance {o.chance_in_limits} "
                             f"(all {s.chance_all}, flag '{o.extrapolated}') is stated")
            chances.append(None)
            continue
        if o.extrapolated == "far":
            outcome.fail("chance", "optimize", f"{where}: '{name}' flagged past the "
                         "storage study's reach, which the storage table does not say")
        mean, se, sigma, df = model.predictive(X)
        if not (np.isfinite(sigma) and df and df > 0):
            if o.chance_in_limits is not None:
                outcome.fail("chance", "optimize", f"{where}: '{name}' has no error "
                             f"estimate yet a chance {o.chance_in_limits}")
            chances.append(None)
            continue
        p = float(chance_reference(np.asarray(mean).ravel()[0], np.asarray(se).ravel()[0],
                                   float(sigma), df, g, _transform(generated, name)))
        chances.append(p)
        if o.chance_in_limits is None or abs(o.chance_in_limits - p) > chance_tolerance(p):
            outcome.fail("chance", "optimize", f"{where}: chance of '{name}' within limits "
                         f"{o.chance_in_limits}, the t distribution gives {p:.4f}")
    known = [c for c in chances if c is not None]
    if not known or None in chances or s.chance_all is None:
        return
    tol = chance_tolerance(0.5)
    if s.chance_all > min(known) + tol or s.chance_all < sum(known) - (len(known) - 1) - tol:
        outcome.fail("chance", "optimize", f"{where}: chance all {s.chance_all} outside "
                     f"the bounds {max(0, sum(known) - len(known) + 1):.4f}.."
                     f"{min(known):.4f} its single chances allow")


def region_grid(generated, budget: int = GRID_POINTS, levels: dict | None = None
                ) -> pd.DataFrame:
    """A dense grid of settings over the searched region, in natural units:
    numeric factors on even steps over their search ranges, every level
    combination, blends on a simplex lattice of the pseudo-components inside
    the highs, and only the points that keep every rule."""
    region = generated.region
    num, cat, comps = region.numeric, region.categorical, region.components
    blend = None
    if comps:
        q = len(comps)
        m = {3: 36, 4: 16, 5: 10}.get(q, 8)
        z = np.array([p for p in itertools.product(range(m + 1), repeat=q - 1)
                      if sum(p) <= m], dtype=float)
        z = np.column_stack([z, m - z.sum(axis=1)]) / m
        amounts = np.array([c.low for c in comps]) + z * region.blend_scale()
        keep = np.all(amounts <= np.array([c.high for c in comps]) + 1e-9, axis=1)
        blend = pd.DataFrame(amounts[keep], columns=[c.name for c in comps])
    combos = math.prod(len(levels.get(f.name, f.levels)) if levels else len(f.levels)
                       for f in cat) * (len(blend) if blend is not None else 1)
    per = max(2, int((budget / combos) ** (1 / len(num)))) if num else 1
    per = min(per, 401)
    levels = levels or {}
    axes = [np.linspace(*f.search_range, per) for f in num] + [
        list(levels.get(f.name, f.levels)) for f in cat]
    rows = list(itertools.product(*axes)) if axes else [()]
    table = pd.DataFrame(rows, columns=[f.name for f in num] + [f.name for f in cat])
    if blend is not None:
        table = table.merge(blend, how="cross") if len(table.columns) else blend
    keep = np.ones(len(table), dtype=bool)
    for r in region.rules:
        keep &= r.holds(table, tol=0.0)
    return table[keep].reset_index(drop=True)


def _check_grid(generated, study, fit, result, goals, outcome) -> None:
    # levels the result holds or leaves out (not informed by the data) are not searched
    searched = {}
    for n in result.not_informed:
        f = study.factor(n["factor"])
        searched[f.name] = [v for v in f.levels if v not in n.get("left_out", [])]
    grid = region_grid(generated, levels=searched)
    if grid.empty:
        return
    X = _coded(study, grid)
    Y = np.column_stack([np.asarray(fit.models[name].predict(X), float).ravel()
                         if kind == "response" else grid[name].to_numpy(float)
                         for kind, name, _ in goals])
    d = np.column_stack([d_reference(Y[:, j], g) for j, (_, _, g) in enumerate(goals)])
    D = D_reference(d, [g.get("weight", 1.0) for _, _, g in goals])
    i = int(np.nanargmax(D))
    best = result.solutions[0]
    # the search's optima as found, before rounding to the steps (the recipe shown
    # may lie a step away, below the grid's best). Solutions are ranked by their
    # rounded recipes, so a sharp peak that loses most in rounding may be listed
    # after a broad one: the highest found D of any solution is the search's best.
    found = max(s.found_desirability for s in result.solutions)
    if D[i] > 0 and (not result.feasible or found < D[i] * (1 - GRID_TOL)):
        settings = {k: (v if isinstance(v, str) else round(float(v), 6))
                    for k, v in grid.iloc[i].items()}
        outcome.fail("grid", "optimize", f"best D {found:.6g} (feasible: "
                     f"{result.feasible}) but the grid reaches D = {D[i]:.6g} at {settings}")
    for j, (kind, name, g) in enumerate(goals):
        if name in result.unreachable:
            lo, hi = goal_limits(g)
            inside = (Y[:, j] >= lo) & (Y[:, j] <= hi)
            if inside.any():
                outcome.fail("grid", "optimize", f"'{name}' is said to be unreachable, yet "
                             f"{int(inside.sum())} grid settings bring it within its limits")
    if D[i] == 0 and not result.feasible:
        S = shortfall_reference(Y, [g for _, _, g in goals])
        Xf = _coded(study, pd.DataFrame([best.found_settings]))
        mine = shortfall_reference(np.array([[
            float(np.asarray(fit.models[n].predict(Xf)).ravel()[0]) if k == "response"
            else float(best.found_settings[n]) for k, n, _ in goals]]),
            [g for _, _, g in goals])[0]
        if mine > S.min() + 1e-6 * (1 + S.min()):
            outcome.fail("grid", "optimize", f"no feasible setting: shortfall {mine:.6g} "
                         f"at the best, the grid comes to {S.min():.6g}")


# --------------------------------------------------------------------------
# fit


def check_fit(generated, study, fit, printed: dict, outcome) -> None:
    factors = {f.name: f for f in generated.region.factors}
    blocks = None
    if study.block_column is not None and study.block_column in study.runs.columns:
        blocks = study.runs.groupby("run", sort=False)[study.block_column].first().to_numpy()
    runs = study.runs.groupby("run", sort=False).first()
    for name, rep in printed["responses"].items():
        if rep.get("model") == "category":  # the scores' cumulative logit
            check_category(generated, study, fit, name, rep, outcome)
            continue
        if rep.get("model") == "smooth" or generated.region.components:
            continue
        aliases = rep.get("aliases") or {}
        for dropped, partners in aliases.items():
            if not all(isinstance(p, dict) and {"term", "coef"} <= set(p) for p in partners):
                outcome.fail("aliases", "fit", f"'{name}': '{dropped}' is printed as "
                             f"aliased with {partners} without the signed coefficients "
                             "that rebuild it")
                continue
            try:
                col = term_column(dropped, runs, factors, blocks)
                rebuilt = sum(p["coef"] * term_column(p["term"], runs, factors, blocks)
                              for p in partners)
            except TermError as exc:
                outcome.fail("aliases", "fit", f"'{name}': {exc}")
                continue
            if not np.allclose(col, rebuilt, rtol=0, atol=1e-8):
                outcome.fail("aliases", "fit", f"'{name}': {dropped} = "
                             + " + ".join(f"{p['coef']:g} {p['term']}" for p in partners)
                             + " does not rebuild its column")
        _check_coefficients(generated, study, name, rep, runs, factors, blocks, outcome)


def _check_coefficients(generated, study, name, rep, runs, factors, blocks, outcome):
    """Least squares on the README's coding of the printed terms gives the printed
    coefficients (numpy.linalg.lstsq as the reference)."""
    if name not in study.runs.columns or "pieces_columns" in generated.features:
        return
    y = study.runs.groupby("run", sort=False)[name].mean().to_numpy(float)
    ok = np.isfinite(y)
    transform = _transform(generated, name)
    if transform == "log":
        y = np.log(np.where(ok, y, 1.0))
    elif transform == "sqrt":
        y = np.sqrt(np.where(ok, y, 0.0))
    try:
        M = np.column_stack([term_column(t, runs, factors, blocks) for t in rep["terms"]])
    except TermError as exc:
        outcome.fail("fit", "fit", f"'{name}': {exc}")
        return
    printed = np.array([rep["coefficients"][t] for t in rep["terms"]], dtype=float)
    rtol, how = 1e-6, "least squares"
    if study.whole_plot is not None:  # runs sharing a batch: REML and GLS, written out
        plots = study.runs.groupby("run", sort=False)[study.whole_plot].first().to_numpy()
        beta, s2, s2_wp = reml_reference(M[ok], y[ok], plots[ok])
        rtol, how = 1e-5, "REML with generalised least squares"
        wp = rep.get("whole_plots") or {}
        for key, want in (("residual_sd", math.sqrt(s2)), ("sd", math.sqrt(s2_wp))):
            got = wp.get(key)
            if got is None or not _close(got, want, 1e-4, math.sqrt(s2 + s2_wp)):
                outcome.fail("fit", "fit", f"'{name}': whole_plots {key} {got}, REML "
                             f"written out gives {want:.8g}")
    else:
        beta = np.linalg.lstsq(M[ok], y[ok], rcond=None)[0]
    scale = np.max(np.abs(beta)) + np.std(y[ok]) + 1e-12
    if not np.allclose(printed, beta, rtol=rtol, atol=rtol * 1e-2 * scale):
        worst = int(np.argmax(np.abs(printed - beta)))
        outcome.fail("fit", "fit", f"'{name}': coefficient of '{rep['terms'][worst]}' is "
                     f"{printed[worst]:.8g}, {how} on the printed terms gives "
                     f"{beta[worst]:.8g}")


# --------------------------------------------------------------------------
# next


def _D_bracket(values, goals, weights, rel=5.1e-6):
    """D's range when each goal value may be off by ``rel`` of itself (a value
    printed to 6 significant digits)."""
    lo, hi = [], []
    for y, (_, _, g) in zip(values, goals):
        eps = rel * max(abs(y), 1e-300) + 1e-12
        d = d_reference(np.linspace(y - eps, y + eps, 5), g)
        lo.append(d.min())
        hi.append(d.max())
    return (float(D_reference(np.array([lo]), weights)[0]),
            float(D_reference(np.array([hi]), weights)[0]))


def check_next(generated, study, fit, printed: dict, outcome) -> None:
    """Suggestions from ``next --json`` (numbers printed to 6 significant digits)."""
    import tradeoff

    made = study.coded()[study.factor_names].to_numpy(float)
    picked = []
    goals = goals_of(generated, fit)
    weights = [g.get("weight", 1.0) for _, _, g in goals]
    minimum = printed["min_distance"]
    for i, run in enumerate(printed["runs"], start=1):
        where = f"suggestion N{i}"
        table = pd.DataFrame([run["settings"]])
        for p in _region_ok(generated, table, tol=1e-5, rule_tol=1e-6, total_tol=1e-5):
            outcome.fail("region", "next", f"{where}: {p}")
        X = tradeoff.to_coded(study.factors, table)
        for name, value in run["predicted"].items():
            p = float(np.asarray(fit.models[name].predict(X)).ravel()[0])
            spread = float(np.ptp(study.runs[name].dropna())) if name in study.runs else 0.0
            if not _close(value, p, 3e-5, spread):
                outcome.fail("predict", "next", f"{where}: '{name}' predicted {value}, the "
                             f"model predicts {p:.6g} at its settings")
        values = [run["predicted"][n] if k == "response" else float(run["settings"][n])
                  for k, n, _ in goals]
        low, high = _D_bracket(values, goals, weights)
        D = run["desirability"]
        if not low - 1e-6 - 5.1e-6 * D <= D <= high + 1e-6 + 5.1e-6 * D:
            outcome.fail("desirability", "next", f"{where}: D {D} at its predictions "
                         f"{values}, Derringer-Suich gives {low:.6g}..{high:.6g}")
        x = X[0]
        near = np.sqrt(((np.vstack([made] + picked) - x) ** 2).sum(axis=1)).min() \
            if len(made) or picked else np.inf
        # settings sit on each factor's step only where that keeps the distance
        # (README); a blend's components are rounded to 1/1000 of their range, which
        # may bring a run that much nearer
        if near < minimum - 1e-3 * math.sqrt(len(x)):
            outcome.fail("next", "next", f"{where} lies {near:.4g} coded units from a run "
                         f"made or suggested, closer than {minimum}")
        picked.append(x[None, :])


# --------------------------------------------------------------------------
# plan


def check_plan(generated, study, sheet, args, outcome) -> None:
    if not sheet.exists():
        outcome.fail("plan", "plan", "exit 0 but no run sheet written")
        return
    table = pd.read_csv(sheet, keep_default_na=False)
    region = generated.region
    missing = [f.name for f in region.factors if f.name not in table.columns]
    if missing:
        outcome.fail("plan", "plan", f"the run sheet lacks the factor column(s) {missing}")
        return
    for f in region.categorical:
        table[f.name] = table[f.name].astype(str)
    for f in region.numeric + region.components:
        table[f.name] = pd.to_numeric(table[f.name])
    if region.components:
        total = sum(table[c.name] for c in region.components)
        if np.any(np.abs(total - region.total) > 1e-6 * region.total):
            outcome.fail("plan", "plan", f"blends add up to {sorted(set(total))[:3]}, not "
                         f"{region.total}")
        for c in region.components:
            v = table[c.name].to_numpy(float)
            slack = 1.5e-4 * region.total
            if np.any(v < c.low - slack) or np.any(v > c.high + slack):
                outcome.fail("region", "plan", f"'{c.name}' planned at {v.min()}..{v.max()}, "
                             f"outside its bounds {c.low}..{c.high}")
        return
    optimal = "optimal" in args
    if study.whole_plot is not None or any(f.hard_to_change for f in study.factors):
        _check_whole_plot_sheet(study, table, outcome)
    # the sheet rounds each setting to 4 significant digits of its half range (at
    # most 5e-5 coded units off): a run on a rule's edge may cross it by that much
    for p in _region_ok(generated, table, search=optimal, tol=1e-6 if optimal else 1e-9,
                        coded_slack=5e-5):
        if optimal or "rule" not in p:
            outcome.fail("region", "plan", p)


def _check_whole_plot_sheet(study, table, outcome) -> None:
    """A split-plot run sheet: the runs of a whole plot one after the other, and
    every hard-to-change factor at one setting within each whole plot (README)."""
    column = study.whole_plot or "whole_plot"
    if column not in table.columns:
        outcome.fail("plan", "plan", f"the split-plot run sheet has no column '{column}'")
        return
    labels = table[column].astype(str).tolist()
    starts = [lab for i, lab in enumerate(labels) if i == 0 or labels[i - 1] != lab]
    if len(starts) != len(set(starts)):
        outcome.fail("plan", "plan", "the runs of a whole plot are not listed together")
    for f in study.factors:
        if f.hard_to_change and (table.groupby(column)[f.name].nunique() > 1).any():
            outcome.fail("plan", "plan", f"hard-to-change '{f.name}' changes within a "
                         "whole plot of the run sheet")


# --------------------------------------------------------------------------
# confirm


def check_confirm(generated, study, fit, printed: dict, outcome) -> None:
    import tradeoff

    for row in printed["checks"]:
        name = row["response"]
        if name not in fit.models or row["predicted"] is None:
            continue
        table = pd.DataFrame([{f: row[f] for f in study.factor_names}])
        X = tradeoff.to_coded(study.factors, table)
        model = fit.models[name]
        p = float(np.asarray(model.predict(X)).ravel()[0])
        where = f"group {row['group']} '{name}'"
        if not _close(row["predicted"], p, 1e-9):
            outcome.fail("predict", "confirm", f"{where}: predicted {row['predicted']}, the "
                         f"model predicts {p}")
        mean, se, sigma, df = model.predictive(X)
        if row["pi_low"] is None or not np.isfinite(sigma):
            continue
        transform = _transform(generated, name)
        m = row["m"]
        wp = getattr(model, "whole_plots_", None)
        if wp is not None:
            # the group's runs share one new batch: sd^2 + residual_sd^2 / m (README)
            sigma = math.sqrt(wp["sd"] ** 2 + wp["residual_sd"] ** 2 / m)
            df, m = model.mean_noise(m)[1], 1
        _, _, lo, hi = interval_reference(np.asarray(mean).ravel(), np.asarray(se).ravel(),
                                          float(sigma), df, study.confidence, transform,
                                          m=m)
        lo, hi = float(lo[0]), float(hi[0])
        tol = _interval_tol(df)
        if not (_close(row["pi_low"], lo, tol, hi - lo) and _close(row["pi_high"], hi, tol,
                                                                     hi - lo)):
            outcome.fail("confirm", "confirm", f"{where}: interval {row['pi_low']}.."
                         f"{row['pi_high']} for the mean of {row['m']}, the formula gives "
                         f"{lo:.8g}..{hi:.8g}")
        if transform == "none" or row["m"] == 1:
            inside = lo <= row["measured"] <= hi
            if bool(row["inside"]) != inside:
                outcome.fail("confirm", "confirm", f"{where}: measured {row['measured']} "
                             f"marked inside={row['inside']} against {lo:.6g}..{hi:.6g}")
    for v in printed["verdicts"]:
        rows = [r for r in printed["checks"] if r["response"] == v["response"]
                and r["pi_low"] is not None]
        if not rows or v["response"] not in fit.models:
            want = "not checked"
        else:
            want = "confirmed" if all(r["inside"] for r in rows) else "not confirmed"
        if v["verdict"] != want:
            outcome.fail("confirm", "confirm", f"'{v['response']}': verdict "
                         f"'{v['verdict']}', its comparisons say '{want}'")


# --------------------------------------------------------------------------
# what check and optimize say in words


def check_unused(generated, text: str, outcome) -> None:
    for column in generated.unused_columns:
        if not re.search(rf"\b{re.escape(column)}\b", text):
            outcome.fail("unused_columns", "check", f"the data column '{column}' is neither "
                         "a factor, a response nor the run id, and check does not name it")


def check_display(generated, result, text: str, outcome) -> None:
    names = [f.name for f in generated.region.factors
             if f.kind == "categorical" and len(f.levels) > 2]
    for line in text.splitlines():
        words = line.split()
        if len(words) >= 2 and words[0] in names and "coded" in line:
            outcome.fail("display", "optimize", f"a categorical setting prints a coded "
                         f"number: {line.strip()!r}")
            return


def check_unjudged(generated, study, fit, result, outcome) -> None:
    """A factor the runs cannot judge is held at its ``hold`` level (else its first),
    and the result says the choice is not informed; a level at which no run was made
    is never chosen (the README's rule for what the data cannot judge)."""
    terms = " ".join(" ".join(getattr(m, "terms_", []) or []) for m in fit.models.values())
    noted = {n["factor"]: n for n in result.not_informed}
    for name in generated.unjudged:
        if re.search(rf"\b{re.escape(name)}\b", terms):
            continue  # the data judged it after all
        f = next(x for x in generated.region.factors if x.name == name)
        held = f.hold if f.hold is not None else f.levels[0]
        for s in result.solutions:
            if s.settings[name] != held:
                outcome.fail("unjudged", "optimize", f"'{name}' cannot be judged from the "
                             f"data yet {s.label} picks '{s.settings[name]}', not '{held}'")
        if name not in noted or noted[name].get("held_at") != held:
            outcome.fail("unjudged", "optimize", f"'{name}' cannot be judged from the data "
                         f"and optimize does not say it holds it at '{held}' "
                         f"(not_informed: {list(noted.values())})")
    for name, level in generated.empty_levels.items():
        for s in result.solutions:
            if s.settings[name] == level:
                outcome.fail("unjudged", "optimize", f"{s.label} picks '{level}' of "
                             f"'{name}', at which no run was made")
        if name not in noted or level not in noted[name].get("left_out", []):
            outcome.fail("unjudged", "optimize", f"no run was made at '{level}' of "
                         f"'{name}' and optimize does not say it was left out")
