"""The best-settings search: the factor settings that best balance every goal.

``optimize`` maximises the overall desirability D (see ``tradeoff.desirability``)
over the searched region: each numeric factor's ``search`` range (default
low..high), the study's linear rules, and every combination of categorical
levels. D has kinks (where a desirability reaches 0 or 1), flat zero regions
and often several local maxima, so the search works in three steps:

1. a scrambled Sobol batch of candidates per level combination (scipy.stats.qmc),
   half of it stretched onto the region's faces, plus its corners, evaluated at
   once;
2. the best candidates that lie apart (in coded units; every level combination
   with D > 0 gets one) climb together by compass steps, one batch per step;
   starts that end on the same peak are grouped;
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
"""
from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from .chance import chance_in_limits
from .constraints import rule_arrays, study_rules
from .desirability import combine_desirability, desirability, limits, shortfall
from .cautions import FOOD_CAUTION, FOOD_CAUTIONS
from .errors import SearchError

__all__ = ["optimize", "overall_desirability", "goal_columns", "ResponseOutcome",
           "Solution", "OptimizationResult", "RANKINGS"]

RANKINGS = ("desirability", "chance")
_STEP = 1e-5  # central-difference step in coded units (models are smooth polynomials)
_EDGE = 1e-3  # coded distance that counts as "on the edge"
_SAME = 0.05  # climbed starts closer than this (coded) share one basin
_JOINT = 30  # at most this many variables in one joint polish


# --------------------------------------------------------------------------
# Result objects


@dataclass(frozen=True)
class ResponseOutcome:
    """One response at one solution.

    Attributes
    ----------
    name : str
    goal : str
        The goal kind (``none`` when the response takes no part).
    predicted : float
        Model prediction of the mean, natural units.
    desirability : float or None
        Individual desirability (None when the goal is ``none``).
    ci, pi : tuple of float
        Confidence interval of the mean and prediction interval of one new
        measurement, at the study's confidence level.
    chance_in_limits : float or None
        Monte Carlo chance that one batch made at these settings lands within
        the goal's limits (None when the goal is ``none``).
    """

    name: str
    goal: str
    predicted: float
    desirability: float | None
    ci: tuple
    pi: tuple
    chance_in_limits: float | None


@dataclass(frozen=True)
class Solution:
    """One recommended setting.

    Attributes
    ----------
    rank : int
        Position in the result (1 = best under the chosen ranking).
    label : str
        ``S1``, ``S2``, ... in order of D, stable whatever the ranking.
    settings : dict
        Factor name -> natural value (level name for a categorical factor).
    coded : dict
        Factor name -> coded value (-1/+1 for a categorical factor).
    desirability : float
        Overall desirability D at these settings.
    predictions : dict
        Response name -> predicted value (every modelled response).
    responses : dict
        Response name -> ResponseOutcome.
    factor_desirability : dict
        Factor name -> desirability, for factors that have a goal.
    chance_all : float or None
        Chance that every response with a goal lands within its limits at once.
    out_of_limits : tuple of str
        Goals (responses or factors) whose desirability is 0 here.
    shortfall : float
        Weighted squared distance outside the limits (0 when D > 0).
    warnings : tuple of str
        Warnings about these settings (edge of the region, outside the data).
        Warnings about the whole search are in ``OptimizationResult.warnings``;
        ``OptimizationResult.to_dict`` lists both under each solution.
    """

    rank: int
    label: str
    settings: dict
    coded: dict
    desirability: float
    predictions: dict
    responses: dict
    factor_desirability: dict
    chance_all: float | None
    out_of_limits: tuple
    shortfall: float
    warnings: tuple

    def to_dict(self, digits: int = 6) -> dict:
        """JSON-ready dict in the CLI's shape (this solution's own warnings only)."""
        r = _rounder(digits)
        return {
            "rank": self.rank, "label": self.label,
            "settings": {k: (v if isinstance(v, str) else r(v))
                         for k, v in self.settings.items()},
            "coded": {k: (v if isinstance(v, int) else r(v)) for k, v in self.coded.items()},
            "desirability": r(self.desirability),
            "responses": {
                name: {"predicted": r(o.predicted), "desirability": r(o.desirability),
                       "ci": [r(o.ci[0]), r(o.ci[1])], "pi": [r(o.pi[0]), r(o.pi[1])],
                       "chance_in_limits": r(o.chance_in_limits), "goal": o.goal}
                for name, o in self.responses.items()},
            "factor_desirability": {k: r(v) for k, v in self.factor_desirability.items()},
            "chance_all": r(self.chance_all),
            "out_of_limits": list(self.out_of_limits),
            "warnings": list(self.warnings),
        }


