"""The best-settings search: the factor settings that best balance every goal.

``optimize`` maximises the overall desirability D (see ``tradeoff.desirability``)
over the searched region: each numeric factor's ``search`` range (default
low..high), the study's linear rules, and every combination of categorical
levels. D has kinks (where a desirability reaches 0 or 1), flat zero regions
and often several local maxima, so the search works in four steps:

1. a Sobol batch of candidates per level combination (scipy.stats.qmc, with a
   seeded digital shift), sized to the number of numeric factors and level
   combinations, half of it stretched onto the region's faces, plus its
   corners, evaluated at once;
2. the best candidates that lie apart (in coded units; every level combination
   with D > 0 gets one) climb together by pattern steps (up to 3 numeric
   factors along the diagonals too, else up and down each factor), one batch
   per step; starts that end on the same peak are grouped;
3. one start per peak is polished by SLSQP on a smooth equivalent problem:
   maximise ``sum w_i log t_i`` subject to each desirability piece being at
   least ``t_i`` (the kinks become constraints, which a gradient method handles
   exactly); several peaks are polished as one block-diagonal problem so each
   iteration is one batch;
4. optima closer than ``min_distance`` coded units to a better one are merged;
   the rest are the alternatives.

When D is 0 everywhere, the search minimises the weighted squared shortfall
(how far predictions lie outside their limits, in goal widths) instead and
returns the closest settings, naming the goals that cannot be met.

The search runs its linear algebra on one BLAS thread (threadpoolctl): its
matrices are small, and a thread pool only adds waiting, most of all on a
busy machine.
"""
from __future__ import annotations

import contextlib
import itertools
import math
import threading

import numpy as np

from ..study.constraints import study_rules
from ..errors import SearchError
from .candidates import _candidate_batch, _distances, _starts
from .climb import _climb, _one_per_hill
from .polish import _polish_d, _polish_shortfall
from .problem import _Problem, _models_of, _no_goal_error
from .hold import hold_search
from .result import OptimizationResult, _result

__all__ = ["optimize", "RANKINGS", "AIMS"]

RANKINGS = ("desirability", "chance", "production")
AIMS = ("balance", "production")
_SAME = 0.05  # climbed starts closer than this (coded) share one basin
_JOINT = 30  # at most this many variables in one joint polish


def optimize(study, *, top: int = 5, seed: int | None = None, fit=None,
             rank_by: str = "desirability", min_distance: float = 0.25,
             draws: int = 20000, starts: int | None = None,
             aim: str = "balance") -> OptimizationResult:
    """Find the settings that best balance every goal, with alternatives.

    Parameters
    ----------
    study : Study
        A loaded study with at least one goal.
    top : int
        Number of solutions to return at most (the best and ``top - 1``
        distinct alternatives).
    seed : int, optional
        Seed of the search's candidates and of the Monte Carlo chances
        (default: the study's ``seed``, itself 0 unless set). Same seed, same
        answer.
    fit : StudyFit, optional
        Already fitted models (``tradeoff.models.fit_study(study)`` is used
        when omitted).
    rank_by : {"desirability", "chance", "production"}
        Order solutions by D, by the chance that every response lands
        within its limits, or by the chance that one production batch (the
        factors drawn from their ``production_sd``) does; ties go to D.
    min_distance : float
        Optima closer than this (coded units) to a better one are the same
        solution.
    draws : int
        Monte Carlo draws for the chances.
    starts : int, optional
        Number of candidates polished (default ``max(12, 2 * top)``).
    aim : {"balance", "production"}
        ``balance`` puts the best D first. ``production`` (the command line's
        ``--for production``) puts first the settings with the highest chance
        that one production batch meets every limit (factors drawn from their
        ``production_sd``, run-to-run noise, the models' uncertainty; ties go
        to D), searched over the whole region, then the best balance and its
        alternatives; each solution says how much D it gives up.

    Returns
    -------
    OptimizationResult
    """
    if rank_by not in RANKINGS:
        raise SearchError(f"rank_by = '{rank_by}' is not a ranking I know: use "
                          "'desirability', 'chance' or 'production'")
    if aim not in AIMS:
        raise SearchError(f"aim = '{aim}' is not one I know: use 'balance' or 'production'")
    if not isinstance(top, int) or top < 1:
        raise SearchError(f"top must be a whole number of at least 1, found {top!r}")
    seed = study.seed if seed is None else seed
    # The whole call on one BLAS thread: the fit's, the search's and the result's
    # matrices are all small (see _one_blas_thread), and one limit set once costs
    # less than a thread pool woken for every product.
    with _one_blas_thread():
        return _optimize(study, top, seed, fit, rank_by, min_distance, draws, starts, aim)


