"""The region of blends a study allows: its extreme vertices and face centroids.

The components' lows and highs cut a polytope out of the simplex of blends
that add up to the total. Its corners are found as McLean and Anderson (1966)
did: put every component but one at a bound, let the last one make up the
total, and keep the blends where it stays within its own bounds. A face of
dimension d is a set of vertices meeting a common set of bounds whose span
has dimension d; its centroid is the mean of its vertices (the edge, face and
overall centroids of the extreme-vertices designs; Cornell (2002),
Experiments with Mixtures, 3rd ed., sec. 6.3).

Used by the plans (plan/), the search on the simplex (search/) and the
traces and ternary maps (maps/).
"""
from __future__ import annotations

import itertools

import numpy as np

from ..errors import StudyError

__all__ = ["extreme_vertices", "face_centroids"]

_TOL = 1e-9


def extreme_vertices(lows, highs, total: float) -> np.ndarray:
    """The extreme vertices (v, q) of {low <= x <= high, sum x = total} (McLean-Anderson).

    Each vertex has q - 1 components at a bound. Duplicates (a vertex reached
    from several sides) are kept once; rows come in a fixed order.
    """
    lows = np.asarray(lows, dtype=float)
    highs = np.asarray(highs, dtype=float)
    q = lows.size
    tol = _TOL * max(1.0, abs(total))
    found = []
    for free in range(q):
        others = [j for j in range(q) if j != free]
        for pick in itertools.product((0, 1), repeat=q - 1):
            x = np.empty(q)
            for j, hi in zip(others, pick):
                x[j] = highs[j] if hi else lows[j]
            x[free] = total - x[others].sum()
            if lows[free] - tol <= x[free] <= highs[free] + tol:
                x[free] = min(max(x[free], lows[free]), highs[free])
                found.append(x)
    if not found:
        raise StudyError("the components' bounds leave no blend that adds up to the total: "
                         "check the lows, highs and total")
    V = np.unique(np.round(np.array(found), 10), axis=0)
    return V[np.lexsort(V.T[::-1])][::-1]


def _active(V: np.ndarray, lows, highs, total) -> np.ndarray:
    """(v, 2q) booleans: which bounds (low of each, then high of each) each vertex meets."""
    tol = _TOL * max(1.0, abs(total))
    return np.hstack([np.abs(V - lows) <= tol, np.abs(V - highs) <= tol])


def face_centroids(V: np.ndarray, lows, highs, total: float, dim: int) -> np.ndarray:
    """Centroids (mean of the vertices) of the region's faces of dimension ``dim``.

    A face is the set of vertices meeting a common set of bounds, whose
    affine span has dimension ``dim`` (1: edges, 2: two-dimensional faces).
    """
    lows = np.asarray(lows, dtype=float)
    highs = np.asarray(highs, dtype=float)
    q = lows.size
    act = _active(V, lows, highs, total)
    centres = []
    seen = set()
    need = q - 1 - dim  # bounds held in common by a face of this dimension
    if need < 0:
        return np.empty((0, q))
    for combo in itertools.combinations(range(2 * q), need):
        on = np.all(act[:, list(combo)], axis=1) if combo else np.ones(len(V), bool)
        idx = tuple(np.flatnonzero(on).tolist())
        if len(idx) < dim + 1 or idx in seen:
            continue
        P = V[list(idx)]
        if np.linalg.matrix_rank(P[1:] - P[0], tol=1e-9 * max(1.0, total)) != dim:
            continue
        seen.add(idx)
        centres.append(P.mean(axis=0))
    if not centres:
        return np.empty((0, q))
    C = np.unique(np.round(np.array(centres), 10), axis=0)
    return C[np.lexsort(C.T[::-1])][::-1]
