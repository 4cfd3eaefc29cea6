"""The fitted equation written out: in natural units, and for a blend in proportions."""
from __future__ import annotations

import math
from typing import Sequence

import numpy as np

from .columns import column_label
from .terms import Term

__all__ = ["fitted_equations", "natural_equation", "amount_equation"]


def fitted_equations(terms: Sequence[Term], coef: np.ndarray, factors,
                     factor_names: list[str], mixture=None, levels=None):
    """(natural, proportion): the equation in natural units (None for a blend, or
    without the Factor objects) and, for a blend (``mixture``, a MixtureInfo),
    the Scheffe equation in proportions of the total (model/scheffe.py)."""
    if mixture is None:
        return natural_equation(terms, coef, factors, factor_names, levels), None
    from .scheffe import proportion_equation

    return None, proportion_equation(terms, coef, factor_names, mixture, levels)


def natural_equation(terms: Sequence[Term], coef: np.ndarray, factors,
                     factor_names: list[str], levels=None) -> dict[str, float] | None:
    """The fitted equation with numeric factors in natural units.

    Categorical factors stay coded: -1 at their first level, +1 at their
    second; a level column of a factor with three or more levels (``levels``,
    as ``tradeoff.model.terms.model_terms`` takes them) stays as it is.
    """
    if factors is None:
        return None
    k = len(factor_names)
    poly: dict[tuple, float] = {}  # (powers, level cells) -> coefficient
    for t, b in zip(terms, coef):
        if t.is_block:
            continue  # the equation is for the average block
        part = {(0,) * k: float(b)}
        levelled = {j for j, _, _ in t.cells}
        for j, pw in enumerate(t.powers):
            if not pw or j in levelled:
                continue
            f = factors[j]
            c, h = (0.0, 1.0) if f.is_categorical else (f.centre, f.half_range)
            new: dict[tuple[int, ...], float] = {}
            for powers, val in part.items():
                for i in range(pw + 1):
                    a = math.comb(pw, i) * (-c) ** (pw - i) / h ** pw
                    if a == 0:
                        continue
                    q = list(powers)
                    q[j] += i
                    new[tuple(q)] = new.get(tuple(q), 0.0) + val * a
            part = new
        for powers, val in part.items():
            q = tuple(1 if j in levelled else v for j, v in enumerate(powers))
            key = (q, tuple(c for c in t.cells if q[c[0]]))
            poly[key] = poly.get(key, 0.0) + val
    order = {(t.powers, t.cells): i for i, t in enumerate(terms) if not t.is_block}
    keys = sorted(poly, key=lambda q: (sum(q[0]), order.get(q, len(order)), q))
    return {column_label(q, list(factor_names), cells, levels): poly[(q, cells)]
            for q, cells in keys}


def amount_equation(proportions: dict[str, float], components: Sequence[str],
                    total: float) -> dict[str, float]:
    """A blend's equation in proportions rewritten for the components' amounts.

    With x_i = a_i / total (a_i the amount in the study's units), a term of
    degree d in the components (x_i: 1, x_i x_j: 2, x_i x_j (x_i - x_j) and
    x_i x_j x_k: 3) takes its coefficient divided by total ** d; process
    parts keep their coded units. ``proportions`` is the equation of
    ``tradeoff.model.scheffe.proportion_equation`` (labels joined by ':', a
    blending contrast written '(a-b)').
    """
    comps = set(components)
    total = float(total)
    out = {}
    for label, value in proportions.items():
        degree = 0
        for part in label.split(":"):
            if part.startswith("(") and part.endswith(")"):
                degree += 1  # the contrast (a_i - a_j) / total
                continue
            name, _, power = part.partition("^")
            if name in comps:
                degree += int(power) if power else 1
        out[label] = float(value) / total ** degree
    return out