def _optimize(study, top, seed, fit, rank_by, min_distance, draws, starts, aim):
    if fit is None:
        from ..model.study_fit import fit_study

        fit = fit_study(study)
    models = _models_of(fit)
    problem = _Problem(study, models)
    if not problem.columns:
        raise _no_goal_error(study, fit)
    study_rules(study)  # re-check the rules in case the study was built by hand
    X, feasible, unreachable = _search(study, problem, top=top, seed=seed,
                                       rank_by=rank_by, min_distance=min_distance,
                                       starts=starts)
    if aim == "production":
        held = hold_search(study, problem, models, X, seed=seed, draws=draws,
                           n_starts=starts if starts is not None else max(12, 2 * top),
                           min_distance=min_distance)
        # the held setting first, then the balance settings (kept even when close by,
        # so the D given up can be read off; only the very same setting is dropped)
        apart = np.sqrt(((X - held) ** 2).sum(axis=1)) > 1e-6
        X = np.vstack([held, X[apart]])
        top = max(top, 2)  # always show the best balance beside it
    return _result(study, problem, models, fit, X, top, seed, rank_by, feasible,
                   unreachable, draws, aim=aim)

_BLAS_LOCK = threading.Lock()
_BLAS = {"controller": None, "limiter": None, "depth": 0}


@contextlib.contextmanager
def _one_blas_thread():
    """Run the linear algebra inside on one thread, restoring the setting after.

    The search multiplies many small matrices; handing each to a pool of BLAS
    threads costs more than the product, and on a machine busy with other work
    the threads wait for each other (measured: twice the time of a small
    search). Nested and concurrent searches share one limit: the first in sets
    it, the last out restores it.
    """
    with _BLAS_LOCK:
        if _BLAS["depth"] == 0:
            if _BLAS["controller"] is None:
                from threadpoolctl import ThreadpoolController

                _BLAS["controller"] = ThreadpoolController()
            _BLAS["limiter"] = _BLAS["controller"].limit(limits=1, user_api="blas")
        _BLAS["depth"] += 1
    try:
        yield
    finally:
        with _BLAS_LOCK:
            _BLAS["depth"] -= 1
            if _BLAS["depth"] == 0:
                _BLAS["limiter"].restore_original_limits()
                _BLAS["limiter"] = None


def _search(study, problem, *, top, seed, rank_by="desirability", min_distance=0.25,
            starts=None):
    """The settings only: (coded points best first, feasible, unreachable goals)."""
    with _one_blas_thread():
        return _search_steps(study, problem, top=top, seed=seed, rank_by=rank_by,
                             min_distance=min_distance, starts=starts)


