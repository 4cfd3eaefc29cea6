"""Optimal split-plot designs by coordinate exchange.

``split_plot_exchange`` places ``n`` runs in ``w`` whole plots so that the
model's coefficients (D) or predictions over the region (I) are as precise as
possible when runs of one whole plot share a random shift, for an assumed
ratio ``r = s_wp^2 / s^2``. The information matrix is then

    X' V^-1 X = sum over whole plots of (F_p'F_p - c_p s_p s_p'),
    s_p = F_p' 1,  c_p = r / (1 + r k_p),

(``V = I + r Z Z'``, ``k_p`` runs in whole plot ``p``), and the exchange is
that of Goos & Vandebroek (2003), "D-optimal split-plot designs with given
numbers and sizes of whole plots", Technometrics 45(3), and Jones & Goos
(2007), "A candidate-set-free algorithm for generating D-optimal split-plot
designs", Applied Statistics 56(3): from random starts, each whole plot's
hard-to-change coordinates are changed together (one value for all its runs),
and each run's other coordinates one at a time, to the value that improves the
criterion most, until a pass improves nothing. Candidate values come from
``optimal._candidates`` (the region's ranges and rules), and a whole-plot
change is kept only if every run of the whole plot stays in the region.
"""
from __future__ import annotations

import numpy as np

from ..errors import PlanError
from .optimal import _candidates, region_moments
from .region import Region
from .split_plot import split_information

__all__ = ["split_plot_exchange", "plot_sizes"]

_IMPROVE = 1e-7


def plot_sizes(n_runs: int, n_plots: int) -> np.ndarray:
    """Runs per whole plot, as equal as possible (the first ones get the extra runs)."""
    if n_plots < 2:
        raise PlanError(f"--whole-plots {n_plots}: a split plot needs at least 2 whole "
                        "plots, and a few more to estimate the variation between them")
    if n_runs < 2 * n_plots:
        raise PlanError(f"{n_runs} runs in {n_plots} whole plots leaves some whole plot "
                        "with a single run: ask for at least 2 runs per whole plot "
                        f"(--runs {2 * n_plots} or more)")
    base, extra = divmod(n_runs, n_plots)
    return np.array([base + (1 if i < extra else 0) for i in range(n_plots)])


def _score(M, criterion, W):
    sign, logdet = np.linalg.slogdet(M)
    if sign <= 0 or not np.isfinite(logdet) or np.linalg.cond(M) > 1e12:
        return None
    return float(logdet) if criterion == "d" else -float(np.trace(np.linalg.solve(M, W)))


def split_plot_exchange(matrix, region: Region, hard, n_plots: int, n_runs: int, *,
                        ratio: float = 1.0, criterion: str = "d", seed: int = 0,
                        starts: int = 6, grid: int = 9, max_passes: int = 20
                        ) -> tuple[np.ndarray, np.ndarray, float, tuple]:
    """(coded runs (n, k), whole plot of each run (n,), criterion value, start values).

    The value is log det(X'V^-1 X) for D, trace(W (X'V^-1 X)^-1) for I.
    """
    hard = np.asarray(sorted(hard), dtype=int)
    k = region.k
    easy = np.asarray([j for j in range(k) if j not in set(hard.tolist())], dtype=int)
    sizes = plot_sizes(n_runs, n_plots)
    codes = np.repeat(np.arange(n_plots), sizes)
    p = np.asarray(matrix(region.sample(1, np.random.default_rng(0)))).shape[1]
    if n_runs < p + 1:
        raise PlanError(f"{n_runs} runs cannot estimate a model with {p} terms and the "
                        f"variation within whole plots: ask for at least {p + 1} runs")
    W = region_moments(matrix, region, seed=seed) if criterion == "i" else None
    t = np.linspace(0.0, 1.0, grid)
    rng = np.random.default_rng([int(seed), 2607])
    best, values = None, []
    for _ in range(max(1, int(starts))):
        X = _start(region, hard, codes, n_plots, rng)
        X, value = _one_start(matrix, region, X, hard, easy, codes, ratio, criterion, W,
                              t, max_passes)
        if value is None:
            continue
        values.append(value)
        if best is None or value > best[1]:
            best = (X, value)
    if best is None:
        raise PlanError(f"no split-plot design of {n_runs} runs in {n_plots} whole plots "
                        f"found that estimates every one of the model's {p} terms: add "
                        "whole plots or runs, or use a smaller model")
    sign = 1.0 if criterion == "d" else -1.0
    return best[0], codes, sign * best[1], tuple(sign * v for v in values)


def _start(region, hard, codes, n_plots, rng) -> np.ndarray:
    """A random start: each whole plot takes the hard-to-change settings of its first
    run; a run those settings put outside the rules copies the first run."""
    X = region.sample(len(codes), rng)
    for plot in range(n_plots):
        idx = np.flatnonzero(codes == plot)
        X[np.ix_(idx, hard)] = X[idx[0], hard]
        bad = idx[~region.feasible(X[idx])]
        X[bad] = X[idx[0]]
    return X


def _one_start(matrix, region, X, hard, easy, codes, ratio, criterion, W, t, max_passes):
    F = np.asarray(matrix(X), dtype=float).copy()
    value = _score(split_information(F, codes, ratio), criterion, W)
    current = -np.inf if value is None else value
    n_plots = int(codes.max()) + 1
    for _ in range(max_passes):
        gained = False
        # whole plots: the hard-to-change coordinates, all runs of the plot together
        for plot in range(n_plots):
            idx = np.flatnonzero(codes == plot)
            options = _candidates(region, X[idx[0]], t, 0.0)
            options = options[np.any(options[:, hard] != X[idx[0], hard], axis=1)
                              & np.all(options[:, easy] == X[idx[0], easy], axis=1)] \
                if len(easy) else options
            for cand in options:
                Y = X[idx].copy()
                Y[:, hard] = cand[hard]
                if not region.feasible(Y).all():
                    continue
                G = F.copy()
                G[idx] = matrix(Y)
                v = _score(split_information(G, codes, ratio), criterion, W)
                if v is not None and v > current + _IMPROVE * max(1.0, abs(current)):
                    X[idx], F, current, gained = Y, G, v, True
        # runs: the other coordinates, one run at a time
        for i in range(len(X)):
            C = _candidates(region, X[i], t, 0.0)
            if not len(C):
                continue
            C = C[np.all(C[:, hard] == X[i, hard], axis=1)]
            if not len(C):
                continue
            rows = np.asarray(matrix(C), dtype=float)
            scores = []
            for g in rows:
                G = F.copy()
                G[i] = g
                scores.append(_score(split_information(G, codes, ratio), criterion, W))
            scores = np.array([-np.inf if s is None else s for s in scores])
            j = int(np.argmax(scores))
            if scores[j] > current + _IMPROVE * max(1.0, abs(current)):
                X[i], F[i], current, gained = C[j], rows[j], float(scores[j]), True
        if not gained:
            break
    if not np.isfinite(current):
        return X, None
    return X, current
