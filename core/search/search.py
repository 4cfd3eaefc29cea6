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
import functools
import itertools
import math
import threading
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from .chance import chance_in_limits
from ..study.constraints import rule_arrays, study_rules
from .desirability import limits
from ..cautions import FOOD_CAUTION, FOOD_CAUTIONS
from ..errors import SearchError

__all__ = ["optimize", "overall_desirability", "goal_columns", "ResponseOutcome",
           "Solution", "OptimizationResult", "RANKINGS"]

RANKINGS = ("desirability", "chance")
_STEP = 1e-5  # central-difference step in coded units (models are smooth polynomials)
_EDGE = 1e-3  # coded distance that counts as "on the edge"
_SAME = 0.05  # climbed starts closer than this (coded) share one basin
_JOINT = 30  # at most this many variables in one joint polish
_ROUNDS = 20  # at most this many compass rounds (4 or more numeric factors)
_DIAGONAL = 3  # up to this many numeric factors the climb steps along diagonals too
_ROUNDS_DIAGONAL = 8  # at most this many rounds then (each round tries more directions)
_SETTLE = 2e-3  # a start whose compass step is below this (coded) has settled
_SOBOL_BITS = 30
_FTOL = 1e-6  # SLSQP stops when sum(w log t) (log D) changes less than this per peak


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
        self._goal_arrays()
        # Box bounds over every column (categorical ones unbounded), for clipping.
        self.lo_k = np.full(self.k, -np.inf)
        self.hi_k = np.full(self.k, np.inf)
        self.lo_k[self.num], self.hi_k[self.num] = self.lo, self.hi

    def _goal_arrays(self) -> None:
        """Every goal's curve as arrays, so all columns are scored at once.

        Each desirability is ``clip((y - lo_b) / w_b) ** s_b * clip((hi_a - y) / w_a) ** s_a``
        (the formulas of ``tradeoff.desirability``): maximize uses the rising
        piece only, minimize the falling one, a target both (one of them is 1 on
        each side of the target); a range goal is 1 inside lower..upper.
        """
        m = len(self.goals)
        self.lo_b, self.w_b, self.s_b = np.full(m, -np.inf), np.ones(m), np.ones(m)
        self.hi_a, self.w_a, self.s_a = np.full(m, np.inf), np.ones(m), np.ones(m)
        self.is_range = np.zeros(m, dtype=bool)
        self.lim_lo, self.lim_hi = np.full(m, -np.inf), np.full(m, np.inf)
        self.width = np.ones(m)
        for i, g in enumerate(self.goals):
            self.lim_lo[i], self.lim_hi[i] = limits(g)
            self.width[i] = g.upper - g.lower
            if g.kind == "maximize":
                self.lo_b[i], self.w_b[i], self.s_b[i] = g.lower, g.upper - g.lower, g.shape
            elif g.kind == "minimize":
                self.hi_a[i], self.w_a[i], self.s_a[i] = g.upper, g.upper - g.lower, g.shape
            elif g.kind == "target":
                self.lo_b[i], self.w_b[i], self.s_b[i] = \
                    g.lower, g.target - g.lower, g.shape_below
                self.hi_a[i], self.w_a[i], self.s_a[i] = \
                    g.upper, g.upper - g.target, g.shape_above
            else:  # range
                self.is_range[i] = True
        self.any_range = bool(self.is_range.any())
        self.w_norm = self.weights / self.weights.sum() if m else self.weights

    def names(self) -> list[str]:
        return [n for _, n in self.columns]

    def values(self, X) -> np.ndarray:
        """(n, m) natural values of every goal column at coded points X (n, k)."""
        X = np.atleast_2d(X)
        n = len(X)
        self.evaluations += n
        Y = np.empty((n, len(self.columns)))
        for i, m in enumerate(self.col_models):
            Y[:, i] = np.asarray(m.predict(X), dtype=float).reshape(n)
        for i, j in enumerate(self.col_factor, start=len(self.col_models)):
            Y[:, i] = self.centre[j] + self.half[j] * X[:, j]
        return Y

    def score(self, Y):
        """Overall D (n,) and individual desirabilities (n, m) of goal values Y (n, m)."""
        d = np.clip((Y - self.lo_b) / self.w_b, 0.0, 1.0) ** self.s_b
        d *= np.clip((self.hi_a - Y) / self.w_a, 0.0, 1.0) ** self.s_a
        if self.any_range:
            inside = ((Y >= self.lim_lo) & (Y <= self.lim_hi)).astype(float)
            d = np.where(self.is_range, inside, d)
        d[np.isnan(Y)] = 0.0
        # D = exp(sum w log d), 0 as soon as one d is 0 (its log is left out).
        positive = d > 0
        total = np.log(np.where(positive, d, 1.0)) @ self.w_norm
        return np.where(positive.all(axis=1), np.exp(total), 0.0), d

    def gaps(self, Y) -> np.ndarray:
        """How far each goal value lies outside its limits, in goal widths (n, m).

        The formula of ``tradeoff.desirability.shortfall``, every column at once.
        """
        gap = np.maximum(np.maximum(self.lim_lo - Y, Y - self.lim_hi), 0.0) / self.width
        gap[np.isnan(Y)] = np.inf
        return gap

    def shortfall(self, Y) -> np.ndarray:
        """Weighted squared distance outside the limits, in goal widths (n,)."""
        return (self.gaps(Y) ** 2) @ self.weights

    def full(self, Z, cat_values) -> np.ndarray:
        """Numeric coded points Z (n, p) and categorical values -> (n, k)."""
        if not self.cat:
            return np.asarray(Z, dtype=float)
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
    problem evaluates every block in one batch per iteration. Returns the
    polished settings (c, p) and the goal values there (c, m).
    """
    from scipy.optimize import Bounds, minimize

    Z0 = np.atleast_2d(Z0)
    c, p = Z0.shape
    goals = problem.goals
    tcols = [i for i, g in enumerate(goals) if g.kind in ("maximize", "minimize", "target")]
    q = len(tcols)
    wt = problem.weights[tcols] / problem.weights.sum()
    steps = np.vstack([np.zeros(p), _STEP * np.eye(p), -_STEP * np.eye(p)])  # (2p+1, p)
    cats = np.asarray(cats, dtype=float).reshape(c, -1)
    cat_rows = np.repeat(cats, 2 * p + 1, axis=0)
    last = [None, None]  # the settings last evaluated and (y, J) there

    def at(v):
        key = v[:c * p].tobytes()  # the values depend on the settings only, not on t
        if key != last[0]:
            Z = v[:c * p].reshape(c, p)
            pts = (Z[:, None, :] + steps[None]).reshape(-1, p)
            Y = problem.values(problem.full(pts, cat_rows)).reshape(c, 2 * p + 1, -1)
            last[:] = key, (Y[:, 0], (Y[:, 1:p + 1] - Y[:, p + 1:]) / (2 * _STEP))
        return last[1]  # y (c, m), J (c, p, m)

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

    # Where each block's entries sit in the block-diagonal constraint Jacobian.
    blocks = np.arange(c)
    z_rows = (blocks[:, None] * r + np.arange(r))[:, :, None]  # (c, r, 1)
    z_cols = (blocks[:, None] * p + np.arange(p))[:, None, :]  # (c, 1, p)
    t_rows = blocks[:, None] * r + rows_t  # (c, rt)
    t_cols = c * p + blocks[:, None] * q + tix[rows_t]  # (c, rt)
    G_rules = np.zeros((c * n_rules, c * (p + q)))
    for b in range(c):
        if n_rules:
            G_rules[b * n_rules:(b + 1) * n_rules, b * p:(b + 1) * p] = -rules[b][0]

    def cons_jac(v):
        _, J = at(v)
        T = v[c * p:].reshape(c, q)
        G = np.zeros((c * r, c * (p + q)))
        G[z_rows, z_cols] = (J[:, :, col] * a).transpose(0, 2, 1)
        G[t_rows, t_cols] = -ex[rows_t] * T[:, tix[rows_t]] ** (ex[rows_t] - 1)
        return np.vstack([G, G_rules]) if n_rules else G

    def fun(v):
        return -float(np.log(v[c * p:]).reshape(c, q).sum(axis=0) @ wt)

    def jac(v):
        return np.concatenate([np.zeros(c * p), -(wt[None, :] / v[c * p:].reshape(c, q)).ravel()])

    y0, _ = at(np.concatenate([Z0.ravel(), np.ones(c * q)]))
    d0 = problem.score(y0)[1]
    T0 = np.clip(d0[:, tcols] * (1 - 1e-9), 1e-12, 1.0)
    bounds = Bounds(np.concatenate([np.tile(problem.lo, c), np.full(c * q, 1e-12)]),
                    np.concatenate([np.tile(problem.hi, c), np.ones(c * q)]))
    res = minimize(fun, np.concatenate([Z0.ravel(), T0.ravel()]), jac=jac, method="SLSQP",
                   bounds=bounds, constraints=[{"type": "ineq", "fun": cons, "jac": cons_jac}],
                   options={"maxiter": 100, "ftol": _FTOL * c})
    Z = np.clip(res.x[:c * p].reshape(c, p), problem.lo, problem.hi)
    y, _ = at(np.concatenate([Z.ravel(), res.x[c * p:]]))  # usually the last evaluation
    return Z, y


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
    """Sobol points per level combination: dense enough to land in every basin.

    With 1 to 3 numeric factors a few hundred points already lie closer together
    than any two peaks of a quadratic D (and the climb and polish finish the
    job); from 4 factors up the batch grows with the dimension.
    """
    if not p:
        return 1
    exponent = 7 + p if p <= 3 else 10 + min(p, 6) // 2
    while combos > 1 and exponent > 8 and (2 ** exponent) * combos > 2 ** 14:
        exponent -= 1
    return 2 ** exponent


@functools.lru_cache(maxsize=16)
def _sobol_bits(p: int, n: int) -> np.ndarray:
    """The first n points of the p-dimensional Sobol sequence as 30-bit integers.

    A fixed table (it does not depend on the study or the seed), built once.
    """
    from scipy.stats import qmc

    points = qmc.Sobol(d=p, scramble=False, bits=_SOBOL_BITS).random_base2(
        int(round(math.log2(n))))
    bits = np.round(points * 2.0 ** _SOBOL_BITS).astype(np.uint64)
    bits.flags.writeable = False
    return bits


def _sobol(p: int, n: int, rng) -> np.ndarray:
    """n Sobol points in [0, 1)^p, randomised by a seeded digital shift.

    XOR-ing every coordinate with one random 30-bit number keeps the points'
    even spread (a digital shift maps a Sobol net onto a net) at the cost of a
    single table look-up, where a fresh scramble costs more than the rest of a
    small search.
    """
    shift = rng.integers(0, 2 ** _SOBOL_BITS, size=p, dtype=np.uint64)
    return (_sobol_bits(p, n) ^ shift) / 2.0 ** _SOBOL_BITS


def _distances(X) -> np.ndarray:
    """(n, n) Euclidean distances between the rows of a small X (n, k)."""
    return np.sqrt(((X[:, None, :] - X[None, :, :]) ** 2).sum(axis=2))


def _starts(X, score, n_starts, radius, higher_better=True):
    """Indices of the best points that lie apart (greedy, wide spacing first).

    A first pass keeps points at least ``radius`` apart, so different basins
    get a start; a second pass fills up with points a third as far apart.
    """
    order = np.argsort(-score if higher_better else score, kind="stable")[:4000]
    Xo = X[order]
    chosen = []
    # squared distance to the nearest chosen point, from |x|^2 - 2 x.c + |c|^2
    sq = np.einsum("ij,ij->i", Xo, Xo)
    gap = np.full(len(order), np.inf)
    for spacing in (radius, radius / 3):
        while len(chosen) < n_starts:
            free = gap >= spacing ** 2
            c = int(free.argmax())  # the best remaining point far enough from the chosen
            if not free[c]:
                break
            chosen.append(c)
            np.minimum(gap, sq - 2 * (Xo @ Xo[c]) + sq[c], out=gap)
            gap[c] = 0.0  # (rounding must not free the chosen point itself)
    return [int(order[c]) for c in chosen]


def _climb(problem, X, D, Y, step: float = 0.1, settle: float = _SETTLE):
    """Pattern search on D from every start at once (one batch per round).

    Each start tries a step along every direction of its pattern, moves to its
    best feasible neighbour when that improves D, and shrinks its step
    otherwise; starts whose step has fallen below ``settle`` (coded units)
    stop, and the polish takes them the rest of the way. With up to 3 numeric
    factors the pattern holds the diagonals too (8 or 26 directions), so a
    start can follow a ridge of D that runs across the axes in a few rounds;
    above that it is the compass (up and down each factor), and the rounds are
    more. Returns the climbed points, their D and their goal values.
    """
    X, D, Y = X.copy(), D.copy(), Y.copy()
    p, k = len(problem.num), problem.k
    steps = np.full(len(X), step * float(np.max(problem.hi - problem.lo)) / 2)
    if p <= _DIAGONAL:
        directions = np.array([v for v in itertools.product((-1.0, 0.0, 1.0), repeat=p)
                               if any(v)])
        rounds, shrink = _ROUNDS_DIAGONAL, 1 / 3
    else:
        directions = np.vstack([np.eye(p), -np.eye(p)])
        rounds, shrink = _ROUNDS, 1 / 2
    moves = np.zeros((len(directions), k))
    moves[:, problem.num] = directions
    ruled = len(problem.b) > 0
    for _ in range(rounds):
        live = np.flatnonzero(steps >= settle)
        if not len(live):
            break
        trial = X[live, None, :] + steps[live, None, None] * moves  # (s, directions, k)
        np.clip(trial, problem.lo_k, problem.hi_k, out=trial)
        flat = trial.reshape(-1, k)
        Yt = problem.values(flat)
        Dt = problem.score(Yt)[0]
        if ruled:
            Dt[~problem.feasible(flat)] = -1.0
        Dt = Dt.reshape(len(live), len(moves))
        Yt = Yt.reshape(len(live), len(moves), -1)
        best = Dt.argmax(axis=1)
        rows = np.arange(len(live))
        gain = Dt[rows, best] > D[live]
        up = live[gain]
        X[up] = trial[rows[gain], best[gain]]
        D[up] = Dt[rows[gain], best[gain]]
        Y[up] = Yt[rows[gain], best[gain]]
        steps[live[~gain]] *= shrink
    return X, D, Y


def _one_per_hill(problem, X, D, reps):
    """Drop a climbed start from which D rises all the way to a better one.

    Starts that stall apart on one curved ridge (a pattern step cannot follow
    it) would each be polished to the same peak. For every pair (better a,
    worse b, same categorical levels) D is sampled at a quarter, half and three
    quarters of the way from b to a, all pairs in one batch; when D never falls
    along the way, b lies on a's slope and only a is polished. A start with a
    dip between it and every better one keeps its own polish.
    """
    if len(reps) < 2:
        return reps
    pairs = [(a, b) for i, a in enumerate(reps) for b in reps[i + 1:]
             if np.array_equal(X[a, problem.cat], X[b, problem.cat])]
    if not pairs:
        return reps
    a, b = np.array(pairs).T
    fractions = np.array([0.25, 0.5, 0.75])
    path = X[b][:, None, :] + fractions[:, None] * (X[a] - X[b])[:, None, :]
    Dpath = problem.score(problem.values(path.reshape(-1, problem.k)))[0].reshape(-1, 3)
    profile = np.column_stack([D[b], Dpath, D[a]])
    rising = (np.diff(profile, axis=1) >= 0).all(axis=1)
    uphill = {}
    for (i, j), r in zip(pairs, rising.tolist()):
        uphill.setdefault(j, []).append((i, r))
    kept = []
    for j in reps:  # best first: a start is dropped only for a kept better one
        if any(r and i in kept for i, r in uphill.get(j, [])):
            continue
        kept.append(j)
    return kept


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
        from ..model.fit import fit_study

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
    combos = [np.array(v) for v in itertools.product([-1.0, 1.0], repeat=c)]
    if len(combos) > 256:
        raise SearchError(f"{c} categorical factors make {len(combos)} level combinations: "
                          "at most 8 categorical factors can be searched")
    n_starts = starts if starts is not None else max(12, 2 * top)

    # 1. Space-filling batch, every level combination at once.
    if p:
        n = _batch_size(p, len(combos))
        sob = _sobol(p, n, rng)
        # Optima of D often sit on faces, edges or corners of the region, which a
        # uniform batch in several dimensions barely reaches: half the batch is
        # stretched past the region and clipped back onto its boundary.
        sob[n // 2:] = np.clip(0.5 + (sob[n // 2:] - 0.5) * 1.4, 0.0, 1.0)
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
    if len(problem.b):
        X = X[problem.feasible(X)]
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
        # Keep the start itself where the polish did not help (a safety net).
        better = (problem.feasible(polished) & (Dp >= Dr[reps]))[:, None]
        optima += list(np.where(better, polished, Xr[reps]))
        optima_y += list(np.where(better, Yp, Yr[reps]))
    if not optima:  # only categorical factors: the batch is exhaustive
        optima, optima_y = list(X), list(Y)
    Xo, Yo = np.array(optima), np.array(optima_y)
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
        if len(pool) >= (3 * top if rank_by == "chance" else top):
            break
    Xbest = Xo[pool]

    # Goals no setting can meet: none of the points tried brought them within limits.
    # (Where D > 0 somewhere, every goal is within its limits there.)
    unreachable = ()
    if not feasible:
        reach = (problem.gaps(Y) == 0).any(axis=0) | (problem.gaps(Yo) == 0).any(axis=0)
        unreachable = tuple(n for n, ok in zip(problem.names(), reach) if not ok)
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
    # Each response's interval table as one array (rows: solutions; columns:
    # predicted, ci_low, ci_high, pi_low, pi_high), so no table is indexed per cell.
    intervals = {r.name: models[r.name].intervals(X, level=study.confidence)[
        ["predicted", "ci_low", "ci_high", "pi_low", "pi_high"]].to_numpy(dtype=float)
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
            pred, ci_low, ci_high, pi_low, pi_high = intervals[r.name][i].tolist()
            col = names.index(r.name) if r.name in names else None
            outcomes[r.name] = ResponseOutcome(
                name=r.name, goal=r.goal.kind if col is not None else "none",
                predicted=pred,
                desirability=float(d[i, col]) if col is not None else None,
                ci=(ci_low, ci_high),
                pi=(pi_low, pi_high),
                chance_in_limits=(_finite(chances.each[i, chance_col[r.name]])
                                  if r.name in chance_col else None))
            predictions[r.name] = pred
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
