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
           "level_means", "level_counts", "unjudged_factors", "NO_RUNS"]

# Why a level's mean cannot be estimated when no run was made at it.
NO_RUNS = "no runs at this level"

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
        if len(position) < int(np.prod([n - 1 for n in sizes])):
            continue  # a column was dropped (aliased): the last level is not estimable
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
    their mid-point, categorical ones averaged over their levels, a blend's
    components at the overall centroid of their region).

    Rows: factor, level, predicted, ci_low, ci_high (natural units of the
    response), not_estimable: None, or why the runs cannot give this level's
    mean (the factor cannot be told apart from the blocks or the other terms,
    ``unjudged_factors``, or no run was made at the level); the numbers are
    then None: the model's figure there would be an artefact of the coding.
    """
    from ..study.coding import level_codes

    factors = model.factors
    if factors is None:
        return []
    unjudged = unjudged_factors(model)
    counts = getattr(model, "level_runs_", {}) or {}
    base = np.array([AVERAGE_LEVEL if f.is_categorical and len(f.levels) >= 3 else 0.0
                     for f in factors])
    _blend_centroid(factors, base)
    rows = []
    for j, f in enumerate(factors):
        if not f.is_categorical:
            continue
        X = np.tile(base, (len(f.levels), 1))
        X[:, j] = level_codes(f)
        table = model.intervals(X)
        for level, r in zip(f.levels, table.itertuples()):
            why = unjudged.get(f.name) or (
                NO_RUNS if counts.get(f.name, {}).get(level, 1) == 0 else None)
            rows.append({"factor": f.name, "level": level,
                         "predicted": None if why else r.predicted,
                         "ci_low": None if why else r.ci_low,
                         "ci_high": None if why else r.ci_high, "not_estimable": why})
    return rows


def _blend_centroid(factors, coded: np.ndarray) -> None:
    """Put a blend's components (if any) at the overall centroid of their region,
    in coded units: coded 0 for every component is no blend at all (the
    L-pseudo-component origin), so "in the middle" means the centroid of the
    extreme vertices (common practice for a blend's centre point)."""
    from ..study.mixture import is_component
    from ..study.mixture_region import extreme_vertices

    idx = [j for j, f in enumerate(factors) if is_component(f)]
    if not idx:
        return
    comps = [factors[j] for j in idx]
    vertices = extreme_vertices([c.low for c in comps], [c.high for c in comps],
                                comps[0].total)
    amounts = vertices.mean(axis=0)
    coded[idx] = [(a - c.centre) / c.half_range for a, c in zip(amounts, comps)]


def level_counts(factors, X: np.ndarray) -> dict:
    """Runs at each level of every categorical factor: {factor: {level: count}}."""
    from ..study.coding import level_codes

    out = {}
    for j, f in enumerate(factors or ()):
        if getattr(f, "is_categorical", False):
            out[f.name] = {level: int(np.sum(np.isclose(X[:, j], code)))
                           for level, code in zip(f.levels, level_codes(f))}
    return out


def unjudged_factors(model) -> dict[str, str]:
    """Categorical factors whose levels this model's runs cannot tell apart.

    A factor is unjudged when every column of its main effect was dropped as
    aliased (``model.aliases_``): confounded with the blocks, not varying in
    the runs (aliased with the intercept: runs at one level only), or the same
    as other terms. A factor left out by the model's terms or by reduction is
    not unjudged: the model then says its levels do not matter. Returns
    {factor: why}, the reason in a lab user's words.
    """
    aliases = getattr(model, "aliases_", None) or {}
    out = {}
    for f in model.factors or ():
        if not getattr(f, "is_categorical", False):
            continue
        main = [f.name] if len(f.levels) == 2 else [f"{f.name}[{v}]" for v in f.levels[:-1]]
        if not all(c in aliases for c in main):
            continue
        partners = {p for c in main for p in aliases[c]}
        if any(p.startswith("block[") for p in partners):
            out[f.name] = "confounded with the blocks"
        elif partners <= {"intercept"}:
            out[f.name] = "the runs hold only one of its levels"
        else:
            out[f.name] = "cannot be told apart from " + ", ".join(
                sorted(p for p in partners if p != "intercept"))
    return out
