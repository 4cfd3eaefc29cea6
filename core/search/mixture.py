"""The search on the constrained simplex: what the best-settings search needs for blends.

The components of a blend are not free: they add up to the total. In coded
units (L-pseudo-components, study/mixture.py) every blend has
``sum z = 1`` and ``0 <= z_i <= hi_i``. The search keeps its own machinery
(space-filling batch, climb, SLSQP polish, merging) and works in q - 1 free
coordinates: one component, the one with the widest range, is *dependent*
and always makes up the rest (``complete``). Its own bounds become two linear
rules on the others, so the climb and the polish keep every blend within every
bound exactly as they keep a study's other rules.

The space-filling batch is drawn on the simplex itself (uniform spacings of
sorted Sobol coordinates, kept where every high is met), plus blends near the
region's boundary (mixtures of its extreme vertices with small Dirichlet
weights), its extreme vertices, edge centroids and overall centroid: the
corners and faces where optima of D so often lie.
"""
from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np

from ..study.mixture import components_of, is_component

__all__ = ["SimplexRegion", "simplex_region", "bound_warnings"]


@dataclass
class SimplexRegion:
    """Where the components sit among the study's factors, in coded units."""

    comp: list            # column of each component
    dep: int              # the dependent component's column
    lo: np.ndarray        # (q,) coded lows of the components (0 after tightening)
    hi: np.ndarray        # (q,) coded highs
    vertices: np.ndarray  # (v, q) coded extreme vertices
    edges: np.ndarray     # (e, q) coded edge centroids
    centre: np.ndarray    # (q,) coded overall centroid

    @property
    def others(self) -> list:
        return [j for j in self.comp if j != self.dep]

    def complete(self, X: np.ndarray) -> np.ndarray:
        """X (n, k) with the dependent component making up the rest (a copy)."""
        X = np.array(X, dtype=float, copy=True)
        X[:, self.dep] = 1.0 - X[:, self.others].sum(axis=1)
        return X

    def rules(self, k: int) -> tuple[np.ndarray, np.ndarray]:
        """The dependent component's bounds as rows ``A x <= b`` over the k columns."""
        pos = self.comp.index(self.dep)
        A = np.zeros((2, k))
        A[0, self.dep], A[1, self.dep] = 1.0, -1.0
        return A, np.array([self.hi[pos], -self.lo[pos]])

    def substitute(self, A: np.ndarray, b: np.ndarray, num: list) -> tuple[np.ndarray, np.ndarray]:
        """Rules over the k columns -> over the search's numeric columns ``num``,
        the dependent column replaced by 1 - (the other components)."""
        A_num = A[:, num].copy()
        a_dep = A[:, self.dep]
        for pos, j in enumerate(num):
            if j in self.comp:
                A_num[:, pos] -= a_dep
        return A_num, b - a_dep

    def batch(self, sob: np.ndarray, num: list, lo: np.ndarray, hi: np.ndarray,
              rng) -> np.ndarray:
        """Candidates in the search's numeric columns from Sobol points ``sob`` (n, p).

        The component columns of ``sob`` become blends spread evenly over the
        simplex (uniform spacings), half of them replaced by blends near the
        boundary (vertex mixtures with small Dirichlet weights); process
        columns keep their Sobol coordinates over their ranges. The extreme
        vertices, edge centroids and the centroid follow, each with the
        process factors at every corner of their ranges (up to 10 of them).
        """
        n = len(sob)
        q = len(self.comp)
        cpos = [pos for pos, j in enumerate(num) if j in self.comp]
        ppos = [pos for pos, j in enumerate(num) if j not in self.comp]
        Z = lo + sob * (hi - lo)
        # uniform spacings of q - 1 sorted coordinates: a uniform point of the simplex
        u = np.sort(sob[:, cpos], axis=1)
        gaps = np.diff(np.hstack([np.zeros((n, 1)), u, np.ones((n, 1))]), axis=1)
        blends = gaps * (1.0 - self.lo.sum()) + self.lo
        half = n // 2
        w = rng.dirichlet(np.full(len(self.vertices), 0.3), n - half)
        blends[half:] = w @ self.vertices
        fixed = np.vstack([self.vertices, self.edges, self.centre[None, :]])
        if ppos and len(ppos) <= 10:
            corners = np.array(list(itertools.product([0.0, 1.0], repeat=len(ppos))))
            P = lo[ppos] + corners * (hi[ppos] - lo[ppos])
        elif ppos:
            P = ((lo + hi) / 2)[ppos][None, :]
        else:
            P = np.zeros((1, 0))
        fixed_rows = np.repeat(fixed, len(P), axis=0)
        P_rows = np.tile(P, (len(fixed), 1))
        Zf = np.empty((len(fixed_rows), len(num)))
        Zf[:, ppos] = P_rows
        blends = np.vstack([blends, fixed_rows])
        Z = np.vstack([Z, Zf])
        keep = np.all(blends <= self.hi + 1e-12, axis=1) & np.all(blends >= self.lo - 1e-12,
                                                                   axis=1)
        order = [self.comp.index(num[pos]) for pos in cpos]
        Z[:, cpos] = blends[:, order]
        return Z[keep]


def simplex_region(study) -> SimplexRegion | None:
    """The study's blend region in coded units, or None for a study without components."""
    comps = components_of(study)
    if not comps:
        return None
    from ..study.mixture_region import extreme_vertices, face_centroids

    cols = [j for j, f in enumerate(study.factors) if is_component(f)]
    lo = np.array([(c.low - c.centre) / c.half_range for c in comps])
    hi = np.array([(c.high - c.centre) / c.half_range for c in comps])
    V = extreme_vertices(lo, hi, 1.0)
    E = face_centroids(V, lo, hi, 1.0, 1)
    dep = cols[int(np.argmax(hi - lo))]
    return SimplexRegion(comp=cols, dep=dep, lo=lo, hi=hi, vertices=V, edges=E,
                         centre=V.mean(axis=0))


def bound_warnings(study, x: np.ndarray) -> list[str]:
    """A note for each component of the recommended blend that sits on a bound."""
    out = []
    runs = study.runs
    for j, f in enumerate(study.factors):
        if not is_component(f):
            continue
        amount = f.centre + f.half_range * x[j]
        unit = f" {f.unit}" if f.unit else ""
        tol = 1e-4 * f.total
        for side, bound in (("low", f.low), ("high", f.high)):
            if abs(amount - bound) <= tol:
                out.append(f"component '{f.name}' sits at its {side} bound ({bound:.4g}"
                           f"{unit}): the recommendation is held there by the bound; if a "
                           f"{'lower' if side == 'low' else 'higher'} amount is possible, "
                           "blends beyond it are worth a trial")
        if runs is not None and f.name in runs:
            tested = runs[f.name].to_numpy(float)
            if amount < tested.min() - tol or amount > tested.max() + tol:
                out.append(f"component '{f.name}' = {amount:.4g}{unit} lies outside the "
                           f"tested amounts ({tested.min():.4g}..{tested.max():.4g}{unit}): "
                           "the predictions there extrapolate the models")
    return out
