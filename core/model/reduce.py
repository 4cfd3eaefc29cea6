"""Backward elimination of a response model to a smaller hierarchical one.

Whole terms leave together: a categorical factor with three or more levels
(and each of its interactions) is one term of several columns, tested by one
partial F test (``tradeoff.model.levels.term_tests``); a term with one column
is tested by its t test, which is the same test. A term is only a candidate
while no larger term in the model contains it (hierarchy), and pinned terms
stay. In a saturated model Lenth's margin of error decides instead.
"""
from __future__ import annotations

import numpy as np

from .lenth import lenth
from .levels import term_tests
from .notes import effect_index
from .solve import LeastSquares
from .terms import hierarchy_closure

__all__ = ["backward_eliminate"]


def backward_eliminate(terms, M: np.ndarray, z: np.ndarray, pinned: set, *, alpha: float,
                       confidence: float, qr=None, effect_index=effect_index,
                       solve=LeastSquares):
    """Drop the least significant removable term while its p-value exceeds ``alpha``.

    ``effect_index`` gives the positions of the terms Lenth's method judges (a
    model may pass its own: a blend's blending terms are not effects).
    ``solve(M, z, qr)`` fits each candidate model (a whole-plot model passes
    its generalised fit, whose ``term_tests`` carry their own denominator df).
    Returns (terms, M, log) with log: dropped term label -> why.
    """
    log: dict[str, str] = {}
    sol = solve(M, z, qr)
    if sol.df == 0:
        eff_idx = effect_index(terms)
        if len(eff_idx) < 3:
            return terms, M, log
        effects = 2 * sol.coef[eff_idx]
        res = lenth(effects, level=confidence)
        active = [terms[i] for i, e in zip(eff_idx, effects) if abs(e) > res.me]
        # squares and level columns are not judged by Lenth: they stay
        active += [t for t in terms if t.is_square or t.cells]
        keep = hierarchy_closure(active, terms) | pinned
        kept_idx = [i for i, t in enumerate(terms) if t.label in keep]
        for i, e in zip(eff_idx, effects):
            if terms[i].label not in keep:
                log[terms[i].label] = f"|effect| {abs(e):.4g} below Lenth ME {res.me:.4g}"
        return [terms[i] for i in kept_idx], M[:, kept_idx], log
    idx = list(range(len(terms)))
    while True:
        current = [terms[i] for i in idx]
        groups = []  # removable whole terms, in model order
        for t in current:
            if t.group in groups or t.is_intercept or t.is_block:
                continue
            members = [u for u in current if u.group == t.group]
            if any(u.label in pinned for u in members):
                continue
            if any(u.contains(m) for u in current for m in members):
                continue
            groups.append(t.group)
        if not groups or sol.p is None:
            break
        tests = (sol.term_tests(current) if hasattr(sol, "term_tests") else
                 term_tests(current, sol.coef, sol.Rinv, sol.sse, sol.df))
        for j, t in enumerate(current):  # one column: its t test's own p-value
            if t.group in tests and tests[t.group]["df"] == 1:
                tests[t.group]["p"] = float(sol.p[j])
        # Terms of an orthogonal design often tie exactly; rounding away the last
        # digits lets the rule (the later term goes first) break the tie, not
        # floating-point noise that changes with the QR route or the BLAS.
        ranked = {g: round(float(np.nan_to_num(tests[g]["p"], nan=1.0)), 10)
                  for g in groups}
        worst = max(groups, key=lambda g: (ranked[g], groups.index(g)))
        pw = float(tests[worst]["p"])
        if not pw > alpha:
            break
        log[worst] = f"p = {pw:.3g}"
        idx = [i for i in idx if terms[i].group != worst]
        sol = solve(M[:, idx], z, None)
    return [terms[i] for i in idx], M[:, idx], log
