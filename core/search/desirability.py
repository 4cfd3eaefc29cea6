"""Desirability: how well a value meets its goal, on a 0..1 scale.

Individual desirabilities follow Derringer and Suich (1980), "Simultaneous
Optimization of Several Response Variables", Journal of Quality Technology
12(4), 214-219. The overall desirability is the weighted geometric mean of
Derringer (1994), "A balancing act: optimizing a product's properties",
Quality Progress 27(6), 51-58.

Everything here is pure and vectorised: any array of values in, an array of
the same shape out. A ``Goal`` (from the study) says what is wanted.
"""
from __future__ import annotations

import numpy as np

from ..study.spec import Goal

__all__ = ["desirability", "combine_desirability", "shortfall", "limits"]


def desirability(values, goal: Goal) -> np.ndarray:
    """Individual desirability of ``values`` under ``goal`` (0 = unacceptable, 1 = ideal).

    Parameters
    ----------
    values : array_like
        Predicted or measured values in natural units, any shape.
    goal : Goal
        ``maximize``: 0 at or below ``lower``, ``((y - lower)/(upper - lower))**shape``
        between, 1 at or above ``upper``. ``minimize``: the mirror image.
        ``target``: ``((y - lower)/(target - lower))**shape_below`` from lower to
        target, ``((upper - y)/(upper - target))**shape_above`` from target to
        upper, 0 outside. ``range``: 1 within lower..upper, 0 outside.
        ``none``: 1 everywhere (the value takes no part).

    Returns
    -------
    numpy.ndarray
        Same shape as ``values``; NaN values give 0.
    """
    y = np.asarray(values, dtype=float)
    kind = goal.kind
    if kind == "none":
        return np.ones_like(y)
    lo, hi = goal.lower, goal.upper
    with np.errstate(invalid="ignore"):
        if kind == "maximize":
            d = np.clip((y - lo) / (hi - lo), 0.0, 1.0) ** goal.shape
        elif kind == "minimize":
            d = np.clip((hi - y) / (hi - lo), 0.0, 1.0) ** goal.shape
        elif kind == "target":
            t = goal.target
            below = np.clip((y - lo) / (t - lo), 0.0, 1.0) ** goal.shape_below
            above = np.clip((hi - y) / (hi - t), 0.0, 1.0) ** goal.shape_above
            d = np.where(y <= t, below, above)
        elif kind == "range":
            d = ((y >= lo) & (y <= hi)).astype(float)
        else:  # the study file check lets only known goals through
            raise ValueError(f"unknown goal kind '{kind}'")
    return np.where(np.isnan(y), 0.0, d)


def combine_desirability(d, weights=None) -> np.ndarray:
    """Overall desirability D: the weighted geometric mean of individual ones.

    ``D = prod(d_i ** w_i) ** (1 / sum(w_i))`` (Derringer 1994). D is 0 as soon
    as any individual desirability is 0.

    Parameters
    ----------
    d : array_like, shape (n, m)
        Individual desirabilities, one column per goal.
    weights : array_like, shape (m,), optional
        Relative importance of each goal (default: all 1).

    Returns
    -------
    numpy.ndarray, shape (n,)
    """
    d = np.atleast_2d(np.asarray(d, dtype=float))
    m = d.shape[1]
    if m == 0:
        return np.ones(d.shape[0])
    w = np.ones(m) if weights is None else np.asarray(weights, dtype=float)
    with np.errstate(divide="ignore"):
        logs = np.log(np.clip(d, 0.0, 1.0))
    total = logs @ (w / w.sum())
    return np.where(np.isfinite(total), np.exp(total), 0.0)


def limits(goal: Goal) -> tuple[float, float]:
    """The acceptable interval of a goal: outside it the desirability is 0.

    maximize: (lower, +inf); minimize: (-inf, upper); target and range:
    (lower, upper); none: (-inf, +inf).
    """
    if goal.kind == "maximize":
        return goal.lower, np.inf
    if goal.kind == "minimize":
        return -np.inf, goal.upper
    if goal.kind in ("target", "range"):
        return goal.lower, goal.upper
    return -np.inf, np.inf


def shortfall(values, goal: Goal) -> np.ndarray:
    """How far ``values`` lie outside the acceptable interval, in goal widths.

    0 inside the acceptable interval (see ``limits``); otherwise the distance
    to the nearest limit divided by ``upper - lower``, so responses measured in
    different units are comparable. Used when no setting makes every
    desirability positive: the search then gets as close as it can.
    """
    y = np.asarray(values, dtype=float)
    if goal.kind == "none":
        return np.zeros_like(y)
    lo, hi = limits(goal)
    width = goal.upper - goal.lower
    gap = np.maximum(np.maximum(lo - y, y - hi), 0.0) / width
    return np.where(np.isnan(y), np.inf, gap)
