"""The trade-off frontier: the settings where one goal can gain only at another's cost.

``frontier(study, between=("liking", "cost"))`` traces the non-dominated
(Pareto) set of two or three goals, each in its goal's direction (a target
counts as the distance from the target), while every goal's limits hold
(every d > 0, so D > 0 at every point) with the study's rules and search
ranges. It is computed by epsilon-constraint sweeps (Haimes, Lasdon & Wismer
1971): maximise the first goal subject to the second being at least a level,
for levels across the second goal's attainable range, and the same with the
roles swapped, so steep and flat stretches both get points. Every sweep
starts from the best candidates of the search's own space-filling batch and
is solved by SLSQP, many levels at once as one block-diagonal problem (one
batch of model evaluations per iteration). The points kept are spread evenly
along the frontier (by arc length in goals scaled to their ranges).
The result (knee, exchange rate, the D optimum's place) is in
``tradeoff.search.frontier_result``.
"""
from __future__ import annotations

import itertools
import math

import numpy as np

from ..errors import SearchError
from .candidates import _candidate_batch
from .frontier_result import _merit, _non_dominated, goal_sense
from .problem import _Problem, _models_of, _no_goal_error, _rule_parts

__all__ = ["frontier", "goal_sense"]

_STEP = 1e-5  # central-difference step, coded units (as the search's polish)
_INSIDE = 1e-6  # limits are met this far inside (goal widths), so d > 0 strictly
_BLOCK = 30  # at most this many variables in one block-diagonal solve


def _columns(problem, between) -> list[int]:
    """The goal columns named in ``between``, refused in a lab user's words."""
    names = problem.names()
    wanted = [str(b).strip() for b in between]
    if len(wanted) < 2 or len(wanted) > 3:
        raise SearchError(f"a frontier is between two or three goals: found "
                          f"{len(wanted)} ({', '.join(wanted) or 'none'}); name them "
                          "like --between liking,cost")
    seen = set()
    for w in wanted:
        if w in seen:
            raise SearchError(f"goal '{w}' is named twice in the frontier: name two or "
                              "three different goals")
        seen.add(w)
    study = problem.study
    cols = []
    for w in wanted:
        if w not in names:
            known = study.response_names + study.factor_names
            if w in known:
                raise SearchError(f"'{w}' has no goal (or no model), so it has no direction "
                                  "to trade: give it a goal in the study file, or pick "
                                  f"among {', '.join(names)}")
            raise SearchError(f"no goal named '{w}' in the study: pick among "
                              f"{', '.join(names)}")
        i = names.index(w)
        if problem.goals[i].kind == "range":
            raise SearchError(f"'{w}' has a range goal: every value inside its range is "
                              "equally good, so it has no direction to trade; its limits "
                              "already hold on the frontier")
        cols.append(i)
    return cols


def frontier(study, between, *, points: int = 21, seed: int | None = None, fit=None,
             draws: int = 4000):
    """The non-dominated settings of two or three goals, the other limits held.

    Parameters
    ----------
    study : Study
    between : sequence of str
        Two or three goal names (responses or numeric factors with a goal
        other than ``range``).
    points : int
        Number of frontier points returned at most (at least 3).
    seed : int, optional
        Seed of the candidates and the chances (default: the study's seed).
    fit : StudyFit, optional
        Fitted models (fitted here when omitted).
    draws : int
        Monte Carlo draws for the chance of meeting every limit.

    Returns
    -------
    tradeoff.search.frontier_result.Frontier
    """
    from .search import _one_blas_thread

    if not isinstance(points, int) or points < 3:
        raise SearchError(f"a frontier needs at least 3 points, asked for {points!r}")
    seed = study.seed if seed is None else seed
    with _one_blas_thread():
        return _frontier(study, list(between), points, seed, fit, draws)


