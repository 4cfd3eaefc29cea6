"""Desirability written out from the published formulas, for tests to measure the tool by.

Nothing here imports the tool's own desirability, D or search code, so a fault in
those cannot hide behind a yardstick that shares it.

Individual desirabilities, Derringer & Suich (1980), "Simultaneous Optimization of
Several Response Variables", Journal of Quality Technology 12(4), 214-219,
with L the lower limit, U the upper limit, T the target:

- maximize:  d = 0 for y <= L; ((y - L) / (U - L)) ** s for L < y < U; 1 for y >= U;
- minimize:  d = 1 for y <= L; ((U - y) / (U - L)) ** s for L < y < U; 0 for y >= U;
- target:    d = ((y - L) / (T - L)) ** s for L <= y <= T,
             ((U - y) / (U - T)) ** t for T < y <= U, 0 outside L..U
             (s below the target, t above: two widths T - L and U - T that need
             not be equal);
- range:     d = 1 for L <= y <= U, 0 outside (a target with s = t = 0).

Overall desirability with weights, Derringer (1994), "A balancing act: optimizing
a product's properties", Quality Progress 27(6), 51-58:
D = prod_i d_i ** (w_i / sum_j w_j), so D = 0 as soon as one d_i is 0.

Goals are read from the study file's own tables (``study.spec``: the keys
``goal``, ``lower``, ``upper``, ``target``, ``shape``, ``shape_below``,
``shape_above``, ``weight`` as a user writes them), not from the tool's parsed
goals. A target's ``shape_below`` and ``shape_above`` default to ``shape``, and
``shape`` and ``weight`` to 1 (the study file's documented defaults).
"""
from __future__ import annotations

import numpy as np

__all__ = ["d_maximize", "d_minimize", "d_target", "d_range", "d_of", "overall",
           "goal_tables", "study_d", "study_D"]


def d_maximize(y, low, high, s=1.0) -> np.ndarray:
    """Derringer & Suich (1980), one-sided, larger is better."""
    y = np.asarray(y, dtype=float)
    out = np.zeros_like(y)
    mid = (y > low) & (y < high)
    out[mid] = ((y[mid] - low) / (high - low)) ** s
    out[y >= high] = 1.0
    return out


def d_minimize(y, low, high, s=1.0) -> np.ndarray:
    """Derringer & Suich (1980), one-sided, smaller is better."""
    y = np.asarray(y, dtype=float)
    out = np.zeros_like(y)
    mid = (y > low) & (y < high)
    out[mid] = ((high - y[mid]) / (high - low)) ** s
    out[y <= low] = 1.0
    return out


def d_target(y, low, target, high, s=1.0, t=1.0) -> np.ndarray:
    """Derringer & Suich (1980), two-sided: s on the rising side, t on the falling one."""
    y = np.asarray(y, dtype=float)
    out = np.zeros_like(y)
    rising = (y >= low) & (y <= target)
    falling = (y > target) & (y <= high)
    out[rising] = ((y[rising] - low) / (target - low)) ** s
    out[falling] = ((high - y[falling]) / (high - target)) ** t
    return out


def d_range(y, low, high) -> np.ndarray:
    """1 inside low..high, 0 outside."""
    y = np.asarray(y, dtype=float)
    return ((y >= low) & (y <= high)).astype(float)


def d_of(y, table: dict) -> np.ndarray:
    """The desirability of values ``y`` under a goal as written in a study table.

    A blank (NaN) value gets 0: it cannot be said to meet any goal.
    """
    y = np.asarray(y, dtype=float)
    kind = table.get("goal", "none")
    shape = float(table.get("shape", 1.0))
    if kind == "maximize":
        d = d_maximize(y, table["lower"], table["upper"], shape)
    elif kind == "minimize":
        d = d_minimize(y, table["lower"], table["upper"], shape)
    elif kind == "target":
        d = d_target(y, table["lower"], table["target"], table["upper"],
                     float(table.get("shape_below", shape)),
                     float(table.get("shape_above", shape)))
    elif kind == "range":
        d = d_range(y, table["lower"], table["upper"])
    else:
        d = np.ones_like(y)
    return np.where(np.isnan(y), 0.0, d)


def overall(ds, weights=None) -> np.ndarray:
    """Derringer (1994): the product of d_i ** (w_i / sum w), written as a product."""
    ds = [np.asarray(d, dtype=float) for d in ds]
    w = np.ones(len(ds)) if weights is None else np.asarray(weights, dtype=float)
    total = np.ones(np.broadcast(*ds).shape) if ds else np.ones(1)
    for d, wi in zip(ds, w):
        total = total * d ** (wi / w.sum())
    return total


def goal_tables(study, fit) -> list[tuple[str, str, dict]]:
    """The goals that take part in D, as (kind, name, table) from the study file.

    Responses with a goal and a fitted model, in the study's order, then numeric
    factors (and blend components) with a goal, in factor order.
    """
    models = fit.models if hasattr(fit, "models") else fit
    out = [("response", t["name"], t) for t in study.spec.get("responses", [])
           if t.get("goal", "none") != "none" and t["name"] in models]
    factor_tables = {t["name"]: t for key in ("components", "factors")
                     for t in study.spec.get(key, [])}
    for f in study.factors:
        t = factor_tables.get(f.name, {})
        if "levels" not in t and t.get("goal", "none") != "none":
            out.append(("factor", f.name, t))
    return out


def study_d(study, fit, X) -> tuple[list[str], np.ndarray]:
    """(names, (n, m) individual desirabilities) at coded settings X (n, k).

    A response's value is its model's prediction (natural units); a factor's
    value is its natural setting, centre + half range * coded.
    """
    models = fit.models if hasattr(fit, "models") else fit
    X = np.atleast_2d(np.asarray(X, dtype=float))
    names, cols = [], []
    for kind, name, table in goal_tables(study, fit):
        if kind == "response":
            y = np.asarray(models[name].predict(X), dtype=float).reshape(len(X))
        else:
            j = study.factor_names.index(name)
            f = study.factors[j]
            y = f.centre + f.half_range * X[:, j]
        names.append(name)
        cols.append(d_of(y, table))
    return names, np.column_stack(cols) if cols else np.empty((len(X), 0))


def study_D(study, fit, X) -> np.ndarray:
    """Overall D of a study at coded settings X (n, k), weights from the study file."""
    tables = goal_tables(study, fit)
    _, d = study_d(study, fit, X)
    return overall([d[:, i] for i in range(d.shape[1])],
                   [float(t.get("weight", 1.0)) for _, _, t in tables])