@dataclass(frozen=True)
class OptimizationResult:
    """What ``optimize`` found.

    Attributes
    ----------
    study : str
        The study's name.
    solutions : tuple of Solution
        Best first (by D, or by the chance of meeting all limits when
        ``rank_by == "chance"``); distinct local optima at least
        ``min_distance`` coded units apart.
    rank_by : str
        ``desirability`` or ``chance``.
    seed : int
        Seed of the Sobol batch and of the Monte Carlo draws.
    feasible : bool
        True when some setting makes every desirability positive (D > 0).
    unreachable : tuple of str
        Goals that no setting in the searched region brings within limits.
    warnings : tuple of str
        Warnings about the whole search (models left out, poor models).
    assumptions : tuple of str
        How the chances were computed.
    evaluations : int
        Number of points at which the models were evaluated.
    correlation : pandas.DataFrame
        Correlation between responses used for the chances.
    """

    study: str
    solutions: tuple
    rank_by: str
    seed: int
    feasible: bool
    unreachable: tuple
    warnings: tuple
    assumptions: tuple
    evaluations: int
    correlation: pd.DataFrame = field(default=None, compare=False, repr=False)

    @property
    def best(self) -> Solution:
        """The first solution."""
        return self.solutions[0]

    def to_dict(self, digits: int = 6) -> dict:
        """The CLI's ``--json`` output: ``best``, ``solutions`` and a few more keys."""
        solutions = []
        for s in self.solutions:
            entry = s.to_dict(digits)
            entry["warnings"] = list(s.warnings) + list(self.warnings)
            solutions.append(entry)
        return {
            "best": solutions[0],
            "solutions": solutions,
            "study": self.study, "rank_by": self.rank_by, "seed": self.seed,
            "feasible": self.feasible, "unreachable": list(self.unreachable),
            "warnings": list(self.warnings), "assumptions": list(self.assumptions),
            "cautions": list(FOOD_CAUTIONS),
            "evaluations": self.evaluations,
        }

    def table(self) -> pd.DataFrame:
        """Tidy table: one row per solution and response.

        Columns: solution (label), rank, one column per factor (natural
        setting), response, predicted, desirability, ci_low, ci_high, pi_low,
        pi_high, chance_in_limits, D (overall desirability), chance_all.
        """
        rows = []
        for s in self.solutions:
            for name, o in s.responses.items():
                row = {"solution": s.label, "rank": s.rank}
                row.update(s.settings)
                row.update({"response": name, "predicted": o.predicted,
                            "desirability": o.desirability, "ci_low": o.ci[0],
                            "ci_high": o.ci[1], "pi_low": o.pi[0], "pi_high": o.pi[1],
                            "chance_in_limits": o.chance_in_limits,
                            "D": s.desirability, "chance_all": s.chance_all})
                rows.append(row)
        return pd.DataFrame(rows)

    def text(self) -> str:
        """A readable summary for the terminal."""
        lines = []
        if not self.feasible:
            lines.append("No setting in the searched region brings every goal within its "
                         "limits (D = 0 everywhere). Closest settings shown.")
            if self.unreachable:
                lines.append("Cannot be brought within limits anywhere: "
                             + ", ".join(self.unreachable))
        for s in self.solutions:
            head = "Best settings" if s.rank == 1 else f"Alternative {s.rank - 1}"
            chance = "" if s.chance_all is None else \
                f", chance all within limits {s.chance_all:.0%}"
            lines.append(f"\n{head} ({s.label}): overall desirability D = "
                         f"{s.desirability:.3f}{chance}")
            for name, value in s.settings.items():
                shown = value if isinstance(value, str) else f"{value:.4g}"
                code = s.coded[name]
                code = f"{code:+d}" if isinstance(code, int) else f"{code:+.3f}"
                lines.append(f"  {name:<18} {shown:>12}   (coded {code})")
            lines.append(f"  {'response':<18} {'predicted':>10} {'d':>6}  "
                         f"{'prediction interval':>23} {'chance':>7}")
            for name, o in s.responses.items():
                d = "-" if o.desirability is None else f"{o.desirability:.3f}"
                ch = "-" if o.chance_in_limits is None else f"{o.chance_in_limits:.0%}"
                pi = f"{o.pi[0]:.4g} .. {o.pi[1]:.4g}"
                lines.append(f"  {name:<18} {o.predicted:>10.4g} {d:>6}  {pi:>23} {ch:>7}")
            for name, d in s.factor_desirability.items():
                lines.append(f"  factor goal {name}: d = {d:.3f}")
            if s.out_of_limits:
                lines.append("  outside limits: " + ", ".join(s.out_of_limits))
            for w in s.warnings:
                lines.append(f"  note: {w}")
        for w in self.warnings:
            lines.append(f"note: {w}")
        for a in self.assumptions:
            lines.append(f"chances: {a}")
        lines.append("cautions: " + FOOD_CAUTION)
        return "\n".join(lines).lstrip("\n")