def _frontier(study, between, n_points, seed, fit, draws):
    from .frontier_result import _assemble
    from .search import _search

    if fit is None:
        from ..model.study_fit import fit_study

        fit = fit_study(study)
    models = _models_of(fit)
    problem = _Problem(study, models)
    if not problem.columns:
        raise _no_goal_error(study, fit)
    cols = _columns(problem, between)
    X_opt, feasible, unreachable = _search(study, problem, top=1, seed=seed)
    if not feasible:
        raise SearchError(_no_room(problem, X_opt, unreachable))
    combos = [np.array(v) for v in itertools.product(*problem.cat_codes)]
    X = _candidate_batch(study, problem, combos, np.random.default_rng(seed))
    X = np.vstack([X, X_opt])
    pool = _sweeps(problem, cols, X, n_points)
    pool = np.vstack([pool, X_opt])
    F = _merit(problem, cols, problem.values(pool))
    keep = _acceptable(problem, pool)
    pool, F = pool[keep], F[keep]
    # differences below a millionth of a goal's range are the solver's dust (a target
    # met to 1e-7, say), not a trade: a point only that much better is no frontier point
    front = _non_dominated(F, tol=1e-6 * np.ptp(F, axis=0) + 1e-12)
    pool, F = pool[front], F[front]
    chosen = _spread(F, n_points)
    return _assemble(study, problem, models, fit, cols, pool[chosen], X_opt[0], seed, draws)


def _no_room(problem, X_opt, unreachable) -> str:
    """Why there is no frontier: which goals' limits cannot be met (together)."""
    if unreachable:
        return ("the limits leave no setting where every goal is met: no setting brings "
                + ", ".join(f"'{u}'" for u in unreachable) + " within its limits; relax "
                "those limits or widen the search ranges")
    gaps = problem.gaps(problem.values(X_opt[:1]))[0]
    short = [n for n, g in zip(problem.names(), gaps) if g > 0]
    return ("the limits leave no setting where every goal is met at once: "
            + ", ".join(f"'{s}'" for s in short) + " cannot all be within their limits "
            "together; relax one of those limits")


def _acceptable(problem, X) -> np.ndarray:
    """Settings inside the rules where every goal's d > 0."""
    Y = problem.values(X)
    D, d = problem.score(Y)
    return problem.feasible(X) & (d > 0).all(axis=1) & np.isfinite(Y).all(axis=1)


def _spread(F, n) -> np.ndarray:
    """Up to n rows of a non-dominated F spread evenly along the frontier.

    Two goals: the points sorted along the curve, then the nearest to n equal
    steps of arc length (goals scaled to their ranges). Three goals: the two
    ends of each goal, then farthest-point sampling (each next point the one
    farthest from those chosen).
    """
    if len(F) <= n:
        return np.arange(len(F))
    span = np.ptp(F, axis=0)
    G = (F - F.min(axis=0)) / np.where(span > 0, span, 1.0)
    if F.shape[1] == 2:
        order = np.argsort(-G[:, 0], kind="stable")
        step = np.sqrt((np.diff(G[order], axis=0) ** 2).sum(axis=1))
        s = np.concatenate([[0.0], np.cumsum(step)])
        chosen = []
        for target in np.linspace(0.0, s[-1], n):
            gap = np.abs(s - target)
            gap[chosen] = np.inf
            chosen.append(int(np.argmin(gap)))
        return order[sorted(set(chosen))]
    chosen = sorted({int(np.argmax(G[:, j])) for j in range(G.shape[1])})
    near = np.min(((G[:, None, :] - G[None, chosen, :]) ** 2).sum(axis=2), axis=1)
    while len(chosen) < n:
        c = int(np.argmax(near))
        if near[c] <= 0:
            break
        chosen.append(c)
        near = np.minimum(near, ((G - G[c]) ** 2).sum(axis=1))
    return np.array(sorted(chosen, key=lambda j: -F[j, 0]), dtype=int)


