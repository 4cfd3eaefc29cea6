"""The chance that a batch made at given settings lands within every limit.

For each response with a goal, a new measurement at settings ``x`` is
modelled as ``mean(x) + t_df * sqrt(se_mean(x)**2 + sigma**2)`` on the
modelling scale (the usual prediction-interval distribution for a linear
model), then taken back to natural units. Responses measured on the same
runs tend to move together; their residuals (matched by run id) give a
correlation for the normal part of the draws, and each response's t comes
from its own chi-square with its model's degrees of freedom. When too few
runs have every response, the responses are treated as independent and the
result says so. The uncertainty of the model coefficients enters through
``se_mean``; how the coefficient errors of different responses co-vary is
not modelled.

The draws are seeded and shared by every point, so two settings are compared
on the same random numbers (same seed, same answer).
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from .desirability import limits

__all__ = ["ChanceEstimate", "residual_correlation", "chance_in_limits"]


@dataclass(frozen=True)
class ChanceEstimate:
    """Monte Carlo chances for a set of points.

    Attributes
    ----------
    responses : tuple of str
        The responses with a goal, in study order (columns of ``each``).
    each : numpy.ndarray, shape (n, m)
        Chance that each response lands within its limits (NaN for a response
        whose model has no estimate of run-to-run error).
    all : numpy.ndarray, shape (n,)
        Chance that every one of them does at the same time (NaN when any
        single chance is unknown).
    draws : int
        Number of Monte Carlo draws (the standard error of a chance p is
        ``sqrt(p * (1 - p) / draws)``).
    correlated : bool
        True when residual correlation between responses was used.
    correlation : pandas.DataFrame
        The correlation used (identity when independence was assumed).
    assumption : str
        One sentence stating how responses were tied together.
    """

    responses: tuple
    each: np.ndarray
    all: np.ndarray
    draws: int
    correlated: bool
    correlation: pd.DataFrame = field(repr=False)
    assumption: str = ""


def residual_correlation(models: dict, *, min_runs: int | None = None) -> pd.DataFrame | None:
    """Correlation of the models' residuals over the runs every response has.

    Residuals are matched by run id. Returns None when fewer than
    ``min_runs`` runs (default: number of responses + 3) have all of them.
    """
    names = list(models)
    if len(names) < 2:
        return pd.DataFrame(np.eye(len(names)), index=names, columns=names)
    table = pd.concat([pd.Series(models[n].residuals_) for n in names], axis=1,
                      join="inner").to_numpy(dtype=float)
    table = table[~np.isnan(table).any(axis=1)]
    need = min_runs if min_runs is not None else len(names) + 3
    if len(table) < need or (table.std(axis=0, ddof=1) <= 0).any():
        return None
    return pd.DataFrame(np.corrcoef(table, rowvar=False), index=names, columns=names)


def chance_in_limits(study, models: dict, X_coded, *, draws: int = 20000,
                     seed: int = 0, correlated: bool = True) -> ChanceEstimate:
    """Seeded Monte Carlo chance of each response, and all together, within limits.

    Parameters
    ----------
    study : Study
        Supplies each response's goal (its acceptable interval: see
        ``tradeoff.desirability.limits``).
    models : dict
        Response name -> fitted model with ``predictive`` and
        ``inverse_transform``; only responses with an active goal are used.
    X_coded : array_like, shape (n, k)
        Settings in coded units, every study factor in study order.
    draws : int
        Monte Carlo draws per point.
    seed : int
        Seed of the random numbers.
    correlated : bool
        Use the residual correlation between responses (when enough runs have
        all of them); False assumes independence.
    """
    X = np.atleast_2d(np.asarray(X_coded, dtype=float))
    n = len(X)
    used = {r.name: models[r.name] for r in study.responses
            if r.goal.active and r.name in models}
    names = list(used)
    m = len(names)
    if m == 0:
        empty = pd.DataFrame(np.eye(0))
        return ChanceEstimate((), np.empty((n, 0)), np.ones(n), draws, False, empty,
                              "no response has a goal")
    corr = residual_correlation(used) if correlated else None
    if corr is None or m == 1:
        R = np.eye(m)
        is_corr = False
        if m == 1:
            assumption = "one response with a goal: no correlation to account for"
        elif correlated:
            assumption = ("too few runs have every response to estimate how they move "
                          "together: responses treated as independent")
        else:
            assumption = "responses treated as independent (as asked)"
    else:
        R = corr.to_numpy()
        is_corr = True
        assumption = ("responses tied together by the correlation of their model "
                      "residuals (matched by run id)")
    rng = np.random.default_rng(seed)
    # A small ridge keeps the factorisation stable when two responses move as one.
    L = np.linalg.cholesky(R + 1e-9 * np.eye(m))
    Z = rng.standard_normal((draws, m)) @ L.T
    inside_all = np.ones((n, draws), dtype=bool)
    each = np.empty((n, m))
    unknown = []
    for i, name in enumerate(names):
        model = used[name]
        mean, se, sigma, df = model.predictive(X)
        mean = np.broadcast_to(np.asarray(mean, dtype=float), (n,))
        se = np.broadcast_to(np.asarray(se, dtype=float), (n,))
        sigma = float(np.asarray(sigma, dtype=float).ravel()[0])
        df = float(np.asarray(df, dtype=float).ravel()[0])
        if not (np.isfinite(sigma) and np.isfinite(df) and df > 0):
            # No error estimate (a saturated model without one): no chance can be given.
            each[:, i] = np.nan
            inside_all[:] = False
            unknown.append(name)
            continue
        # Student t with the model's df: the correlated normal over an independent
        # sqrt(chi-square / df) (as fast as normal draws, exact t marginals).
        q = Z[:, i] / np.sqrt(rng.chisquare(df, draws) / df)
        scale = np.sqrt(se ** 2 + sigma ** 2)
        y = mean[:, None] + scale[:, None] * q[None, :]
        y = np.asarray(model.inverse_transform(y), dtype=float).reshape(n, draws)
        lo, hi = limits(study.response(name).goal)
        ok = (y >= lo) & (y <= hi)
        each[:, i] = ok.mean(axis=1)
        inside_all &= ok
    frame = pd.DataFrame(R, index=names, columns=names)
    together = inside_all.mean(axis=1)
    if unknown:
        together = np.full(n, np.nan)
        assumption += ("; no chance for " + ", ".join(f"'{u}'" for u in unknown)
                       + " (its model has no estimate of run-to-run error)")
    return ChanceEstimate(tuple(names), each, together, draws, is_corr, frame, assumption)
