"""The chance that one production batch meets every limit.

In production each numeric factor lands at ``x + e`` instead of the intended
``x`` (``e`` normal with the factor's ``production_sd``, the factors
independent). One production batch at settings ``x`` is then drawn as in
``tradeoff.search.chance``, but with the model's mean and its standard error
taken at the drawn settings ``x + e``: the factors' spread, the run-to-run
noise and the models' uncertainty together, the responses tied by the
correlation of their residuals. A factor with a goal of its own (keep protein
above 20 %, say) must also land within that goal's limits after its spread.
The draws of the noise are the very ones the
ordinary chance uses (same seed), and the factor deviations come from a
stream of their own, so with no production spread the production chance
equals the ordinary one exactly.
"""
from __future__ import annotations

import numpy as np

from .chance import ChanceEstimate, chance_in_limits
from .spread import coded_spread

__all__ = ["production_chance", "chance_all_production", "factor_goal_chances"]


def production_chance(study, models: dict, X_coded, *, draws: int = 20000, seed: int = 0,
                      correlated: bool = True) -> ChanceEstimate:
    """Seeded Monte Carlo chance that one production batch lands within the limits.

    Parameters
    ----------
    study : Study
        Supplies the goals (their limits) and each factor's ``production_sd``.
    models : dict
        Response name -> fitted model (only responses with a goal are used).
    X_coded : array_like, shape (n, k)
        Intended settings in coded units, every study factor in study order.
    draws, seed, correlated
        As for ``tradeoff.chance_in_limits``.

    Returns
    -------
    ChanceEstimate
        ``each`` per response and ``all`` (every limit at once), per point.
    """
    return chance_in_limits(study, models, X_coded, draws=draws, seed=seed,
                            correlated=correlated, spread=coded_spread(study))


def chance_all_production(study, fit, X_coded, *, draws: int = 20000,
                          seed: int = 0) -> np.ndarray:
    """Chance (n,) that one production batch at each setting meets every limit.

    The short form of ``production_chance`` for callers that need only the
    joint chance (NaN where some response has no estimate of run-to-run
    error). ``fit`` is a ``StudyFit`` or a dict of fitted models;
    ``X_coded`` (n, k) are intended settings in coded units.
    """
    models = dict(fit.models) if hasattr(fit, "models") else dict(fit)
    return production_chance(study, models, X_coded, draws=draws, seed=seed).all


def factor_goal_chances(study, X_coded, *, draws: int = 20000, seed: int = 0) -> dict:
    """Factor name -> chance (n,) that the factor, made with its production spread,
    lands within its own goal's limits; every numeric factor with a goal.

    The factor deviations are the very draws ``production_chance`` uses (same
    seed), so these are the factor rows behind its chance of all at once. A
    factor made exactly (no ``production_sd``) lands within its limits when its
    setting does: 1 or 0.
    """
    from .chance import _spread_draws
    from .desirability import limits

    X = np.atleast_2d(np.asarray(X_coded, dtype=float))
    spread = coded_spread(study)
    E = _spread_draws(seed, draws, spread)
    out = {}
    for j, f in enumerate(study.factors):
        if f.is_categorical or not f.goal.active:
            continue
        lo, hi = limits(f.goal)
        x = f.centre + f.half_range * (X[:, j, None] + E[None, :, j])
        out[f.name] = ((x >= lo) & (x <= hi)).mean(axis=1)
    return out
