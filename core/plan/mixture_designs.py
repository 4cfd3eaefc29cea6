"""Designs for blends: simplex-lattice, simplex-centroid and extreme vertices.

* ``simplex_lattice(q, m)``: every blend whose proportions are 0, 1/m, ..., 1
  (the {q, m} simplex-lattice; Scheffe 1958, Cornell (2002), Experiments with
  Mixtures, 3rd ed., sec. 2.3).
* ``simplex_centroid(q)``: the 2^q - 1 blends with equal shares of 1, 2, ...,
  q components (Scheffe 1963; Cornell (2002), sec. 2.12).
* ``axial_blends``: check blends half-way between the overall centroid and
  each vertex of the region (its extreme vertices and face centroids are
  found in study/mixture_region.py).

Lattice and centroid designs are laid out in L-pseudo-components when some
low is above 0 (they then fill the smaller simplex of the lows).
"""
from __future__ import annotations

import itertools

import numpy as np

from ..errors import PlanError

__all__ = ["simplex_lattice", "simplex_centroid", "axial_blends", "round_to_total",
           "MIXTURE_DESIGNS"]

MIXTURE_DESIGNS = ("lattice", "centroid", "vertices", "optimal")


def simplex_lattice(q: int, m: int) -> np.ndarray:
    """The {q, m} simplex-lattice: (C(q+m-1, m), q) proportions, each i/m, adding to 1."""
    if q < 2 or m < 1:
        raise PlanError(f"a simplex-lattice needs 2 or more components and degree 1 or "
                        f"more, found {q} components and degree {m}")
    rows = [np.array(c, dtype=float) for c in itertools.product(range(m + 1), repeat=q)
            if sum(c) == m]
    # pure blends first, then by the number of components in the blend
    rows.sort(key=lambda r: (np.count_nonzero(r), tuple(-r)))
    return np.array(rows) / m


def simplex_centroid(q: int) -> np.ndarray:
    """The simplex-centroid: (2^q - 1, q) proportions, equal shares of each subset."""
    if q < 2:
        raise PlanError(f"a simplex-centroid needs 2 or more components, found {q}")
    rows = []
    for size in range(1, q + 1):
        for subset in itertools.combinations(range(q), size):
            r = np.zeros(q)
            r[list(subset)] = 1.0 / size
            rows.append(r)
    return np.array(rows)


def axial_blends(V: np.ndarray, centre: np.ndarray) -> np.ndarray:
    """Check blends half-way between the overall centroid and each vertex."""
    return (np.asarray(V, dtype=float) + np.asarray(centre, dtype=float)) / 2.0


def round_to_total(amounts: np.ndarray, total: float, balance: int,
                   decimals: int) -> np.ndarray:
    """Amounts rounded to ``decimals`` places, the ``balance`` component taking the
    rounding so every row adds up exactly to the total."""
    A = np.round(np.asarray(amounts, dtype=float), decimals)
    others = [j for j in range(A.shape[1]) if j != balance]
    A[:, balance] = np.round(total - A[:, others].sum(axis=1), decimals)
    return A
