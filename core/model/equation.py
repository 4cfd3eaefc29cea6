"""The fitted equation written out: in natural units, and for a blend in proportions."""
from __future__ import annotations

import math
from typing import Sequence

import numpy as np

from .terms import Term, term_label

__all__ = ["fitted_equations", "natural_equation"]


def fitted_equations(terms: Sequence[Term], coef: np.ndarray, factors,
                     factor_names: list[str], mixture=None):
    """(natural, proportion): the equation in natural units (None for a blend, or
    without the Factor objects) and, for a blend (``mixture``, a MixtureInfo),
    the Scheffe equation in proportions of the total (model/scheffe.py)."""
    if mixture is None:
        return natural_equation(terms, coef, factors, factor_names), None
    from .scheffe import proportion_equation

    return None, proportion_equation(terms, coef, factor_names, mixture)


def natural_equation(terms: Sequence[Term], coef: np.ndarray, factors,
                     factor_names: list[str]) -> dict[str, float] | None:
    """The fitted equation with numeric factors in natural units.

    Categorical factors stay coded: -1 at their first level, +1 at their second.
    """
    if factors is None:
        return None
    k = len(factor_names)
    poly: dict[tuple[int, ...], float] = {}
    for t, b in zip(terms, coef):
        if t.is_block:
            continue  # the equation is for the average block
        part = {(0,) * k: float(b)}
        for j, pw in enumerate(t.powers):
            if not pw:
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
            poly[powers] = poly.get(powers, 0.0) + val
    order = {t.powers: i for i, t in enumerate(terms) if not t.is_block}
    keys = sorted(poly, key=lambda q: (sum(q), order.get(q, len(order)), q))
    return {term_label(q, list(factor_names)): poly[q] for q in keys}