def _search_steps(study, problem, *, top, seed, rank_by, min_distance, starts):
    rng = np.random.default_rng(seed)
    p, c = len(problem.num), len(problem.cat)
    # every combination of levels (coded as in tradeoff.study.coding)
    # (a factor the runs cannot judge is held at one level: search/informed.py)
    count = math.prod(len(codes) for codes in problem.cat_codes)
    if count > 256:
        raise SearchError(f"{c} categorical factors make {count} level combinations: "
                          "at most 256 can be searched: fix some factors at one level "
                          "or use fewer levels")
    combos = [np.array(v) for v in itertools.product(*problem.cat_codes)]
    n_starts = starts if starts is not None else max(12, 2 * top)

    # 1. Space-filling batch, every level combination at once.
    X = _candidate_batch(study, problem, combos, rng)
    Y = problem.values(X)
    D, d = problem.score(Y)
    feasible = bool(D.max() > 0)
    S = None if feasible else problem.shortfall(Y)  # needed only when D = 0 everywhere
    radius = max(min_distance, 0.35 * math.sqrt(max(p, 1)))

    # 2. Polish the best distinct candidates.
    optima, optima_y = [], []  # settings and their goal values
    if not feasible and p:
        for i in _starts(X, S, n_starts, radius, higher_better=False):
            cat_values = X[i, problem.cat]
            z = _polish_shortfall(problem, X[i, problem.num], cat_values)
            optima.append(problem.full(z[None, :], cat_values)[0])
        if optima:
            Xo = np.array(optima)
            Yo = problem.values(Xo)
            Do, _ = problem.score(Yo)
            X, Y = np.vstack([X, Xo]), np.vstack([Y, Yo])
            D = np.concatenate([D, Do])
            S = np.concatenate([S, problem.shortfall(Yo)])
            feasible = bool(Do.max() > 0)
            optima, optima_y = ([], []) if feasible else (optima, list(Yo))
    if feasible and p:
        keep = D > 0
        Xs, Ds, Ys = X[keep], D[keep], Y[keep]
        chosen = _starts(Xs, Ds, n_starts, radius)
        if problem.cat:
            # Every level combination with some D > 0 gets at least its best point,
            # so the best recipe with the other binder (say) is among the answers.
            combos_seen = {tuple(Xs[i, problem.cat]) for i in chosen}
            for combo in combos:
                if tuple(combo) in combos_seen:
                    continue
                rows = np.flatnonzero(np.all(Xs[:, problem.cat] == combo, axis=1))
                if len(rows):
                    chosen.append(int(rows[np.argmax(Ds[rows])]))
        # All starts climb together first (one batch per step); starts that end in
        # the same place share one basin, and only one of them is polished.
        Xr, Dr, Yr = _climb(problem, Xs[chosen], Ds[chosen], Ys[chosen])
        Xr = problem.tidy(Xr)
        reps = []
        near = (_distances(Xr) < min_distance).tolist()
        height = Dr.tolist()
        for i in _starts(Xr, Dr, len(Xr), _SAME):
            # A climbed start close to a better one sits on the same peak (compass
            # steps stall along its ridges): polish only the better one.
            if any(near[i][j] and height[i] <= height[j] for j in reps):
                continue
            reps.append(i)
        reps = _one_per_hill(problem, Xr, Dr, reps)
        # Polish several peaks as one block-diagonal problem while it stays small
        # (one batch per iteration); larger blocks converge faster on their own.
        size = len(problem.num) + len(problem.goals)
        per = max(1, _JOINT // size)
        parts = [_polish_d(problem, Xr[reps[j:j + per]][:, problem.num],
                           Xr[reps[j:j + per]][:, problem.cat])
                 for j in range(0, len(reps), per)]
        polished = Xr[reps].copy()
        polished[:, problem.num] = np.vstack([z for z, _ in parts])
        Yp = np.vstack([y for _, y in parts])
        Dp = problem.score(Yp)[0]
        # A joint polish can stall when its peaks differ greatly in D (the shared
        # quasi-Newton steps follow the block with the steepest log D): a peak it
        # left where it started is polished again on its own.
        if per > 1 and len(reps) > 1:
            for j in np.flatnonzero(Dp <= Dr[reps]):
                z, y = _polish_d(problem, Xr[reps[j:j + 1]][:, problem.num],
                                 Xr[reps[j:j + 1]][:, problem.cat])
                d = problem.score(y)[0][0]
                if d > Dp[j]:
                    polished[j, problem.num], Yp[j], Dp[j] = z[0], y[0], d
        # Keep the start itself where the polish did not help (a safety net).
        better = (problem.feasible(polished) & (Dp >= Dr[reps]))[:, None]
        optima += list(np.where(better, polished, Xr[reps]))
        optima_y += list(np.where(better, Yp, Yr[reps]))
    if not optima:  # only categorical factors: the batch is exhaustive
        optima, optima_y = list(X), list(Y)
    Xo, Yo = problem.tidy(np.array(optima)), np.array(optima_y)
    inside = problem.feasible(Xo)
    Xo, Yo = Xo[inside], Yo[inside]
    if not len(Xo):  # a polish drifted past a rule: fall back on the batch's best
        i = [int(np.argmax(D)) if feasible else int(np.argmin(S))]
        Xo, Yo = X[i], Y[i]
    Do, do = problem.score(Yo)
    So = problem.shortfall(Yo)

    # 3. Distinct optima, best first.
    order = np.lexsort((So, -Do)) if feasible else np.lexsort((-Do, So))
    pool = []
    near = (_distances(Xo) < min_distance).tolist()
    for i in order.tolist():
        if any(near[i][j] for j in pool):
            continue
        pool.append(i)
        if len(pool) >= (3 * top if rank_by in ("chance", "production") else top):
            break
    Xbest = Xo[pool]

    # Goals no setting can meet: none of the points tried brought them within limits.
    # (Where D > 0 somewhere, every goal is within its limits there.)
    unreachable = ()
    if not feasible:
        reach = (problem.gaps(Y) == 0).any(axis=0) | (problem.gaps(Yo) == 0).any(axis=0)
        unreachable = tuple(n for n, ok in zip(problem.names(), reach) if not ok)
    return Xbest, feasible, unreachable