def _sweeps(problem, cols, X, n_points) -> np.ndarray:
    """Settings from every epsilon-constraint sweep (unfiltered), coded (n, k)."""
    Y = problem.values(X)
    F = _merit(problem, cols, Y)
    ok = _acceptable(problem, X)
    if not ok.any():  # the search found D > 0, the batch did not: start from the optimum
        ok[-1] = True
    q = len(cols)
    # 1. Each goal's best on its own (the frontier's ends), from the best candidates.
    tasks = [(a, {}) for a in range(q)]
    starts = [_start(problem, X, F, ok, a, {}) for a, _ in tasks]
    ends = _solve_all(problem, cols, tasks, starts)
    Fe = _merit(problem, cols, problem.values(ends))
    Xall, Fall = np.vstack([X[ok], ends]), np.vstack([F[ok], Fe])
    lo, hi = Fall.min(axis=0), Fe.max(axis=0)
    worst = np.array([Fe[:, j].min() for j in range(q)])  # each goal at the others' ends
    lo = np.maximum(lo, worst)
    # 2. Levels of the constrained goals across their attainable range.
    tasks = []
    if q == 2:
        per = max(n_points, 8)
        for a in (0, 1):
            b = 1 - a
            for e in np.linspace(lo[b], hi[b], per + 2)[1:-1]:
                tasks.append((a, {b: e}))
    else:
        side = max(3, math.ceil(math.sqrt(n_points)) + 1)
        for a in range(3):
            b, c = [j for j in range(3) if j != a]
            for eb, ec in itertools.product(np.linspace(lo[b], hi[b], side + 2)[1:-1],
                                            np.linspace(lo[c], hi[c], side + 2)[1:-1]):
                tasks.append((a, {b: eb, c: ec}))
    starts = [_start(problem, Xall, Fall, np.ones(len(Xall), bool), a, eps)
              for a, eps in tasks]
    swept = _solve_all(problem, cols, tasks, starts)
    return np.vstack([ends, swept])


def _start(problem, X, F, ok, a, eps) -> np.ndarray:
    """The best point for goal a that meets the levels eps (least short if none does)."""
    short = np.zeros(len(X))
    for b, e in eps.items():
        short += np.maximum(e - F[:, b], 0.0)
    short[~ok] += 1e6
    best = np.lexsort((-F[:, a], short))[0]
    return X[best]


