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

import functools
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from .desirability import limits

__all__ = ["ChanceEstimate", "residual_correlation", "chance_in_limits", "chance_text",
           "CHANCE_RULE", "beyond_reach", "withhold_beyond_reach", "NOT_STATED"]

NOT_STATED = "not stated"  # a chance withheld: the prediction lies past the storage study

CHANCE_RULE = ("Chances are shown in percent with one decimal; an estimate above 99.9 % "
               "shows as '> 99.9 %' and one below 0.1 % as '< 0.1 %', because a Monte "
               "Carlo estimate from a fitted model is never a certainty.")


def chance_text(p) -> str:
    """A chance as every view, report and command shows it (see ``CHANCE_RULE``).

    >>> chance_text(0.9984), chance_text(0.12345), chance_text(1.0), chance_text(0.0)
    ('99.8 %', '12.3 %', '> 99.9 %', '< 0.1 %')
    """
    if p is None:
        return "-"
    p = float(p)
    if not np.isfinite(p):
        return "-"
    percent = 100.0 * p
    if percent >= 99.95:
        return "> 99.9 %"
    if percent < 0.05:
        return "< 0.1 %"
    return f"{percent:.1f} %"


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
    R = _correlation_array(models, min_runs)
    return None if R is None else pd.DataFrame(R, index=names, columns=names)


def _correlation_array(models: dict, min_runs: int | None = None) -> np.ndarray | None:
    """``residual_correlation`` as a bare array (None when too few runs)."""
    table = _same_runs(models)
    if table is None:
        series = [models[n].residuals_ for n in models]
        table = pd.concat(series, axis=1, join="inner").to_numpy(dtype=float)
    table = table[~np.isnan(table).any(axis=1)]
    need = min_runs if min_runs is not None else len(models) + 3
    if len(table) < need or (table.std(axis=0, ddof=1) <= 0).any():
        return None
    return np.corrcoef(table, rowvar=False)


def _same_runs(models: dict) -> np.ndarray | None:
    """The residuals side by side (runs, m) when every model has the very same runs.

    The usual case (every response measured on every run) needs no join by run
    id, and reading the fitted models' own arrays skips building a labelled
    series per response (most of the cost of a small chance). None otherwise.
    """
    ids = [getattr(m, "_ids", None) for m in models.values()]
    diag = [getattr(m, "_diag", None) for m in models.values()]
    if any(i is None for i in ids) or any(not isinstance(d, dict) for d in diag):
        return None
    if not all(len(i) == len(ids[0]) and np.array_equal(i, ids[0]) for i in ids[1:]):
        return None
    return np.column_stack([np.asarray(d["residual"], dtype=float) for d in diag])


@functools.lru_cache(maxsize=8)
def _standard_draws(seed, draws: int, R_key: bytes, m: int, dfs: tuple) -> np.ndarray:
    """The seeded standard draws (draws, m): correlated normals over sqrt(chi2/df).

    Column i is a Student t with ``dfs[i]`` degrees of freedom (NaN where the
    df is None: no error estimate), the normal parts correlated by R. They
    depend only on the seed, the number of draws, R and the dfs, so they are
    drawn once and shared by every call that asks again (a search, then its
    result, then a map). Read-only.
    """
    R = np.frombuffer(R_key, dtype=float).reshape(m, m)
    rng = np.random.default_rng(seed)
    # A small ridge keeps the factorisation stable when two responses move as one.
    L = np.linalg.cholesky(R + 1e-9 * np.eye(m))
    Q = rng.standard_normal((draws, m)) @ L.T
    for i, df in enumerate(dfs):
        if df is None:
            Q[:, i] = np.nan
            continue
        # Student t with the model's df: the correlated normal over an independent
        # sqrt(chi-square / df) (as fast as normal draws, exact t marginals).
        Q[:, i] /= np.sqrt(rng.chisquare(df, draws) / df)
    Q.flags.writeable = False
    return Q


def _spread_draws(seed, draws: int, spread: np.ndarray) -> np.ndarray:
    """Factor deviations in coded units (draws, k), from a stream of their own.

    Separate from the noise draws, so adding a production spread leaves the
    noise draws (and every chance without spread) exactly as they were.
    """
    rng = np.random.default_rng([0 if seed is None else int(seed), 16])
    return rng.standard_normal((draws, len(spread))) * spread


def _factors_within(study, X, E) -> np.ndarray:
    """(n, draws): every factor with a goal lands within the goal's limits in production."""
    ok = np.ones((len(X), len(E)), dtype=bool)
    for j, f in enumerate(study.factors):
        if f.is_categorical or not f.goal.active:
            continue
        lo, hi = limits(f.goal)
        x = f.centre + f.half_range * (X[:, j, None] + E[None, :, j])
        ok &= (x >= lo) & (x <= hi)
    return ok


_CHUNK = 200_000  # rows of settings evaluated at once when factors spread


