"""Which two goals pull hardest against each other: the report's frontier pair.

Over the search's own space-filling batch (every level combination), each
goal's desirability is ranked, and the pair of goals whose ranks run most
against each other (the most negative Spearman rank correlation) is the pair
in greatest conflict. Only settings where every goal is within its limits
count (d > 0 for all), since the frontier lives there; when fewer than
``_FEW`` such settings exist, settings where both goals of a pair are
within their limits count instead. Range goals have no direction to trade
and take no part.
"""
from __future__ import annotations

import itertools

import numpy as np
import pandas as pd

from .candidates import _candidate_batch
from .problem import _Problem, _models_of, _no_goal_error

__all__ = ["goal_conflicts", "most_conflicting"]

_FEW = 20


def goal_conflicts(study, *, fit=None, seed: int | None = None) -> pd.DataFrame:
    """Rank correlation of every pair of goals' d over the search's candidates.

    Returns
    -------
    pandas.DataFrame
        One row per pair, most conflicting first: ``a``, ``b`` (goal names in
        study order), ``rho`` (Spearman rank correlation of their d), ``n``
        (settings it was computed on), ``basis`` (``every goal within limits``
        or ``both within limits``).
    """
    from scipy.stats import spearmanr

    if fit is None:
        from ..model.study_fit import fit_study

        fit = fit_study(study)
    seed = study.seed if seed is None else seed
    problem = _Problem(study, _models_of(fit))
    if not problem.columns:
        raise _no_goal_error(study, fit)
    combos = [np.array(v) for v in itertools.product(*problem.cat_codes)]
    X = _candidate_batch(study, problem, combos, np.random.default_rng(seed))
    X = X[problem.feasible(X)]
    _, d = problem.score(problem.values(X))
    names = problem.names()
    usable = [i for i, g in enumerate(problem.goals) if g.kind != "range"]
    every = (d > 0).all(axis=1)
    rows = []
    for i, j in itertools.combinations(usable, 2):
        ok, basis = every, "every goal within limits"
        if ok.sum() < _FEW:
            ok, basis = (d[:, i] > 0) & (d[:, j] > 0), "both within limits"
        if ok.sum() < 3 or np.ptp(d[ok, i]) == 0 or np.ptp(d[ok, j]) == 0:
            continue  # no variation to rank (a goal at d = 1 throughout, say)
        rho = float(spearmanr(d[ok, i], d[ok, j]).statistic)
        rows.append({"a": names[i], "b": names[j], "rho": rho, "n": int(ok.sum()),
                     "basis": basis})
    table = pd.DataFrame(rows, columns=["a", "b", "rho", "n", "basis"])
    return table.sort_values("rho", kind="stable").reset_index(drop=True)


def most_conflicting(study, *, fit=None, seed: int | None = None):
    """The most conflicting pair's row of ``goal_conflicts`` as a dict, or None."""
    table = goal_conflicts(study, fit=fit, seed=seed)
    return None if table.empty else table.iloc[0].to_dict()
