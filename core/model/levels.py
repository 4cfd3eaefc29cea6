"""Whole-term results of a fitted model: F tests of terms with several columns
(a categorical factor of three or more levels and its interactions), the
derived coefficients of last levels, and each level's predicted mean.

A term such as ``flour`` (three levels) or ``sugar:flour`` has one column per
level but the last (sum-to-zero coding, see ``tradeoff.model.terms``). Its
test is the partial F test of all its columns at once,

    F = b_g' C_gg^-1 b_g / (df_g s^2),   C = (X'X)^-1,

the extra sum of squares of the term given every other term in the model
(type III with sum-to-zero coding; statsmodels ``anova_lm(typ=3)`` gives the
same). A term with one column gets the square of its t statistic.
"""
from __future__ import annotations

import itertools

import numpy as np
from scipy import special

__all__ = ["AVERAGE_LEVEL", "factor_levels", "term_tests", "derived_coefficients",
           "level_means"]

# Coded value of a factor of three or more levels that matches none of them:
# every one of its columns is 0 there, which is the average over its levels.
AVERAGE_LEVEL = -1.0


def factor_levels(factors) -> list | None:
    """Per factor, its level names when it is categorical with three or more
    levels, else None; None when no factor is (or ``factors`` is None)."""
    if factors is None:
        return None
    out = [tuple(f.levels) if getattr(f, "levels", None) is not None and len(f.levels) >= 3
           else None for f in factors]
    return out if any(v is not None for v in out) else None


def term_tests(terms, coef: np.ndarray, Rinv: np.ndarray, sse: float, df: int) -> dict:
    """One row per whole term (blocks and intercept left out), in model order.

    Returns {group label: {"ss", "df", "ms", "f", "p", "columns"}}; f and p are
    NaN when no degrees of freedom are left for error.
    """
    groups: dict[str, list[int]] = {}
    for i, t in enumerate(terms):
        if t.is_intercept or t.is_block:
            continue
        groups.setdefault(t.group, []).append(i)
    s2 = sse / df if df > 0 else np.nan
    rows = {}
    for label, idx in groups.items():
        R = Rinv[idx]  # rows of Rinv: C_gg = R R'
        C = R @ R.T
        b = coef[idx]
        ss = float(b @ np.linalg.solve(C, b))
        k = len(idx)
        f = ss / k / s2 if df > 0 and s2 > 0 else np.nan
        p = float(special.fdtrc(k, df, f)) if np.isfinite(f) else np.nan
        rows[label] = {"ss": ss, "df": k, "ms": ss / k, "f": f, "p": p,
                       "columns": [terms[i].label for i in idx]}
    return rows


def derived_coefficients(terms, coef: np.ndarray, Rinv: np.ndarray, sigma: float,
                         df: int, names, levels) -> list[dict]:
    """The coefficients not in the model's columns: every level combination of a
    term that involves a last level, as minus the sum of the others.

    Each is a contrast a'b of the fitted coefficients, with standard error
    sigma * |a' Rinv| and a two-sided t test. Rows: term (label, e.g.
    ``flour[spelt]``), group, estimate, std_error, t, p.
    """
    from .columns import column_label

    by_group: dict[str, list[int]] = {}
    for i, t in enumerate(terms):
        if t.cells:
            by_group.setdefault(t.group, []).append(i)
    rows = []
    for label, idx in by_group.items():
        first = terms[idx[0]]
        factors = [j for j, _, _ in first.cells]
        sizes = [n for _, _, n in first.cells]
        position = {tuple(l for _, l, _ in terms[i].cells): i for i in idx}
        for combo in itertools.product(*[range(n) for n in sizes]):
            if all(l < n - 1 for l, n in zip(combo, sizes)):
                continue  # a column of the model itself
            a = np.zeros(len(coef))
            # sum-to-zero: level l < n-1 is its own column; the last is -(sum of all)
            choices = [[(l, 1.0)] if l < n - 1 else [(m, -1.0) for m in range(n - 1)]
                       for l, n in zip(combo, sizes)]
            for pick in itertools.product(*choices):
                key = tuple(l for l, _ in pick)
                a[position[key]] += float(np.prod([s for _, s in pick]))
            estimate = float(a @ coef)
            se = float(sigma * np.linalg.norm(a @ Rinv)) if df > 0 else np.nan
            t = estimate / se if se and np.isfinite(se) and se > 0 else np.nan
            p = float(2 * special.stdtr(df, -abs(t))) if np.isfinite(t) else np.nan
            cells = tuple((j, l, n) for j, l, n in zip(factors, combo, sizes))
            rows.append({"term": column_label(first.powers, names, cells, levels),
                         "group": label, "estimate": estimate, "std_error": se,
                         "t": t, "p": p})
    return rows


def level_means(model) -> list[dict]:
    """Each level's predicted mean with its confidence interval, for every
    categorical factor, the other factors at their centre (numeric factors at
    their mid-point, categorical ones averaged over their levels).

    Rows: factor, level, predicted, ci_low, ci_high (natural units of the response).
    """
    from ..study.coding import level_codes

    factors = model.factors
    if factors is None:
        return []
    base = np.array([AVERAGE_LEVEL if f.is_categorical and len(f.levels) >= 3 else 0.0
                     for f in factors])
    rows = []
    for j, f in enumerate(factors):
        if not f.is_categorical:
            continue
        X = np.tile(base, (len(f.levels), 1))
        X[:, j] = level_codes(f)
        table = model.intervals(X)
        for level, r in zip(f.levels, table.itertuples()):
            rows.append({"factor": f.name, "level": level, "predicted": r.predicted,
                         "ci_low": r.ci_low, "ci_high": r.ci_high})
    return rows
