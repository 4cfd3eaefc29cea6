"""Judging a plan by the precision of its predictions over the region.

For a plan of n runs with model matrix X and a point x of the region with
model row f(x), the scaled prediction variance is

    SPV(x) = n f(x)' (X'X)^-1 f(x),

the variance of the predicted mean at x in units of the run-to-run variance,
times n so that plans of different sizes compare per run (Myers, Montgomery &
Anderson-Cook, Response Surface Methodology, 3rd ed., ch. 8; common practice).

``prediction_variance`` summarises it over the region (its own constrained
shape: points are drawn uniformly inside the rules):

- D-efficiency: 100 det(X'X)^(1/p) / n, which is 100 % for an orthogonal
  two-level design in coded units (common practice);
- I: the average SPV over the region, n trace(W (X'X)^-1) with W the region's
  moment matrix;
- G: the largest SPV found over the region (sampled points, the region's
  corners that meet the rules, and the plan's own runs);
- the fraction-of-design-space quantiles of SPV (Zahran, Anderson-Cook &
  Myers (2003), Journal of Quality Technology 35(4)): the SPV below which
  10 %, 50 % and 90 % of the region lies, and the whole curve for a figure.
"""
from __future__ import annotations

import itertools
from dataclasses import dataclass
from typing import Callable

import numpy as np

from ..errors import PlanError
from .region import Region

__all__ = ["PredictionVariance", "prediction_variance", "FDS_FRACTIONS"]

FDS_FRACTIONS = (0.10, 0.50, 0.90)


@dataclass(frozen=True, eq=False)
class PredictionVariance:
    """How precisely a plan predicts over its region.

    Attributes
    ----------
    runs, parameters : n and p.
    d_efficiency : 100 det(X'X)^(1/p) / n (percent).
    i_average : the SPV averaged over the region.
    g_max : the largest SPV found in the region.
    quantiles : {fraction: SPV} at FDS_FRACTIONS.
    curve : (fraction, spv) arrays, the fraction-of-design-space curve
        (SPV sorted; fraction of the region at or below each value).
    points : number of region points sampled.
    """

    runs: int
    parameters: int
    d_efficiency: float
    i_average: float
    g_max: float
    quantiles: dict
    curve: tuple
    points: int

    def summary(self, digits: int = 4) -> dict:
        def r(x):
            return None if not np.isfinite(x) else float(f"{x:.{digits}g}")
        return {"d_efficiency": r(self.d_efficiency), "i_average_spv": r(self.i_average),
                "g_max_spv": r(self.g_max),
                "spv_quantiles": {f"{int(round(100 * q))}%": r(v)
                                  for q, v in self.quantiles.items()},
                "region_points": self.points}


def _corners(region: Region, limit: int = 4096) -> np.ndarray:
    """The box corners (numeric factors at their bounds, every level combination)
    that meet the rules; none when there would be more than ``limit``."""
    axes = []
    for j in range(region.k):
        levels = region.levels[j]
        axes.append(levels if levels is not None else (region.lower[j], region.upper[j]))
    count = int(np.prod([len(a) for a in axes], dtype=float)) if axes else 0
    if count == 0 or count > limit:
        return np.zeros((0, region.k))
    C = np.array(list(itertools.product(*axes)), dtype=float)
    return C[region.feasible(C)]


def prediction_variance(matrix: Callable, coded, region: Region, *, points: int = 4000,
                        seed: int = 0) -> PredictionVariance:
    """The D-efficiency, I, G and FDS quantiles of coded runs over a region.

    Parameters
    ----------
    matrix : function (m, k) coded points -> (m, p) model rows.
    coded : (n, k) the plan's runs in coded units (all of them, kept runs too).
    region : the region predictions are wanted over.
    points : region points sampled (uniformly, inside the rules).
    seed : seed of the sample (same seed, same figures).
    """
    X = np.atleast_2d(np.asarray(coded, dtype=float))
    F = np.asarray(matrix(X), dtype=float)
    n, p = F.shape
    M = F.T @ F
    sign, logdet = np.linalg.slogdet(M)
    if sign <= 0 or np.linalg.cond(M) > 1e12:
        raise PlanError(f"these {n} runs cannot estimate every one of the model's {p} "
                        "terms, so its prediction variance is unbounded: add runs or "
                        "use a smaller model")
    Minv = np.linalg.inv(M)
    rng = np.random.default_rng([int(seed), 11])
    S = region.sample(points, rng)
    Fs = np.asarray(matrix(S), dtype=float)
    spv = n * np.einsum("ij,jk,ik->i", Fs, Minv, Fs)
    extra = np.vstack([_corners(region), X[region.feasible(X)]])
    g = float(spv.max())
    if len(extra):
        Fe = np.asarray(matrix(extra), dtype=float)
        g = max(g, float((n * np.einsum("ij,jk,ik->i", Fe, Minv, Fe)).max()))
    ordered = np.sort(spv)
    fraction = (np.arange(1, len(ordered) + 1)) / len(ordered)
    quantiles = {q: float(np.quantile(spv, q)) for q in FDS_FRACTIONS}
    return PredictionVariance(
        runs=n, parameters=p, d_efficiency=float(100.0 * np.exp(logdet / p) / n),
        i_average=float(spv.mean()), g_max=g, quantiles=quantiles,
        curve=(fraction, ordered), points=len(S))
