"""The warnings of a search's result: about the whole search (goals left out, poor
models, a goal past the storage's reach) and about each solution's settings (an edge
of the searched region, settings outside the tested ones, a component at its bound).

Split from ``result`` (which assembles the result).
"""
from __future__ import annotations

import numpy as np

from ..cautions import BLEND_CAUTION
from ..study.mixture import is_component
from .mixture import bound_warnings

__all__ = ["fewer_solutions_text"]

_EDGE = 1e-3  # coded distance that counts as "on the edge"


def _general_warnings(study, problem, models, fit) -> list[str]:
    from ..derive.reach import goal_warnings

    out = [BLEND_CAUTION] if getattr(study, "mixture", None) is not None else []
    out += list(goal_warnings(study).values())
    skipped = getattr(fit, "skipped", {}) or {}
    for r in study.responses:
        if r.goal.active and r.name not in models:
            why = skipped.get(r.name, "it has no fitted model")
            out.append(f"response '{r.name}' has a goal but was left out of the search: "
                       f"{why}")
    for kind, name in problem.columns:
        if kind != "response":
            continue
        r2 = getattr(models[name], "pred_r2_", None)
        if r2 is not None and np.isfinite(r2) and r2 < 0.5:
            out.append(f"the model for '{name}' predicts poorly (predicted R2 = {r2:.2f}, "
                       "below 0.5) yet takes part in the search: treat its prediction "
                       "and the balance it drives with caution")
    return out


def _point_warnings(study, problem, x, D) -> list[str]:
    out = []
    runs = study.runs
    out += bound_warnings(study, x)  # components: their own bounds (search/mixture.py)
    for pos, j in enumerate(problem.num):
        f = study.factors[j]
        if is_component(f):
            continue
        value = f.centre + f.half_range * x[j]
        unit = f" {f.unit}" if f.unit else ""
        for side, bound, outward in (("low", problem.lo[pos], -1.0),
                                     ("high", problem.hi[pos], 1.0)):
            if abs(x[j] - bound) > _EDGE:
                continue
            beyond = x.copy()
            beyond[j] += outward * 0.05
            D_beyond = problem.score(problem.values(beyond[None, :]))[0][0]
            edge = f.centre + f.half_range * bound
            tested_edge = (f.low if side == "low" else f.high)
            inside_tests = (edge > f.low + 1e-9) if side == "low" else (edge < f.high - 1e-9)
            if inside_tests:
                how = (f"widen its search range (search = [min, max]) up to the tested "
                       f"{_g(tested_edge)}{unit}")
            else:
                how = "if such settings are possible, extend the range there with new runs"
            if D_beyond > D + 1e-9:
                out.append(f"'{f.name}' sits at the {side} edge of the searched region "
                           f"({_g(edge)}{unit}) and D would still rise beyond it: {how}")
            else:
                out.append(f"'{f.name}' sits at the {side} edge of the searched region "
                           f"({_g(edge)}{unit}), where the models rest on few runs: {how} "
                           "to see whether the balance holds beyond it")
        if runs is not None and f.name in runs:
            tested = runs[f.name].to_numpy(float)
            if value < tested.min() - 1e-9 * f.half_range or \
                    value > tested.max() + 1e-9 * f.half_range:
                out.append(f"'{f.name}' = {_g(value)}{unit} lies outside the tested "
                           f"settings ({_g(tested.min())}..{_g(tested.max())}{unit}): the "
                           "predictions there extrapolate the models")
    return out


def _g(x: float) -> str:
    return f"{x:.4g}"


def fewer_solutions_text(result, asked: int, min_distance: float = 0.25) -> str:
    """Why fewer solutions are listed than ``asked`` ('' when there are enough).

    The alternatives are distinct peaks of D: settings closer than
    ``min_distance`` coded units to a better one belong to the same peak and are
    merged (``optimize``), so a smooth D with one or two peaks gives one or two.
    """
    n = len(result.solutions)
    if n >= asked:
        return ""
    what = "one setting stands" if n == 1 else f"{n} distinct settings stand"
    return (f"{asked} solutions were asked for, and {what} out: every other good "
            f"setting lies within {min_distance:g} coded units of a better one, on the "
            "same peak of D, so listing it would repeat that solution with small changes")


def _not_informed_text(n: dict) -> str:
    """One factor the runs cannot judge, in a sentence."""
    if n["held_at"] is None:
        left = ", ".join(f"'{v}'" for v in n["left_out"])
        return (f"{n['factor']}: {n['why']}, so the data say nothing about {left}: left "
                "out of the search")
    return (f"{n['factor']}: the runs cannot tell its levels apart ({n['why']}), so the "
            f"choice among them is not informed by the data: held at '{n['held_at']}' "
            f"(name another with hold = \"level\" under the factor)")