def _rounder(digits):
    def r(x):
        if x is None:
            return None
        x = float(x)
        if not math.isfinite(x):
            return None
        return float(f"{x:.{digits}g}")
    return r


# --------------------------------------------------------------------------
# The goals and their evaluation


def _models_of(fit) -> dict:
    return dict(fit.models) if hasattr(fit, "models") else dict(fit)


def goal_columns(study, fit) -> list[tuple[str, str]]:
    """The goals taking part in D, in column order: (kind, name) pairs.

    ``kind`` is ``response`` (responses with an active goal and a fitted
    model, study order) then ``factor`` (numeric factors with a goal).
    """
    models = _models_of(fit)
    cols = [("response", r.name) for r in study.responses
            if r.goal.active and r.name in models]
    cols += [("factor", f.name) for f in study.factors
             if not f.is_categorical and f.goal.active]
    return cols


def _no_goal_error(study, fit) -> SearchError:
    """Why nothing takes part in D: no goals at all, or goals whose models failed."""
    skipped = getattr(fit, "skipped", {})
    lost = [(r.name, skipped[r.name]) for r in study.responses
            if r.goal.active and r.name in skipped]
    if lost:
        name, why = lost[0]
        return SearchError(f"every response with a goal lacks a model, so there is "
                           f"nothing to balance: '{name}': {why}")
    return SearchError("no response or factor has a goal: give at least one a goal "
                       "(maximize, minimize, target or range) in the study file")


class _Problem:
    """The study's goals, region and models, in arrays, for batched evaluation."""

    def __init__(self, study, fit):
        self.study = study
        self.models = _models_of(fit)
        factors = study.factors
        self.k = len(factors)
        self.num = [j for j, f in enumerate(factors) if not f.is_categorical]
        self.cat = [j for j, f in enumerate(factors) if f.is_categorical]
        self.centre = np.array([0.0 if f.is_categorical else f.centre for f in factors])
        self.half = np.array([1.0 if f.is_categorical else f.half_range for f in factors])
        rng = [f.search_range for f in factors if not f.is_categorical]
        self.lo = np.array([(a - self.centre[j]) / self.half[j]
                            for (a, _), j in zip(rng, self.num)])
        self.hi = np.array([(b - self.centre[j]) / self.half[j]
                            for (_, b), j in zip(rng, self.num)])
        self.columns = goal_columns(study, self.models)
        self.goals = [study.response(n).goal if kind == "response" else study.factor(n).goal
                      for kind, n in self.columns]
        self.col_models = [self.models[n] for kind, n in self.columns if kind == "response"]
        self.col_factor = [study.factor_names.index(n) for kind, n in self.columns
                           if kind == "factor"]
        self.weights = np.array([g.weight for g in self.goals])
        self.A, self.b = rule_arrays(study, coded=True)
        self.evaluations = 0

    def names(self) -> list[str]:
        return [n for _, n in self.columns]

    def values(self, X) -> np.ndarray:
        """(n, m) natural values of every goal column at coded points X (n, k)."""
        X = np.atleast_2d(X)
        self.evaluations += len(X)
        cols = [np.asarray(m.predict(X), dtype=float).reshape(len(X))
                for m in self.col_models]
        cols += [self.centre[j] + self.half[j] * X[:, j] for j in self.col_factor]
        return np.column_stack(cols) if cols else np.empty((len(X), 0))

    def score(self, Y):
        d = np.column_stack([desirability(Y[:, i], g) for i, g in enumerate(self.goals)])
        return combine_desirability(d, self.weights), d

    def shortfall(self, Y) -> np.ndarray:
        s = np.column_stack([shortfall(Y[:, i], g) for i, g in enumerate(self.goals)])
        return (s ** 2) @ self.weights

    def full(self, Z, cat_values) -> np.ndarray:
        """Numeric coded points Z (n, p) and categorical values -> (n, k)."""
        X = np.empty((len(Z), self.k))
        X[:, self.num] = Z
        X[:, self.cat] = np.asarray(cat_values, dtype=float)
        return X

    def feasible(self, X, tol=1e-7) -> np.ndarray:
        if len(self.b) == 0:
            return np.ones(len(X), dtype=bool)
        return np.all(X @ self.A.T - self.b <= tol * np.maximum(1.0, np.abs(self.b)), axis=1)


def overall_desirability(study, fit, X_coded):
    """Overall desirability D and the individual ones at coded settings.

    Parameters
    ----------
    study : Study
    fit : StudyFit or dict
        The fitted models (``fit.models``: response name -> model).
    X_coded : array_like, shape (n, k)
        Settings in coded units, every study factor in study order
        (categorical factors -1/+1).

    Returns
    -------
    D : numpy.ndarray, shape (n,)
    d : numpy.ndarray, shape (n, m)
        Columns as listed by ``goal_columns(study, fit)``.
    """
    problem = _Problem(study, fit)
    if not problem.columns:
        raise _no_goal_error(study, fit)
    X = np.atleast_2d(np.asarray(X_coded, dtype=float))
    return problem.score(problem.values(X))


