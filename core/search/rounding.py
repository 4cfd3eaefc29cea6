"""Recipes a lab can make: the settings found, rounded to each factor's step.

The search ends on settings such as 59.8537 degC or 23.4821 % protein; nobody
weighs or dials those in. Each numeric factor has a step (``step`` in the study
file, else a power of ten from its range, ``Factor.lab_step``), and every
solution is moved to a recipe on those steps before any figure is computed, so
the predictions, desirabilities, D, the chances and the production figures all
belong to the recipe shown.

Which neighbour: for each numeric factor the multiples of its step just below
and just above the setting found (those inside the searched range); among the
combinations of these (all of them up to ``_CORNERS``, else the nearest and
the ones that move one factor to its other neighbour), the one that keeps every
rule and bound with the highest D, then the smallest shortfall, then the
nearest. An end of the searched range within one step is a neighbour too (it
was set before, so it can be set again). A blend's dependent component still
makes up the rest, so a blend on whole steps adds up to the total. When no
combination keeps the rules (a step as wide as the region), or every one
breaks a limit the optimum found keeps (D = 0 where it had D > 0), the setting
stays as found.
"""
from __future__ import annotations

import itertools
import math

import numpy as np

__all__ = ["lab_recipes", "clean_value", "step_decimals"]

_CORNERS = 256  # up to this many neighbouring recipes are scored per solution


def step_decimals(step: float) -> int:
    """Decimals that show every multiple of ``step`` (0.1 -> 1, 0.25 -> 2, 5 -> 0)."""
    for places in range(0, 13):
        if abs(round(step, places) - step) <= 1e-9 * step:
            return places
    return 12


def clean_value(factor, value: float) -> float:
    """``value`` with floating-point dust removed when it sits on the factor's step."""
    step = factor.lab_step
    n = round(value / step)
    if abs(value - n * step) <= 1e-7 * step:
        return round(n * step, step_decimals(step)) + 0.0
    return value


def _neighbours(value: float, step: float, lo: float, hi: float) -> list[float]:
    """The multiples of ``step`` next to ``value`` inside lo..hi, nearest first; an end
    of the range within one step counts too (it was set in the runs, or in the
    study file, so it can be set again)."""
    tol = 1e-9 * step
    below = math.floor(value / step + 1e-9) * step
    above = math.ceil(value / step - 1e-9) * step
    near = [b for b in (lo, hi) if abs(b - value) < step - tol]
    out = sorted({round(v, step_decimals(step) + 3) for v in (below, above)
                  if lo - tol <= v <= hi + tol} | set(near), key=lambda v: abs(v - value))
    return out or [value]


def lab_recipes(study, problem, X: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Coded settings ``X`` (n, k) moved to recipes on every factor's step.

    Returns the recipes (m, k) and, for each, the row of ``X`` it came from:
    rows that round to the same recipe are kept once (the first).
    """
    X = np.atleast_2d(np.asarray(X, dtype=float))
    out, rows = [], []
    for i, x in enumerate(X):
        r = _round_one(study, problem, x)
        if not any(np.allclose(r, o, atol=1e-9) for o in out):
            out.append(r)
            rows.append(i)
    return (np.array(out) if out else X[:0]), np.array(rows, dtype=int)


def _round_one(study, problem, x: np.ndarray) -> np.ndarray:
    choices = []
    for pos, j in enumerate(problem.num):
        f = study.factors[j]
        centre, half = problem.centre[j], problem.half[j]
        lo = centre + half * problem.lo[pos]
        hi = centre + half * problem.hi[pos]
        value = centre + half * x[j]
        coded = [(v - centre) / half for v in _neighbours(value, f.lab_step, lo, hi)]
        choices.append(coded)
    if not choices:
        return x
    combos = _combinations(choices)
    C = np.repeat(x[None, :], len(combos), axis=0)
    C[:, problem.num] = combos
    C = problem.tidy(C)
    ok = problem.feasible(C)
    if not ok.any():
        return x
    C = C[ok]
    Y = problem.values(C)
    D, _ = problem.score(Y)
    S = problem.shortfall(Y)
    dist = ((C - x) ** 2).sum(axis=1)
    best = np.lexsort((dist, S, -D))[0]
    if D[best] <= 0 and problem.score(problem.values(x[None, :]))[0][0] > 0:
        return x  # every neighbour breaks a limit the optimum found keeps
    return C[best]


def _combinations(choices: list[list[float]]) -> np.ndarray:
    """Every combination of the neighbours, or (too many) the nearest and single swaps."""
    count = math.prod(len(c) for c in choices)
    if count <= _CORNERS:
        return np.array(list(itertools.product(*choices)), dtype=float)
    nearest = [c[0] for c in choices]
    rows = [nearest]
    for i, c in enumerate(choices):
        for v in c[1:]:
            rows.append(nearest[:i] + [v] + nearest[i + 1:])
    return np.array(rows, dtype=float)
