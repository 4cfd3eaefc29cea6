"""The battery's frontier and steadiness checks: ``frontier --json`` and
``optimize --weights-sensitivity --json`` on every generated study.

Invariants, each against a computation written out here or in oracle_reference.py:

- ``frontier``: the JSON has its documented shape; every point's predictions
  equal the fitted model at its coded settings; every goal's d there is above
  0 (Derringer & Suich 1980, so every other goal stays within its limits) and D
  is their weighted geometric mean (Derringer 1994); no point is dominated by
  another in the two goals' directions (a target counted as the distance from
  it: Pareto dominance, common practice); the D optimum's D equals the best D
  the search found for ``optimize`` (the same search, the same seed);
- ``steadiness``: the block has its shape; the baseline's D is the weighted
  geometric mean of the reference d's at its coded settings; one change per
  weight (halved, doubled) and per limit (down, up, a target kept between its
  limits); each ``move`` is the Euclidean distance of the numeric coded
  settings from the baseline's; binding goals are those with a change moving
  more than ``still`` or to another level.
- exit codes: with a feasible search and two goals with a direction, frontier
  answers (exit 0); otherwise it may refuse in one line (exit 2).
"""
from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd

from oracle_checks import _d_matches
from oracle_reference import D_reference, d_reference

__all__ = ["check_frontier", "check_steadiness", "tradable"]

POINT_KEYS = {"settings", "coded", "predicted", "pi", "d", "D", "chance_all"}


def tradable(goals) -> list:
    return [(k, n, g) for k, n, g in goals if g["goal"] in ("maximize", "minimize", "target")]


def _value(point, kind, name):
    return float(point["predicted"][name] if kind == "response" else point["settings"][name])


def _X(study, coded: dict) -> pd.DataFrame:
    return np.array([[float(coded[f.name]) for f in study.factors]])


def _judge_point(study, fit, goals, weights, point, where, outcome, command, rel=1e-9):
    """Reference d's and D at a point: its printed predictions are checked against
    the model at its coded settings (within ``rel``), then d and D are computed from
    the printed predictions, as the optimize check does: each printed d against
    Derringer-Suich at its prediction, D against the geometric mean of the d's. (From the model's own
    prediction instead, a point a hair inside a limit, 3e-8 from it with a shape of
    3.7, turns a last-digit difference of the prediction into a 1e-5 one of D.)"""
    X = _X(study, point["coded"])
    ds = []
    for kind, name, g in goals:
        if kind == "response":
            p = float(np.asarray(fit.models[name].predict(X)).ravel()[0])
            if not abs(p - point["predicted"][name]) <= rel * (abs(p) + 1):
                outcome.fail("predict", command, f"{where}: '{name}' printed "
                             f"{point['predicted'][name]}, the model predicts {p}")
        y = point["predicted"][name] if kind == "response" else _value(point, kind, name)
        printed = point.get("d", {}).get(name)
        if printed is None:  # a point that prints no d's (the steadiness baseline)
            ds.append(float(d_reference(np.array([y]), g)[0]))
        elif _d_matches(printed, y, g):
            ds.append(printed)
        else:
            outcome.fail("desirability", command, f"{where}: d of '{name}' is {printed} "
                         f"at {y}; Derringer-Suich gives "
                         f"{float(d_reference(np.array([y]), g)[0])}")
            ds.append(float(d_reference(np.array([y]), g)[0]))
    D = float(D_reference(np.array([ds]), weights)[0])
    return ds, D