def chance_in_limits(study, models: dict, X_coded, *, draws: int = 20000,
                     seed: int = 0, correlated: bool = True,
                     spread=None) -> ChanceEstimate:
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
    spread : array_like, shape (k,), optional
        Standard deviation of each factor's actual setting around the intended
        one, coded units (see ``tradeoff.production_chance``): each draw then
        takes the model's mean and standard error at its own drawn settings.
    """
    X = np.atleast_2d(np.asarray(X_coded, dtype=float))
    n, k = X.shape
    used = {r.name: models[r.name] for r in study.responses
            if r.goal.active and r.name in models}
    names = list(used)
    m = len(names)
    if m == 0:
        empty = pd.DataFrame(np.eye(0))
        return ChanceEstimate((), np.empty((n, 0)), np.ones(n), draws, False, empty,
                              "no response has a goal")
    corr = _correlation_array(used) if correlated and m > 1 else None
    if corr is None:
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
        R = corr
        is_corr = True
        assumption = ("responses tied together by the correlation of their model "
                      "residuals (matched by run id)")
    E = None
    if spread is not None and np.any(np.asarray(spread, dtype=float) > 0):
        E = _spread_draws(seed, draws, np.asarray(spread, dtype=float))
    # Each model's error estimate decides whether (and with which df) it draws a t.
    info, at_x = {}, {}
    for name in names:
        mean, se, sigma, df = used[name].predictive(X if E is None else X[:1])
        at_x[name] = (mean, se)  # the mean and its error at X, when no spread moves X
        sigma = float(np.asarray(sigma, dtype=float).ravel()[0])
        df = float(np.asarray(df, dtype=float).ravel()[0])
        info[name] = (sigma, df) if np.isfinite(sigma) and np.isfinite(df) and df > 0 \
            else None
    dfs = tuple(None if info[nm] is None else info[nm][1] for nm in names)
    R = np.ascontiguousarray(R, dtype=float)
    Q = _standard_draws(seed, int(draws), R.tobytes(), m, dfs)
    inside_all = np.ones((n, draws), dtype=bool)
    each = np.empty((n, m))
    unknown = []
    for i, name in enumerate(names):
        model = used[name]
        if info[name] is None:
            # No error estimate (a saturated model without one): no chance can be given.
            each[:, i] = np.nan
            inside_all[:] = False
            unknown.append(name)
            continue
        sigma = info[name][0]
        lo, hi = limits(study.response(name).goal)
        q = Q[:, i]
        if E is None:
            mean, se = at_x[name]
            mean = np.broadcast_to(np.asarray(mean, dtype=float), (n,))
            se = np.broadcast_to(np.asarray(se, dtype=float), (n,))
            scale = np.sqrt(se ** 2 + sigma ** 2)
            y = mean[:, None] + scale[:, None] * q[None, :]
            y = np.asarray(model.inverse_transform(y), dtype=float).reshape(n, draws)
            ok = (y >= lo) & (y <= hi)
        else:
            ok = np.empty((n, draws), dtype=bool)
            step = max(1, _CHUNK // draws)
            for a in range(0, n, step):
                Xd = (X[a:a + step, None, :] + E[None, :, :]).reshape(-1, k)
                mean, se, _, _ = model.predictive(Xd)
                c = min(step, n - a)
                y = mean + np.sqrt(se ** 2 + sigma ** 2) * np.tile(q, c)
                y = np.asarray(model.inverse_transform(y), dtype=float).reshape(c, draws)
                ok[a:a + c] = (y >= lo) & (y <= hi)
        each[:, i] = ok.mean(axis=1)
        inside_all &= ok
    if E is not None:
        inside_all &= _factors_within(study, X, E)
    frame = pd.DataFrame(R, index=names, columns=names)
    together = inside_all.mean(axis=1)
    if unknown:
        together = np.full(n, np.nan)
        assumption += ("; no chance for " + ", ".join(f"'{u}'" for u in unknown)
                       + " (its model has no estimate of run-to-run error)")
    return ChanceEstimate(tuple(names), each, together, draws, is_corr, frame, assumption)


def beyond_reach(study, predicted: dict) -> dict:
    """Per time-valued storage response, where each prediction stands (``derive.reach``).

    ``predicted`` maps a response name to its predicted values (n,). Returns
    name -> array (n,) of ``""``, ``"beyond"`` (past the last storage time) or
    ``"far"`` (past the longest time stated: no chance), for the responses in
    ``study.reach`` only.
    """
    reach = getattr(study, "reach", {}) or {}
    return {name: reach[name].status(values) for name, values in predicted.items()
            if name in reach}


def withhold_beyond_reach(study, chances: ChanceEstimate, predicted: dict
                          ) -> ChanceEstimate:
    """The chances with every chance that rests on a time past the storage study's
    reach withheld (NaN): that response's own chance, and the chance of all at once.

    ``predicted`` maps response names to predicted values (n,) at the same points.
    """
    status = beyond_reach(study, predicted)
    far = {n: s == "far" for n, s in status.items() if n in chances.responses and
           (s == "far").any()}
    if not far:
        return chances
    each, together = chances.each.copy(), np.array(chances.all, dtype=float, copy=True)
    for name, mask in far.items():
        each[mask, chances.responses.index(name)] = np.nan
        together[mask] = np.nan
    named = ", ".join(f"'{n}'" for n in far)
    return ChanceEstimate(chances.responses, each, together, chances.draws,
                          chances.correlated, chances.correlation,
                          chances.assumption + f"; no chance stated where {named} lies "
                          "beyond what the storage study can support")