# --------------------------------------------------------------------------
# Local polish


class _Local:
    """Values and their derivatives at one point, by one batched evaluation."""

    def __init__(self, problem, cat_values):
        self.p = problem
        self.cat_values = cat_values
        self.key = None

    def at(self, z):
        key = z.tobytes()
        if key != self.key:
            p = len(z)
            steps = np.vstack([np.zeros(p), _STEP * np.eye(p), -_STEP * np.eye(p)])
            Y = self.p.values(self.p.full(z[None, :] + steps, self.cat_values))
            self.y = Y[0]
            self.J = (Y[1:p + 1] - Y[p + 1:]) / (2 * _STEP)  # (p, m)
            self.key = key
        return self.y, self.J


def _rule_parts(problem, cat_values):
    """Rules restricted to the numeric columns: A_num z <= b_eff."""
    if len(problem.b) == 0:
        return None, None
    A_num = problem.A[:, problem.num]
    b_eff = problem.b - problem.A[:, problem.cat] @ np.asarray(cat_values, dtype=float)
    return A_num, b_eff


def _polish_d(problem, Z0, cats):
    """SLSQP on the smooth form of max D, from several points at once.

    ``Z0`` (c, p) numeric starts and ``cats`` (c, n_cat) their categorical
    values. The c problems are independent; solving them as one block-diagonal
    problem evaluates every block in one batch per iteration. Returns (c, p).
    """
    from scipy.optimize import minimize

    Z0 = np.atleast_2d(Z0)
    c, p = Z0.shape
    goals = problem.goals
    tcols = [i for i, g in enumerate(goals) if g.kind in ("maximize", "minimize", "target")]
    q = len(tcols)
    wt = problem.weights[tcols] / problem.weights.sum()
    steps = np.vstack([np.zeros(p), _STEP * np.eye(p), -_STEP * np.eye(p)])  # (2p+1, p)
    cats = np.asarray(cats, dtype=float).reshape(c, -1)
    cat_rows = np.repeat(cats, 2 * p + 1, axis=0)
    cache = {}

    def at(v):
        key = v.tobytes()
        if key not in cache:
            Z = v[:c * p].reshape(c, p)
            pts = (Z[:, None, :] + steps[None]).reshape(-1, p)
            Y = problem.values(problem.full(pts, cat_rows)).reshape(c, 2 * p + 1, -1)
            cache.clear()
            cache[key] = (Y[:, 0], (Y[:, 1:p + 1] - Y[:, p + 1:]) / (2 * _STEP))
        return cache[key]  # y (c, m), J (c, p, m)

    # Each piece: coefficient on y (scaled), constant, t index (-1 for none), exponent.
    pieces = []
    for i, g in enumerate(goals):
        ti = tcols.index(i) if i in tcols else -1
        width = g.upper - g.lower
        if g.kind == "maximize":
            pieces.append((i, 1 / width, -g.lower / width, ti, 1 / g.shape))
        elif g.kind == "minimize":
            pieces.append((i, -1 / width, g.upper / width, ti, 1 / g.shape))
        elif g.kind == "target":
            below, above = g.target - g.lower, g.upper - g.target
            pieces.append((i, 1 / below, -g.lower / below, ti, 1 / g.shape_below))
            pieces.append((i, -1 / above, g.upper / above, ti, 1 / g.shape_above))
        elif g.kind == "range":
            pieces.append((i, 1 / width, -g.lower / width, -1, 1.0))
            pieces.append((i, -1 / width, g.upper / width, -1, 1.0))
    col = np.array([pc[0] for pc in pieces])
    a = np.array([pc[1] for pc in pieces])
    const = np.array([pc[2] for pc in pieces])
    tix = np.array([pc[3] for pc in pieces])
    ex = np.array([pc[4] for pc in pieces])
    rows_t = np.flatnonzero(tix >= 0)
    r = len(pieces)
    rules = [_rule_parts(problem, cats[b]) for b in range(c)]
    n_rules = 0 if rules[0][0] is None else len(rules[0][1])

    def cons(v):
        y, _ = at(v)
        T = v[c * p:].reshape(c, q)
        g = a * y[:, col] + const
        g[:, rows_t] -= T[:, tix[rows_t]] ** ex[rows_t]
        out = [g.ravel()]
        if n_rules:
            Z = v[:c * p].reshape(c, p)
            out += [rules[b][1] - rules[b][0] @ Z[b] for b in range(c)]
        return np.concatenate(out)

    def cons_jac(v):
        _, J = at(v)
        T = v[c * p:].reshape(c, q)
        G = np.zeros((c * (r + n_rules), c * (p + q)))
        for b in range(c):
            rows = slice(b * r, (b + 1) * r)
            G[rows, b * p:(b + 1) * p] = (J[b][:, col] * a).T
            G[b * r + rows_t, c * p + b * q + tix[rows_t]] = \
                -ex[rows_t] * T[b, tix[rows_t]] ** (ex[rows_t] - 1)
            if n_rules:
                base = c * r + b * n_rules
                G[base:base + n_rules, b * p:(b + 1) * p] = -rules[b][0]
        return G

    def fun(v):
        return -float(np.log(v[c * p:]).reshape(c, q).sum(axis=0) @ wt)

    def jac(v):
        return np.concatenate([np.zeros(c * p), -(wt[None, :] / v[c * p:].reshape(c, q)).ravel()])

    y0, _ = at(np.concatenate([Z0.ravel(), np.ones(c * q)]))
    d0 = problem.score(y0)[1]
    T0 = np.clip(d0[:, tcols] * (1 - 1e-9), 1e-12, 1.0)
    bounds = list(zip(np.tile(problem.lo, c), np.tile(problem.hi, c))) + \
        [(1e-12, 1.0)] * (c * q)
    res = minimize(fun, np.concatenate([Z0.ravel(), T0.ravel()]), jac=jac, method="SLSQP",
                   bounds=bounds, constraints=[{"type": "ineq", "fun": cons, "jac": cons_jac}],
                   options={"maxiter": 100, "ftol": 1e-10 * c})
    return np.clip(res.x[:c * p].reshape(c, p), problem.lo, problem.hi)


