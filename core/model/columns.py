"""The columns of a categorical factor with three or more levels.

Such a factor is sum-to-zero (effect) coded: one column per level but the
last, +1 at that level, -1 at the last level and 0 elsewhere, so each
coefficient is that level's deviation from the average over levels. A term
that contains the factor (``flour``, ``sugar:flour``, ``flour:film``)
becomes one column per level combination (``flour[oat]``,
``sugar:flour[oat]``, ``flour[oat]:film[pe]``), each carrying the whole
term's label as its ``group`` (see ``tradeoff.model.terms.Term``). In the
coded settings such a factor holds its level's position 0, 1, 2, ...
"""
from __future__ import annotations

import dataclasses
import itertools
from typing import Sequence

import numpy as np

__all__ = ["column_key", "column_label", "expand_levels", "level_column", "level_indicator",
           "level_term"]


def column_key(t) -> tuple:
    """What makes a model column the column it is, whatever its label.

    The powers alone do not: every level column of a factor with three or
    more levels shares its term's powers, and so do a cubic blending term
    ``a:b:(a-b)`` and ``a^2:b``-like keys. Two columns with equal keys are the
    same function of the coded settings.
    """
    return (type(t).__name__, tuple(t.powers), tuple(t.cells),
            getattr(t, "first", None), getattr(t, "second", None),
            getattr(t, "level", None))


def column_label(powers: Sequence[int], names: Sequence[str], cells=(),
                 levels: Sequence | None = None) -> str:
    """The label of one column (``intercept``, ``a``, ``a:b``, ``a^2``), with
    ``name[level]`` for the factors listed in ``cells`` as ``(factor, level
    index, n_levels)``; ``levels`` gives each such factor's level names."""
    if not any(powers):
        return "intercept"
    at = {j: l for j, l, _ in cells}
    parts = []
    for j, p in enumerate(powers):
        if not p:
            continue
        if j in at:
            parts.append(f"{names[j]}[{levels[j][at[j]]}]")
        else:
            parts.append(names[j] if p == 1 else f"{names[j]}^{p}")
    return ":".join(parts)


def expand_levels(terms: list, names: Sequence[str], levels) -> list:
    """Each term with a factor of three or more levels -> its sum-to-zero columns.

    ``levels``: per factor, its level names when it has three or more (else
    None). A column that is one level's already is kept as it is.
    """
    if levels is None or not any(v is not None for v in levels):
        return terms
    out = []
    for t in terms:
        multi = [j for j in t.factors if levels[j] is not None]
        if not multi or t.cells:
            out.append(t)
            continue
        for combo in itertools.product(*[range(len(levels[j]) - 1) for j in multi]):
            cells = tuple((j, l, len(levels[j])) for j, l in zip(multi, combo))
            out.append(level_term(t, cells, names, levels))
    return out


def level_term(t, cells, names: Sequence[str], levels):
    """The column of term ``t`` at the levels ``cells`` (same class as ``t``)."""
    if t.custom:  # a label that is not the powers' (a:b:(a-b):film)
        at = {names[j]: f"{names[j]}[{levels[j][l]}]" for j, l, _ in cells}
        label = ":".join(at.get(part, part) for part in t.label.split(":"))
    else:
        label = column_label(t.powers, names, cells, levels)
    return dataclasses.replace(t, label=label, cells=tuple(cells), group=t.label)


def level_column(X: np.ndarray, t, skip=()) -> np.ndarray:
    """One sum-to-zero column: +1 at the term's level, -1 at the last level, 0
    elsewhere, for each factor of ``t.cells``; times the other factors' powers
    (those in ``skip`` left out: a caller that multiplies them in itself)."""
    col = level_indicator(X, t.cells)
    at = {j for j, _, _ in t.cells}
    for j, p in enumerate(t.powers):
        if p and j not in skip and j not in at:
            col = col * X[:, j] ** p
    return col


def level_indicator(X: np.ndarray, cells) -> np.ndarray:
    """The product over ``cells`` ``(factor, level, n_levels)`` of each factor's
    sum-to-zero indicator at the points X: +1 at the level, -1 at the last, else 0."""
    col = np.ones(X.shape[0])
    for j, level, n in cells:
        code = np.rint(X[:, j])
        col = col * ((code == level).astype(float) - (code == n - 1))
    return col