def check_frontier(generated, study, fit, goals, result, rc, out, outcome, seed) -> None:
    import tradeoff

    weights = [g.get("weight", 1.0) for _, _, g in goals]
    trade = tradable(goals)
    if rc != 0:
        if result is not None and result.feasible and len(trade) >= 2 and \
                any(f.kind != "categorical" for f in generated.region.factors):
            outcome.fail("exit_code", "frontier", f"exit {rc} on a study whose search "
                         "found every limit met and two goals with a direction")
        return
    printed = json.loads(out)
    missing = {"between", "points", "d_optimum", "knee", "exchange"} - set(printed)
    if missing:
        outcome.fail("frontier", "frontier", f"JSON lacks {sorted(missing)}")
        return
    front = tradeoff.frontier(study, printed["between"], points=7, seed=seed, fit=fit)
    mine = front.to_dict()
    for key in ("between", "points", "d_optimum", "knee", "exchange"):
        if mine[key] != printed[key]:
            outcome.fail("api_cli", "frontier", f"'{key}' differs between frontier --json "
                         "and tradeoff.frontier")
    by_name = {n: (k, g) for k, n, g in goals}
    F = []
    for i, p in enumerate(front.points):
        if set(p) < POINT_KEYS:
            outcome.fail("frontier", "frontier", f"point {i} lacks "
                         f"{sorted(POINT_KEYS - set(p))}")
            return
        ds, D = _judge_point(study, fit, goals, weights, p, f"point {i}", outcome, "frontier")
        if min(ds) <= 0:
            bad = [n for (_, n, _), d in zip(goals, ds) if d <= 0]
            outcome.fail("frontier", "frontier", f"point {i}: {bad} outside their limits")
        if not abs(D - p["D"]) <= 1e-7 * (D + 1e-9):
            outcome.fail("overall", "frontier", f"point {i}: D = {p['D']}, the weighted "
                         f"geometric mean of its d's is {D}")
        row = []
        for name in front.between:
            kind, g = by_name[name]
            y = _value(p, kind, name)
            row.append(y if g["goal"] == "maximize" else -y if g["goal"] == "minimize"
                       else -abs(y - g["target"]))
        F.append(row)
    F = np.array(F)
    if len(F):
        tol = 1e-6 * np.ptp(F, axis=0) + 1e-12
        for i in range(len(F)):
            beats = np.all(F >= F[i] - tol, axis=1) & np.any(F > F[i] + tol, axis=1)
            beats[i] = False
            if beats.any():
                outcome.fail("frontier", "frontier", f"point {i} is dominated by point "
                             f"{int(np.flatnonzero(beats)[0])}")
    found = [s.found_desirability for s in result.solutions
             if s.found_desirability is not None] if result is not None else []
    if found:
        best = max(found)
        got = front.d_optimum["D"]
        if not abs(got - best) <= 1e-9 * (best + 1e-9):
            outcome.fail("frontier", "frontier", f"the D optimum's D is {got}, optimize "
                         f"found {best}")


def check_steadiness(generated, study, fit, goals, result, printed, outcome) -> None:
    import tradeoff
    from tradeoff import to_coded

    block = printed.get("sensitivity")
    if block is None:
        outcome.fail("steadiness", "optimize", "--weights-sensitivity printed no block")
        return
    if "note" in block:
        if printed.get("feasible"):
            outcome.fail("steadiness", "optimize", f"not judged on a feasible study: "
                         f"{block['note']}")
        return
    missing = {"baseline", "changes", "binding", "sentence"} - set(block)
    if missing:
        outcome.fail("steadiness", "optimize", f"block lacks {sorted(missing)}")
        return
    steady = tradeoff.sensitivity(study, result=result, fit=fit, seed=result.seed)
    if steady.to_dict() != block:
        outcome.fail("api_cli", "optimize", "the steadiness differs between optimize "
                     "--weights-sensitivity --json and tradeoff.sensitivity")
    weights = [g.get("weight", 1.0) for _, _, g in goals]
    base = steady.baseline
    _, D = _judge_point(study, fit, goals, weights, base, "baseline", outcome, "optimize")
    if not abs(D - base["D"]) <= 1e-7 * (D + 1e-9):
        outcome.fail("overall", "optimize", f"steadiness baseline D = {base['D']}, the "
                     f"reference gives {D}")
    want = 0
    for _, _, g in goals:
        want += 2
        span = g["upper"] - g["lower"]
        for what in ("lower", "upper"):
            for sign in (-1, 1):
                lo = g["lower"] + (sign * 0.1 * span if what == "lower" else 0)
                hi = g["upper"] + (sign * 0.1 * span if what == "upper" else 0)
                if g["goal"] != "target" or lo < g["target"] < hi:
                    want += 1
    changes = steady.changes
    if len(changes) != want:
        outcome.fail("steadiness", "optimize", f"{len(changes)} changes, {want} expected "
                     "(two weights and up to four limits per goal)")
    numeric = [j for j, f in enumerate(study.factors) if not f.is_categorical]
    base_coded = to_coded(study.factors, pd.DataFrame([base["settings"]]))[0]
    binding = set()
    for c in changes.to_dict("records"):
        settings = {f.name: c[f"set:{f.name}"] for f in study.factors}
        now = to_coded(study.factors, pd.DataFrame([settings]))[0]
        coded = math.sqrt(float(((now[numeric] - base_coded[numeric]) ** 2).sum()))
        if not abs(coded - c["move"]) <= 1e-7 + 1e-7 * coded:
            outcome.fail("steadiness", "optimize", f"'{c['words']}': move {c['move']}, "
                         f"its settings are {coded} coded units from the baseline")
        if c["move"] > block["still"] or c["levels_changed"]:
            binding.add(c["goal"])
    if binding != set(steady.binding):
        outcome.fail("steadiness", "optimize", f"binding {list(steady.binding)}, changes "
                     f"that move: {sorted(binding)}")