def _polish_shortfall(problem, z0, cat_values):
    """SLSQP on the weighted squared shortfall from z0 (when D is 0 everywhere)."""
    from scipy.optimize import minimize

    local = _Local(problem, cat_values)
    goals = problem.goals
    w = problem.weights
    bounds_lh = [limits(g) for g in goals]
    lo = np.array([b[0] for b in bounds_lh])
    hi = np.array([b[1] for b in bounds_lh])
    width = np.array([g.upper - g.lower for g in goals])
    A_num, b_eff = _rule_parts(problem, cat_values)

    def parts(z):
        y, J = local.at(z)
        below = np.maximum(lo - y, 0.0) / width
        above = np.maximum(y - hi, 0.0) / width
        return below, above, J

    def fun(z):
        below, above, _ = parts(z)
        return float(w @ (below + above) ** 2)

    def jac(z):
        below, above, J = parts(z)
        grad_y = 2 * w * (above - below) / width
        return J @ grad_y

    constraints = []
    if A_num is not None:
        constraints = [{"type": "ineq", "fun": lambda z: b_eff - A_num @ z,
                        "jac": lambda z: -A_num}]
    res = minimize(fun, z0, jac=jac, method="SLSQP",
                   bounds=list(zip(problem.lo, problem.hi)), constraints=constraints,
                   options={"maxiter": 200, "ftol": 1e-14})
    return np.clip(res.x, problem.lo, problem.hi)


# --------------------------------------------------------------------------
# The global search


def _batch_size(p: int, combos: int) -> int:
    exponent = 10 + min(p, 6) // 2 if p else 0
    while combos > 1 and exponent > 8 and (2 ** exponent) * combos > 2 ** 14:
        exponent -= 1
    return 2 ** exponent


def _starts(X, score, n_starts, radius, higher_better=True):
    """Indices of the best points that lie apart (greedy, wide spacing first).

    A first pass keeps points at least ``radius`` apart, so different basins
    get a start; a second pass fills up with points a third as far apart.
    """
    order = np.argsort(-score if higher_better else score, kind="stable")[:4000]
    Xo = X[order]
    chosen = []
    for spacing in (radius, radius / 3):
        gap = np.full(len(order), np.inf)
        for c in chosen:
            gap = np.minimum(gap, np.linalg.norm(Xo - Xo[c], axis=1))
        while len(chosen) < n_starts:
            free = np.flatnonzero(gap >= spacing)
            if not len(free):
                break
            c = int(free[0])  # the best remaining point far enough from the chosen
            chosen.append(c)
            gap = np.minimum(gap, np.linalg.norm(Xo - Xo[c], axis=1))
    return [int(order[c]) for c in chosen]


