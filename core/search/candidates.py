"""Starting points of the search: the Sobol batch and the best distinct starts.

The batch size per level combination, the seeded (digitally shifted) Sobol
points, the greedy choice of the best points that lie apart, and a point well
inside the rules (the Chebyshev centre) for a region cut by linear rules.
"""
from __future__ import annotations

import functools
import itertools
import math

import numpy as np

from ..errors import SearchError
from .problem import _rule_parts

__all__ = ["_batch_size", "_sobol", "_sobol_bits", "_distances", "_starts",
           "_chebyshev_centre", "_candidate_batch"]

_SOBOL_BITS = 30


def _batch_size(p: int, combos: int) -> int:
    """Sobol points per level combination: dense enough to land in every basin.

    With 1 to 3 numeric factors a few hundred points already lie closer together
    than any two peaks of a quadratic D (and the climb and polish finish the
    job); from 4 factors up the batch grows with the dimension.
    """
    if not p:
        return 1
    exponent = 7 + p if p <= 3 else 10 + min(p, 6) // 2
    while combos > 1 and exponent > 8 and (2 ** exponent) * combos > 2 ** 14:
        exponent -= 1
    return 2 ** exponent


@functools.lru_cache(maxsize=16)
def _sobol_bits(p: int, n: int) -> np.ndarray:
    """The first n points of the p-dimensional Sobol sequence as 30-bit integers.

    A fixed table (it does not depend on the study or the seed), built once.
    """
    from scipy.stats import qmc

    points = qmc.Sobol(d=p, scramble=False, bits=_SOBOL_BITS).random_base2(
        int(round(math.log2(n))))
    bits = np.round(points * 2.0 ** _SOBOL_BITS).astype(np.uint64)
    bits.flags.writeable = False
    return bits


def _sobol(p: int, n: int, rng) -> np.ndarray:
    """n Sobol points in [0, 1)^p, randomised by a seeded digital shift.

    XOR-ing every coordinate with one random 30-bit number keeps the points'
    even spread (a digital shift maps a Sobol net onto a net) at the cost of a
    single table look-up, where a fresh scramble costs more than the rest of a
    small search.
    """
    shift = rng.integers(0, 2 ** _SOBOL_BITS, size=p, dtype=np.uint64)
    return (_sobol_bits(p, n) ^ shift) / 2.0 ** _SOBOL_BITS


def _distances(X) -> np.ndarray:
    """(n, n) Euclidean distances between the rows of a small X (n, k)."""
    return np.sqrt(((X[:, None, :] - X[None, :, :]) ** 2).sum(axis=2))


def _starts(X, score, n_starts, radius, higher_better=True):
    """Indices of the best points that lie apart (greedy, wide spacing first).

    A first pass keeps points at least ``radius`` apart, so different basins
    get a start; a second pass fills up with points a third as far apart.
    """
    order = np.argsort(-score if higher_better else score, kind="stable")[:4000]
    Xo = X[order]
    chosen = []
    # squared distance to the nearest chosen point, from |x|^2 - 2 x.c + |c|^2
    sq = np.einsum("ij,ij->i", Xo, Xo)
    gap = np.full(len(order), np.inf)
    for spacing in (radius, radius / 3):
        while len(chosen) < n_starts:
            free = gap >= spacing ** 2
            c = int(free.argmax())  # the best remaining point far enough from the chosen
            if not free[c]:
                break
            chosen.append(c)
            np.minimum(gap, sq - 2 * (Xo @ Xo[c]) + sq[c], out=gap)
            gap[c] = 0.0  # (rounding must not free the chosen point itself)
    return [int(order[c]) for c in chosen]


def _chebyshev_centre(problem, cat_values):
    """A point well inside the box and the rules (None when the region is empty)."""
    from scipy.optimize import linprog

    A_num, b_eff = _rule_parts(problem, cat_values)
    p = len(problem.num)
    norms = np.linalg.norm(A_num, axis=1)
    # maximise r subject to A z + r |a| <= b, lo + r <= z <= hi - r
    A_ub = np.vstack([np.hstack([A_num, norms[:, None]]),
                      np.hstack([-np.eye(p), np.ones((p, 1))]),
                      np.hstack([np.eye(p), np.ones((p, 1))])])
    b_ub = np.concatenate([b_eff, -problem.lo, problem.hi])
    cost = np.zeros(p + 1)
    cost[-1] = -1.0
    res = linprog(cost, A_ub=A_ub, b_ub=b_ub, bounds=[(None, None)] * p + [(0, None)],
                  method="highs")
    if res.status != 0:
        return None
    return res.x[:p]


def _candidate_batch(study, problem, combos, rng) -> np.ndarray:
    """The space-filling batch (n, k): Sobol points, corners and, under rules, a
    point well inside them, for every level combination; only feasible points."""
    p = len(problem.num)
    if p:
        n = _batch_size(p, len(combos))
        sob = _sobol(p, n, rng)
        # Optima of D often sit on faces, edges or corners of the region, which a
        # uniform batch in several dimensions barely reaches: half the batch is
        # stretched past the region and clipped back onto its boundary.
        sob[n // 2:] = np.clip(0.5 + (sob[n // 2:] - 0.5) * 1.4, 0.0, 1.0)
        Z = problem.lo + sob * (problem.hi - problem.lo)
        if getattr(problem, "region", None) is not None:  # a blend: on the simplex instead
            Z = problem.region.batch(sob, problem.num, problem.lo, problem.hi, rng)
        elif p <= 10:
            corners = np.array(list(itertools.product([0.0, 1.0], repeat=p)))
            Z = np.vstack([Z, problem.lo + corners * (problem.hi - problem.lo)])
    else:
        Z = np.zeros((1, 0))
    blocks = []
    for combo in combos:
        Zc = Z
        if len(problem.b):
            centre = _chebyshev_centre(problem, combo)
            if centre is None:
                continue
            Zc = np.vstack([Z, centre])
        blocks.append(problem.full(Zc, combo))
    if not blocks:
        rules = "; ".join(f"'{c['rule']}'" for c in study.constraints)
        raise SearchError(f"no setting inside the search ranges meets every rule ({rules}): "
                          "relax a rule or widen a factor's search range")
    X = np.vstack(blocks)
    if len(problem.b):
        X = X[problem.feasible(X)]
    return X
