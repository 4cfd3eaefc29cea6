"""The goals of a search and their evaluation, in arrays.

``_Problem`` holds a study's goals, searched region and models as arrays, so
every step of the search scores many points in one batch; ``goal_columns``
lists the goals taking part in D and ``overall_desirability`` scores settings.
"""
from __future__ import annotations

import numpy as np

from ..study.constraints import rule_arrays
from .mixture import simplex_region
from ..model.columns import column_key
from ..model.terms import model_matrix
from ..model.transforms import inverse
from .desirability import limits
from .informed import level_choices
from ..errors import SearchError

__all__ = ["goal_columns", "overall_desirability", "_Problem", "_models_of",
           "_no_goal_error", "_rule_parts"]


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
        # a blend: one component always makes up the rest (search/mixture.py)
        self.region = simplex_region(study)
        if self.region is not None:
            self.num.remove(self.region.dep)
        self.centre = np.array([0.0 if f.is_categorical else f.centre for f in factors])
        self.half = np.array([1.0 if f.is_categorical else f.half_range for f in factors])
        rng = [factors[j].search_range for j in self.num]
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
        if self.region is not None:  # the dependent component's own bounds
            A, b = self.region.rules(self.k)
            self.A, self.b = np.vstack([self.A, A]), np.concatenate([self.b, b])
        self.evaluations = 0
        # the levels searched per categorical factor, and what the runs cannot judge
        self.cat_codes, self.not_informed = level_choices(
            study, self.models, [n for kind, n in self.columns if kind == "response"])
        self._goal_arrays()
        # Box bounds over every column (categorical ones unbounded), for clipping.
        self.lo_k = np.full(self.k, -np.inf)
        self.hi_k = np.full(self.k, np.inf)
        self.lo_k[self.num], self.hi_k[self.num] = self.lo, self.hi
        self._stack_polynomials()

    def _stack_polynomials(self) -> None:
        """One model matrix for every response's polynomial, when all are polynomials.

        The models of a study mostly share their terms; building the union of
        their terms once per batch and multiplying by a (terms, responses)
        coefficient table replaces one model matrix per response (the search's
        largest cost). Models that are not polynomials keep their own predict.
        """
        self._terms = None
        polys = [getattr(m, "polynomial", None) for m in self.col_models]
        if not self.col_models or any(p is None for p in polys):
            return
        # Keyed on the whole column (level, blending contrast), not the powers:
        # every level column of one factor shares its powers.
        union, coef_of = {}, []
        for get in polys:
            terms, coef = get()
            coef_of.append((terms, coef))
            for t in terms:
                union.setdefault(column_key(t), t)
        where = {key: i for i, key in enumerate(union)}
        C = np.zeros((len(union), len(polys)))
        for c, (terms, coef) in enumerate(coef_of):
            for t, b in zip(terms, coef):
                C[where[column_key(t)], c] += b
        self._terms, self._C = list(union.values()), C
        self._transforms = [getattr(m, "transform", "none") for m in self.col_models]

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
        self.shaped = bool(np.any(self.s_b != 1) or np.any(self.s_a != 1))
        self.w_norm = self.weights / self.weights.sum() if m else self.weights

    def names(self) -> list[str]:
        return [n for _, n in self.columns]

    def values(self, X) -> np.ndarray:
        """(n, m) natural values of every goal column at coded points X (n, k)."""
        X = self.tidy(np.atleast_2d(X))
        n = len(X)
        self.evaluations += n
        Y = np.empty((n, len(self.columns)))
        if self._terms is not None:
            r = len(self.col_models)
            Y[:, :r] = model_matrix(np.asarray(X, dtype=float), self._terms) @ self._C
            for i, tr in enumerate(self._transforms):
                if tr != "none":
                    Y[:, i] = inverse(Y[:, i], tr)
        else:
            for i, m in enumerate(self.col_models):
                Y[:, i] = np.asarray(m.predict(X), dtype=float).reshape(n)
        for i, j in enumerate(self.col_factor, start=len(self.col_models)):
            Y[:, i] = self.centre[j] + self.half[j] * X[:, j]
        return Y

    def score(self, Y):
        """Overall D (n,) and individual desirabilities (n, m) of goal values Y (n, m)."""
        d = np.clip((Y - self.lo_b) / self.w_b, 0.0, 1.0)
        up = np.clip((self.hi_a - Y) / self.w_a, 0.0, 1.0)
        if self.shaped:  # powers only where some goal has a shape other than 1
            d **= self.s_b
            up **= self.s_a
        d *= up
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
        if not self.cat and self.region is None:
            return np.asarray(Z, dtype=float)
        X = np.zeros((len(Z), self.k))
        X[:, self.num] = Z
        X[:, self.cat] = np.asarray(cat_values, dtype=float)
        return self.tidy(X)

    def tidy(self, X) -> np.ndarray:
        """X with a blend's dependent component making up the rest (X itself otherwise)."""
        return X if self.region is None else self.region.complete(X)

    def feasible(self, X, tol=1e-7) -> np.ndarray:
        if len(self.b) == 0:
            return np.ones(len(X), dtype=bool)
        X = self.tidy(np.atleast_2d(X))
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


def _rule_parts(problem, cat_values):
    """Rules restricted to the numeric columns: A_num z <= b_eff."""
    if len(problem.b) == 0:
        return None, None
    A_num = problem.A[:, problem.num]
    b_eff = problem.b - problem.A[:, problem.cat] @ np.asarray(cat_values, dtype=float)
    if problem.region is not None:  # the dependent component is 1 - the others
        return problem.region.substitute(problem.A, b_eff, problem.num)
    return A_num, b_eff