def _climb(problem, X, D, rounds: int = 20, step: float = 0.1):
    """Compass search on D from every start at once (one batch per round).

    Each start tries a step up and down every numeric factor, moves to its best
    feasible neighbour when that improves D, and halves its step otherwise.
    """
    X, D = X.copy(), D.copy()
    s, p = len(X), len(problem.num)
    steps = np.full(s, step * float(np.max(problem.hi - problem.lo)) / 2)
    moves = np.vstack([np.eye(p), -np.eye(p)])  # (2p, p)
    for _ in range(rounds):
        if steps.max() < 2e-3:  # every start has settled: the polish does the rest
            break
        trial = np.repeat(X, 2 * p, axis=0)
        trial[:, problem.num] += (steps[:, None, None] * moves[None]).reshape(-1, p)
        trial[:, problem.num] = np.clip(trial[:, problem.num], problem.lo, problem.hi)
        Dt = problem.score(problem.values(trial))[0]
        Dt[~problem.feasible(trial)] = -1.0
        Dt = Dt.reshape(s, 2 * p)
        best = np.argmax(Dt, axis=1)
        gain = Dt[np.arange(s), best] > D
        pick = trial.reshape(s, 2 * p, -1)[np.arange(s), best]
        X[gain] = pick[gain]
        D[gain] = Dt[np.arange(s), best][gain]
        steps[~gain] /= 2
    return X, D


def _chebyshev_centre(problem, cat_values):
    """A point well inside the box and the rules (None when the region is empty)."""
    from scipy.optimize import linprog

    A_num, b_eff = _rule_parts(problem, cat_values)
    p = len(problem.num)
    norms = np.linalg.norm(A_num, axis=1)
    # maximise r subject to A z + r |a| <= b, lo + r <= z <= hi - r
    A_ub = np.vstack([np.hstack([A_num, norms[:, None]]),
                      np.hstack([-np.eye(p), np.ones((p, 1))]),
                      np.hstack([np.eye(p), np.ones((p, 1))])])
    b_ub = np.concatenate([b_eff, -problem.lo, problem.hi])
    cost = np.zeros(p + 1)
    cost[-1] = -1.0
    res = linprog(cost, A_ub=A_ub, b_ub=b_ub, bounds=[(None, None)] * p + [(0, None)],
                  method="highs")
    if res.status != 0:
        return None
    return res.x[:p]


