"""Optimal designs for any region by coordinate exchange.

``coordinate_exchange`` picks ``n`` runs in a :class:`~tradeoff.plan.region.Region`
that make a model's coefficients as precise as possible: D (the smallest
joint confidence region, largest det X'X) or I (the smallest prediction
variance averaged over the region). It follows Meyer & Nachtsheim (1995),
"The coordinate-exchange algorithm for constructing exact optimal experimental
designs", Technometrics 37(1): from several random starting designs, each run's
coordinates are changed one at a time to the value that improves the
criterion most, until a whole pass over the runs improves nothing.

How this implementation works:

- A numeric coordinate is tried at a grid of values spanning the stretch of
  its range the rules allow with the run's other coordinates held (closed form
  for linear rules, so points on a rule's boundary are reached exactly), then
  on a finer grid around its current value; a categorical coordinate at each
  of its levels.
- Every candidate change of one run (all its coordinates, all their values)
  is scored in one batch by the rank-one update formulas for the determinant
  and the inverse (Fedorov's delta for D; two Sherman-Morrison steps for I),
  so one model-matrix call serves a whole run.
- Runs given as ``fixed`` (measured runs kept, optimal augmentation) enter
  the information matrix but never move.

Reuse on other regions
----------------------
Everything about the model goes through ``matrix``, a function from coded
points (m, k) to model rows (m, p); everything about the region through the
``Region``: box bounds, categorical levels, linear rules ``A x <= b``, an
optional ``accept`` function for rules that are not linear and an optional
``sampler`` for the random starts and the I-criterion's average. A
constrained simplex (mixture components that sum to one, with lower and upper
bounds and linear rules among them) fits by giving the builder the q - 1
independent proportions as coordinates, with ``matrix`` completing the last
one (x_q = 1 - sum of the others) before building the mixture model's rows,
and the bounds of x_q written as two linear rules on the others.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from ..errors import PlanError
from .region import Region

__all__ = ["ExchangeResult", "coordinate_exchange", "region_moments", "CRITERIA"]

CRITERIA = ("d", "i")
_IMPROVE = 1e-6  # relative gain below which a change is not worth making
_SETTLE = 1e-3  # relative gain of a whole pass below which a phase ends
_RIDGE = 1e-8  # added to a singular start's information matrix until it fills in


@dataclass(frozen=True, eq=False)
class ExchangeResult:
    """The best design found.

    Attributes
    ----------
    coded : (n, k) the new runs (the fixed runs are not repeated here).
    criterion : ``d`` or ``i``.
    value : log det(X'X) for D (larger is better); trace(W (X'X)^-1) for I
        (smaller is better); X is the model matrix of fixed and new runs.
    start_values : the value each random start ended at (how often the best recurs).
    moments : the region's moment matrix W (I criterion), else None.
    """

    coded: np.ndarray
    criterion: str
    value: float
    start_values: tuple
    moments: np.ndarray | None = None


def region_moments(matrix: Callable, region: Region, *, points: int = 4096,
                   seed: int = 0) -> np.ndarray:
    """W = the average of f(x) f(x)' over the region (uniform), by sampling.

    The I criterion is trace(W (X'X)^-1): the prediction variance averaged
    over the region, here the constrained region itself.
    """
    rng = np.random.default_rng([int(seed), 7])
    F = np.asarray(matrix(region.sample(points, rng)), dtype=float)
    return F.T @ F / len(F)


def coordinate_exchange(matrix: Callable, region: Region, n_runs: int, *,
                        criterion: str = "d", fixed: np.ndarray | None = None,
                        starts: int = 6, seed: int = 0, grid: int = 11,
                        max_passes: int = 30, moments: np.ndarray | None = None
                        ) -> ExchangeResult:
    """Choose ``n_runs`` runs in ``region`` that are D- or I-optimal for a model.

    Parameters
    ----------
    matrix : function (m, k) coded points -> (m, p) model matrix rows.
    region : where the runs may go (see :class:`Region`).
    n_runs : number of new runs.
    criterion : ``d`` or ``i``.
    fixed : (m0, k) runs already made that stay in the design (augmentation).
    starts : random starting designs; the best result is kept.
    seed : seed of the starts (same seed, same design).
    grid : values tried along a numeric coordinate per step (ends included).
    max_passes : a start stops after this many passes over its runs.
    moments : the region's moment matrix for I (default: ``region_moments``).

    Raises
    ------
    PlanError
        Fewer runs in all than the model has terms, or no start gives a design
        that can estimate every term.
    """
    criterion = str(criterion).lower()
    if criterion not in CRITERIA:
        raise PlanError(f"criterion '{criterion}' is not one I know: use 'd' (most "
                        "precise coefficients) or 'i' (most precise predictions over "
                        "the region)")
    k = region.k
    fixed = np.zeros((0, k)) if fixed is None else np.atleast_2d(np.asarray(fixed, float))
    p = np.asarray(matrix(np.zeros((1, k)) if not len(region.categorical) else
                          region.sample(1, np.random.default_rng(0)))).shape[1]
    if n_runs + len(fixed) < p:
        raise PlanError(f"{n_runs} runs cannot estimate a model with {p} terms: ask for "
                        f"at least {p - len(fixed)} runs (--runs {p - len(fixed)}), and a "
                        "few more to estimate the run-to-run variation")
    if criterion == "i" and moments is None:
        moments = region_moments(matrix, region, seed=seed)
    F0 = np.asarray(matrix(fixed), float) if len(fixed) else np.zeros((0, p))
    rng = np.random.default_rng([int(seed), 13])
    best = None
    values = []
    from threadpoolctl import threadpool_limits

    # small matrices, many products: a pool of BLAS threads only adds waiting
    with threadpool_limits(limits=1, user_api="blas"):
        for _ in range(max(1, int(starts))):
            X = region.sample(n_runs, rng)
            X, value = _one_start(matrix, region, X, F0, criterion, moments, grid,
                                  max_passes)
            if value is None:
                continue
            values.append(value)
            better = best is None or (value > best[1] if criterion == "d"
                                      else value < best[1])
            if better:
                best = (X, value)
    if best is None:
        raise PlanError(f"no design of {n_runs} runs found that estimates every one of "
                        f"the model's {p} terms in this region: add runs, use a smaller "
                        "model, or relax the rules")
    return ExchangeResult(coded=best[0], criterion=criterion, value=float(best[1]),
                          start_values=tuple(float(v) for v in values), moments=moments)


def _information(F0, F, ridge: float) -> np.ndarray:
    M = F0.T @ F0 + F.T @ F
    if ridge:
        M = M + ridge * np.eye(M.shape[0])
    return M


def _value(M, criterion, W) -> float | None:
    sign, logdet = np.linalg.slogdet(M)
    if sign <= 0 or not np.isfinite(logdet):
        return None
    if np.linalg.cond(M) > 1e12:
        return None
    if criterion == "d":
        return float(logdet)
    return float(np.trace(np.linalg.solve(M, W)))


def _candidates(region: Region, x: np.ndarray, t: np.ndarray, fine: float) -> np.ndarray:
    """Points that differ from x in one coordinate: (m, k).

    ``t`` holds the grid's fractions 0..1 of each coordinate's allowed stretch;
    ``fine`` > 0 adds 9 values within +-fine of the current one.
    """
    k = region.k
    num = region.numeric
    parts = []
    if len(num):
        lo, hi = region.intervals(x)
        lo, hi = lo[num], hi[num]
        values = lo[:, None] + (hi - lo)[:, None] * t[None, :]  # (q, grid)
        if fine > 0:
            near = x[num][:, None] + fine * _FINE[None, :]
            near = np.clip(near, lo[:, None], hi[:, None])
            values = np.hstack([values, near])
        valid = (hi >= lo)[:, None] & (np.abs(values - x[num][:, None]) > 1e-12)
        rows, cols = np.nonzero(valid)
        C = np.repeat(x[None, :], len(rows), axis=0)
        C[np.arange(len(rows)), num[rows]] = values[rows, cols]
        parts.append(C)
    for j in region.categorical:
        levels = region.levels[j]
        levels = levels[levels != x[j]]
        C = np.repeat(x[None, :], len(levels), axis=0)
        C[:, j] = levels
        parts.append(C)
    C = np.vstack(parts) if parts else np.zeros((0, k))
    if region.accept is not None and len(C):
        C = C[np.asarray(region.accept(C), dtype=bool)]
    return C


_FINE = np.linspace(-1.0, 1.0, 9)


def _swap_inverse(V: np.ndarray, f: np.ndarray, g: np.ndarray) -> np.ndarray:
    """(M - f f' + g g')^-1 from V = M^-1, as one rank-2 update (Woodbury).

    Not as two Sherman-Morrison steps: in a saturated plan (as many runs as terms)
    taking a run out first leaves a singular matrix (f'Vf = 1) even though the swap
    as a whole is fine. The 2 x 2 system's determinant is minus the swap's
    determinant ratio, which a swap is only made for when it is above 1.
    """
    B = np.column_stack([V @ g, V @ f])
    S = np.array([[1.0 + g @ B[:, 0], g @ B[:, 1]],
                  [f @ B[:, 0], -1.0 + f @ B[:, 1]]])
    return V - B @ np.linalg.solve(S, B.T)


def _one_start(matrix, region, X, F0, criterion, W, grid, max_passes, repeat=1):
    n = len(X)
    F = np.asarray(matrix(X), dtype=float).copy()
    p = F.shape[1]
    M = _information(F0, F, 0.0)
    ridge = 0.0
    if np.linalg.matrix_rank(M) < p:
        ridge = _RIDGE * max(1.0, float(np.trace(M)) / p)
        M = M + ridge * np.eye(p)
    t = np.linspace(0.0, 1.0, grid)
    num = region.numeric
    span = (region.upper - region.lower)[num]
    # After the coarse grid settles: passes on finer steps around each value.
    fines = [0.0] + ([float(np.max(span)) / (grid - 1) / d for d in (1, 4, 16)]
                     if len(num) else [])
    phase, passes = 0, 0
    last = None
    V = np.linalg.inv(M)
    while passes < max_passes:
        passes += 1
        changed = False
        fine = fines[phase]
        for i in np.repeat(np.arange(n), repeat):
            C = _candidates(region, X[i], t, fine)
            if not len(C):
                continue
            G = np.asarray(matrix(C), dtype=float)
            f = F[i]
            Vf = V @ f
            dff = float(f @ Vf)
            if criterion == "d":
                VG = G @ V
                dgg = np.einsum("ij,ij->i", VG, G)
                dfg = VG @ f
                # det ratio after swapping f for g, minus 1 (Fedorov's delta)
                gain = (1.0 + dgg) * (1.0 - dff) + dfg ** 2 - 1.0
            else:
                # trace(W M^-1) after removing f, then adding g (Sherman-Morrison twice)
                denom = 1.0 - dff
                if denom <= 1e-10:
                    continue
                U = V + np.outer(Vf, Vf) / denom
                UG = G @ U
                ugg = np.einsum("ij,ij->i", UG, G)
                num_ = np.einsum("ij,ij->i", UG @ W, UG)  # g'U W U g
                current = float(np.einsum("ij,ji->", V, W))
                new = float(np.einsum("ij,ji->", U, W)) - num_ / (1.0 + ugg)
                gain = (current - new) / max(abs(current), 1e-300)
            j = int(np.argmax(gain))
            if gain[j] > _IMPROVE:
                g = G[j]
                M = M - np.outer(f, f) + np.outer(g, g)
                V = _swap_inverse(V, f, g)
                F[i] = g
                X[i] = C[j]
                changed = True
        if ridge and np.linalg.cond(M - ridge * np.eye(p)) < 1e10:
            M = M - ridge * np.eye(p)
            V = np.linalg.inv(M)
            ridge = 0.0
            changed = True
        # A pass that gains less than _SETTLE (relative) has settled: the rest of
        # its gains are crumbs that cost as much time as the first passes.
        now = _value(M, criterion, W) if not ridge else None
        small = (now is not None and last is not None
                 and abs(now - last) <= _SETTLE * max(abs(last), 1.0 if criterion == "d"
                                                      else 1e-300))
        last = now
        V = np.linalg.pinv(M, hermitian=True)  # once a pass: no drift from the updates
        if not changed or small:
            if phase + 1 >= len(fines):
                break
            phase += 1
            last = None
    M = _information(F0, F, 0.0)
    return X, _value(M, criterion, W)