def _solve_all(problem, cols, tasks, starts) -> np.ndarray:
    """Solve every (goal, levels) task from its start, in blocks; settings (n, k)."""
    starts = np.array(starts)
    p = len(problem.num)
    if not p:  # only categorical factors: the batch already holds every setting
        return starts
    out = starts.copy()
    per = max(1, _BLOCK // p)
    for i in range(0, len(tasks), per):
        part = slice(i, i + per)
        Z = _eps_solve(problem, cols, tasks[part], starts[part])
        out[part, problem.num] = Z
        out[part] = problem.tidy(out[part])
    # a solve that ended outside the limits or rules keeps its start
    bad = ~_acceptable(problem, out)
    out[bad] = starts[bad]
    return out


def _eps_solve(problem, cols, tasks, X0) -> np.ndarray:
    """SLSQP for several tasks as one block-diagonal problem; numeric settings (c, p).

    Task b maximises goal ``cols[a]`` (scaled to its goal width; a target's
    squared distance) subject to: each goal's limits, met ``_INSIDE`` widths
    inside; each level e of the goals in ``eps``; the study's rules.
    Every constraint is linear in a goal value: ``coef * y[col] + const >= 0``.
    """
    from scipy.optimize import Bounds, minimize

    c = len(tasks)
    p = len(problem.num)
    cats = X0[:, problem.cat]
    Z0 = X0[:, problem.num]
    steps = np.vstack([np.zeros(p), _STEP * np.eye(p), -_STEP * np.eye(p)])
    cat_rows = np.repeat(cats, 2 * p + 1, axis=0)
    last = [None, None]

    def at(v):
        key = v.tobytes()
        if key != last[0]:
            Z = v.reshape(c, p)
            pts = (Z[:, None, :] + steps[None]).reshape(-1, p)
            Y = problem.values(problem.full(pts, cat_rows)).reshape(c, 2 * p + 1, -1)
            last[:] = key, (Y[:, 0], (Y[:, 1:p + 1] - Y[:, p + 1:]) / (2 * _STEP))
        return last[1]

    # the limits, the same for every task
    col, coef, base = [], [], []
    for i, g in enumerate(problem.goals):
        w = problem.width[i]
        if np.isfinite(problem.lim_lo[i]):
            col.append(i), coef.append(1 / w), base.append(-problem.lim_lo[i] / w - _INSIDE)
        if np.isfinite(problem.lim_hi[i]):
            col.append(i), coef.append(-1 / w), base.append(problem.lim_hi[i] / w - _INSIDE)
    # each task's levels: f_b(y) >= e, written as one or two rows in y
    rows = []
    for a, eps in tasks:
        extra = []
        for b, e in sorted(eps.items()):
            i = cols[b]
            g = problem.goals[i]
            w = problem.width[i]
            s = goal_sense(g)
            if s:
                extra.append((i, s / w, -e / w))
            else:  # |y - t| <= -e
                extra.append((i, 1 / w, (-e - g.target) / w))
                extra.append((i, -1 / w, (-e + g.target) / w))
        rows.append(extra)
    n_extra = max((len(r) for r in rows), default=0)
    # tasks with fewer levels repeat a harmless limit row so every block has r rows
    colE = np.zeros((c, n_extra), dtype=int)
    coefE = np.zeros((c, n_extra))
    baseE = np.ones((c, n_extra))
    for b, extra in enumerate(rows):
        for j, (i, a_, k_) in enumerate(extra):
            colE[b, j], coefE[b, j], baseE[b, j] = i, a_, k_
    col = np.array(col, dtype=int)
    coef, base = np.array(coef), np.array(base)
    objective = [(cols[a], problem.goals[cols[a]], problem.width[cols[a]]) for a, _ in tasks]
    o_col = np.array([o[0] for o in objective])
    o_sense = np.array([goal_sense(o[1]) for o in objective])
    o_target = np.array([o[1].target if o[1].kind == "target" else 0.0 for o in objective])
    o_w = np.array([o[2] for o in objective])
    rules = [_rule_parts(problem, cats[b]) for b in range(c)]
    n_rules = 0 if rules[0][0] is None else len(rules[0][1])
    blocks = np.arange(c)

    def fun(v):
        y, _ = at(v)
        u = y[blocks, o_col]
        val = np.where(o_sense != 0, o_sense * u / o_w, -((u - o_target) / o_w) ** 2)
        return -float(val.sum())

    def jac(v):
        y, J = at(v)
        u = y[blocks, o_col]
        dv = np.where(o_sense != 0, o_sense / o_w, -2 * (u - o_target) / o_w ** 2)
        return -(J[blocks, :, o_col] * dv[:, None]).ravel()

    def cons(v):
        y, _ = at(v)
        out = [(coef * y[:, col] + base).ravel(),
               (coefE * y[blocks[:, None], colE] + baseE).ravel()]
        if n_rules:
            Z = v.reshape(c, p)
            out += [rules[b][1] - rules[b][0] @ Z[b] for b in range(c)]
        return np.concatenate(out)

    r1, r2 = len(col), n_extra

    def cons_jac(v):
        _, J = at(v)
        G1 = np.zeros((c, r1, c, p))
        G1[blocks, :, blocks, :] = (J[:, :, col] * coef).transpose(0, 2, 1)
        G2 = np.zeros((c, r2, c, p))
        G2[blocks, :, blocks, :] = (J[blocks[:, None], :, colE]
                                    * coefE[:, :, None])
        parts = [G1.reshape(c * r1, c * p), G2.reshape(c * r2, c * p)]
        if n_rules:
            G3 = np.zeros((c, n_rules, c, p))
            for b in range(c):
                G3[b, :, b, :] = -rules[b][0]
            parts.append(G3.reshape(c * n_rules, c * p))
        return np.vstack(parts)

    res = minimize(fun, Z0.ravel(), jac=jac, method="SLSQP",
                   bounds=Bounds(np.tile(problem.lo, c), np.tile(problem.hi, c)),
                   constraints=[{"type": "ineq", "fun": cons, "jac": cons_jac}],
                   options={"maxiter": 100, "ftol": 1e-9 * c})
    return np.clip(res.x.reshape(c, p), problem.lo, problem.hi)