def optimize(study, *, top: int = 5, seed: int | None = None, fit=None,
             rank_by: str = "desirability", min_distance: float = 0.25,
             draws: int = 20000, starts: int | None = None) -> OptimizationResult:
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
    rank_by : {"desirability", "chance"}
        Order solutions by D, or by the chance that every response lands
        within its limits.
    min_distance : float
        Optima closer than this (coded units) to a better one are the same
        solution.
    draws : int
        Monte Carlo draws for the chances.
    starts : int, optional
        Number of candidates polished (default ``max(12, 2 * top)``).

    Returns
    -------
    OptimizationResult
    """
    if rank_by not in RANKINGS:
        raise SearchError(f"rank_by = '{rank_by}' is not a ranking I know: use "
                          "'desirability' or 'chance'")
    if not isinstance(top, int) or top < 1:
        raise SearchError(f"top must be a whole number of at least 1, found {top!r}")
    seed = study.seed if seed is None else seed
    if fit is None:
        from .models import fit_study

        fit = fit_study(study)
    models = _models_of(fit)
    problem = _Problem(study, models)
    if not problem.columns:
        raise _no_goal_error(study, fit)
    study_rules(study)  # re-check the rules in case the study was built by hand
    X, feasible, unreachable = _search(study, problem, top=top, seed=seed,
                                       rank_by=rank_by, min_distance=min_distance,
                                       starts=starts)
    return _result(study, problem, models, fit, X, top, seed, rank_by, feasible,
                   unreachable, draws)


def _search(study, problem, *, top, seed, rank_by="desirability", min_distance=0.25,
            starts=None):
    """The settings only: (coded points best first, feasible, unreachable goals)."""
    rng = np.random.default_rng(seed)
    p, c = len(problem.num), len(problem.cat)
    combos = [np.array(v) for v in itertools.product([-1.0, 1.0], repeat=c)]
    if len(combos) > 256:
        raise SearchError(f"{c} categorical factors make {len(combos)} level combinations: "
                          "at most 8 categorical factors can be searched")
    n_starts = starts if starts is not None else max(12, 2 * top)

    # 1. Space-filling batch, every level combination at once.
    if p:
        from scipy.stats import qmc

        n = _batch_size(p, len(combos))
        sob = qmc.Sobol(d=p, scramble=True, seed=rng).random(n)
        # Optima of D often sit on faces, edges or corners of the region, which a
        # uniform batch in several dimensions barely reaches: half the batch is
        # stretched past the region and clipped back onto its boundary.
        stretch = np.ones((n, 1))
        stretch[n // 2:] = 1.4
        sob = np.clip(0.5 + (sob - 0.5) * stretch, 0.0, 1.0)
        Z = problem.lo + sob * (problem.hi - problem.lo)
        if p <= 10:
            corners = np.array(list(itertools.product([0.0, 1.0], repeat=p)))
            Z = np.vstack([Z, problem.lo + corners * (problem.hi - problem.lo)])
    else:
        Z = np.zeros((1, 0))
    blocks = []
    for combo in combos:
        Zc = Z
        if len(problem.b):
            centre = _chebyshev_centre(problem, combo)
            if centre is None:
                continue
            Zc = np.vstack([Z, centre])
        blocks.append(problem.full(Zc, combo))
    if not blocks:
        rules = "; ".join(f"'{c['rule']}'" for c in study.constraints)
        raise SearchError(f"no setting inside the search ranges meets every rule ({rules}): "
                          "relax a rule or widen a factor's search range")
    X = np.vstack(blocks)
    X = X[problem.feasible(X)]
    Y = problem.values(X)
    D, d = problem.score(Y)
    S = problem.shortfall(Y)
    radius = max(min_distance, 0.35 * math.sqrt(max(p, 1)))

    # 2. Polish the best distinct candidates.
    optima = []
    feasible = bool(D.max() > 0)
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
            optima = [] if feasible else optima
    if feasible and p:
        keep = D > 0
        Xs, Ds = X[keep], D[keep]
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
        Xr, Dr = _climb(problem, Xs[chosen], Ds[chosen])
        reps = []
        for i in _starts(Xr, Dr, len(Xr), _SAME):
            # A climbed start close to a better one sits on the same peak (compass
            # steps stall along its ridges): polish only the better one.
            if any(np.linalg.norm(Xr[j] - Xr[i]) < min_distance and Dr[i] <= Dr[j]
                   for j in reps):
                continue
            reps.append(i)
        # Polish several peaks as one block-diagonal problem while it stays small
        # (one batch per iteration); larger blocks converge faster on their own.
        size = len(problem.num) + len(problem.goals)
        per = max(1, _JOINT // size)
        Zp = np.vstack([_polish_d(problem, Xr[reps[j:j + per]][:, problem.num],
                                  Xr[reps[j:j + per]][:, problem.cat])
                        for j in range(0, len(reps), per)])
        polished = Xr[reps].copy()
        polished[:, problem.num] = Zp
        Dp = problem.score(problem.values(polished))[0]
        # Keep the start itself where the polish did not help (a safety net).
        better = problem.feasible(polished) & (Dp >= Dr[reps])
        optima += list(np.where(better[:, None], polished, Xr[reps]))
    if not optima:  # only categorical factors: the batch is exhaustive
        optima = list(X)
    Xo = np.array(optima)
    Xo = Xo[problem.feasible(Xo)]
    if not len(Xo):  # a polish drifted past a rule: fall back on the batch's best
        Xo = X[[int(np.argmax(D)) if feasible else int(np.argmin(S))]]
    Yo = problem.values(Xo)
    Do, do = problem.score(Yo)
    So = problem.shortfall(Yo)

    # 3. Distinct optima, best first.
    order = np.lexsort((So, -Do)) if feasible else np.lexsort((-Do, So))
    pool = []
    for i in order:
        if pool and np.min(np.linalg.norm(Xo[pool] - Xo[i], axis=1)) < min_distance:
            continue
        pool.append(i)
        if len(pool) >= (3 * top if rank_by == "chance" else top):
            break
    Xbest = Xo[pool]

    # Goals no setting can meet: none of the points tried brought them within limits.
    Yall = np.vstack([Y, Yo])
    reach = np.column_stack([shortfall(Yall[:, i], g) for i, g in enumerate(problem.goals)])
    unreachable = tuple(n for n, ok in zip(problem.names(), (reach == 0).any(axis=0))
                        if not ok)
    return Xbest, feasible, unreachable


# --------------------------------------------------------------------------
# Building the result


def _result(study, problem, models, fit, X, top, seed, rank_by, feasible, unreachable,
            draws) -> OptimizationResult:
    Y = problem.values(X)
    D, d = problem.score(Y)
    S = problem.shortfall(Y)
    names = problem.names()
    chances = chance_in_limits(study, models, X, draws=draws, seed=seed)
    intervals = {r.name: models[r.name].intervals(X, level=study.confidence)
                 for r in study.responses if r.name in models}
    chance_col = {n: i for i, n in enumerate(chances.responses)}
    order = np.arange(len(X))
    if rank_by == "chance":
        order = np.lexsort((-D, -np.nan_to_num(chances.all, nan=-1.0)))
    order = order[:top]
    by_d = {int(i): n for n, i in enumerate(np.lexsort((S, -D)), start=1)}
    general = _general_warnings(study, problem, models, fit)

    solutions = []
    for rank, i in enumerate(order, start=1):
        i = int(i)
        x = X[i]
        settings, coded = {}, {}
        for j, f in enumerate(study.factors):
            if f.is_categorical:
                settings[f.name] = f.levels[0] if x[j] < 0 else f.levels[1]
                coded[f.name] = int(x[j])
            else:
                settings[f.name] = float(f.centre + f.half_range * x[j])
                coded[f.name] = float(x[j])
        outcomes, predictions = {}, {}
        for r in study.responses:
            if r.name not in models:
                continue
            row = intervals[r.name].iloc[i]
            col = names.index(r.name) if r.name in names else None
            outcomes[r.name] = ResponseOutcome(
                name=r.name, goal=r.goal.kind if col is not None else "none",
                predicted=float(row["predicted"]),
                desirability=float(d[i, col]) if col is not None else None,
                ci=(float(row["ci_low"]), float(row["ci_high"])),
                pi=(float(row["pi_low"]), float(row["pi_high"])),
                chance_in_limits=(_finite(chances.each[i, chance_col[r.name]])
                                  if r.name in chance_col else None))
            predictions[r.name] = float(row["predicted"])
        factor_d = {n: float(d[i, k]) for k, (kind, n) in enumerate(problem.columns)
                    if kind == "factor"}
        out = tuple(n for k, n in enumerate(names) if d[i, k] == 0)
        solutions.append(Solution(
            rank=rank, label=f"S{by_d[i]}", settings=settings, coded=coded,
            desirability=float(D[i]), predictions=predictions, responses=outcomes,
            factor_desirability=factor_d,
            chance_all=_finite(chances.all[i]) if chances.responses else None,
            out_of_limits=out, shortfall=float(S[i]),
            warnings=tuple(_point_warnings(study, problem, x, D[i]))))
    assumptions = (
        f"{chances.assumption}; each chance is for one batch made at the settings and "
        f"measured once, from the models' prediction distributions ({chances.draws} "
        f"seeded draws, seed {seed})",)
    return OptimizationResult(
        study=study.name, solutions=tuple(solutions), rank_by=rank_by, seed=seed,
        feasible=feasible, unreachable=unreachable, warnings=tuple(general),
        assumptions=assumptions, evaluations=problem.evaluations,
        correlation=chances.correlation)


def _general_warnings(study, problem, models, fit) -> list[str]:
    out = []
    skipped = getattr(fit, "skipped", {}) or {}
    for r in study.responses:
        if r.goal.active and r.name not in models:
            why = skipped.get(r.name, "it has no fitted model")
            out.append(f"response '{r.name}' has a goal but was left out of the search: "
                       f"{why}")
    for kind, name in problem.columns:
        if kind != "response":
            continue
        r2 = getattr(models[name], "pred_r2_", None)
        if r2 is not None and np.isfinite(r2) and r2 < 0.5:
            out.append(f"the model for '{name}' predicts poorly (predicted R2 = {r2:.2f}, "
                       "below 0.5) yet takes part in the search: treat its prediction "
                       "and the balance it drives with caution")
    return out


def _point_warnings(study, problem, x, D) -> list[str]:
    out = []
    runs = study.runs
    for pos, j in enumerate(problem.num):
        f = study.factors[j]
        value = f.centre + f.half_range * x[j]
        unit = f" {f.unit}" if f.unit else ""
        for side, bound, outward in (("low", problem.lo[pos], -1.0),
                                     ("high", problem.hi[pos], 1.0)):
            if abs(x[j] - bound) > _EDGE:
                continue
            beyond = x.copy()
            beyond[j] += outward * 0.05
            D_beyond = problem.score(problem.values(beyond[None, :]))[0][0]
            edge = f.centre + f.half_range * bound
            tested_edge = (f.low if side == "low" else f.high)
            inside_tests = (edge > f.low + 1e-9) if side == "low" else (edge < f.high - 1e-9)
            if inside_tests:
                how = (f"widen its search range (search = [min, max]) up to the tested "
                       f"{_g(tested_edge)}{unit}")
            else:
                how = "if such settings are possible, extend the range there with new runs"
            if D_beyond > D + 1e-9:
                out.append(f"'{f.name}' sits at the {side} edge of the searched region "
                           f"({_g(edge)}{unit}) and D would still rise beyond it: {how}")
            else:
                out.append(f"'{f.name}' sits at the {side} edge of the searched region "
                           f"({_g(edge)}{unit}), where the models rest on few runs: {how} "
                           "to see whether the balance holds beyond it")
        if runs is not None and f.name in runs:
            tested = runs[f.name].to_numpy(float)
            if value < tested.min() - 1e-9 * f.half_range or \
                    value > tested.max() + 1e-9 * f.half_range:
                out.append(f"'{f.name}' = {_g(value)}{unit} lies outside the tested "
                           f"settings ({_g(tested.min())}..{_g(tested.max())}{unit}): the "
                           "predictions there extrapolate the models")
    return out


def _finite(x) -> float | None:
    x = float(x)
    return x if math.isfinite(x) else None


def _g(x: float) -> str:
    return f"{x:.4g}"
