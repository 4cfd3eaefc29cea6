"""Helpers for the search tests and benchmark: least-squares models and random problems.

``LstsqModel`` is a small ordinary-least-squares polynomial model written with
numpy.linalg.lstsq and textbook formulas (confidence and prediction intervals
from the t distribution, PRESS for predicted R2: common practice). It follows
the same contract as tradeoff.model.fit.ResponseModel, so the search can be
checked on its own.

``KnownPolynomial`` is a response with known coefficients and ``known_fit`` a
fit made of them, for checks against optima worked out in closed form.
``random_problem`` draws a seeded random multi-response problem (2 to 8
factors, 2 to 6 responses, interaction or quadratic polynomials with known
coefficients); ``dense_grid_optimum`` is the independent reference: the best
point of an exhaustive grid polished by scipy's Nelder-Mead, using only the
published desirability formulas.
"""
from __future__ import annotations

import itertools
import math
from types import SimpleNamespace

import numpy as np
import pandas as pd
from scipy import optimize, stats

from reference_desirability import d_of, study_D
from tradeoff.derive.load import study_from_dict


def design_matrix(X, kind: str) -> np.ndarray:
    """Polynomial model columns in coded units: main, interactions, quadratic."""
    X = np.atleast_2d(np.asarray(X, dtype=float))
    n, k = X.shape
    cols = [np.ones(n)] + [X[:, j] for j in range(k)]
    if kind in ("interactions", "quadratic"):
        cols += [X[:, i] * X[:, j] for i, j in itertools.combinations(range(k), 2)]
    if kind == "quadratic":
        cols += [X[:, j] ** 2 for j in range(k)]
    return np.column_stack(cols)


class LstsqModel:
    """Ordinary least squares polynomial fitted to one response."""

    def __init__(self, X, y, run_ids, kind="quadratic", confidence=0.95):
        F = design_matrix(X, kind)
        self.kind = kind
        self.confidence = confidence
        self.coef_, *_ = np.linalg.lstsq(F, y, rcond=None)
        resid = y - F @ self.coef_
        n, p = F.shape
        self.residual_df_ = n - p
        self.residual_sd_ = math.sqrt(resid @ resid / self.residual_df_)
        self.xtx_inv_ = np.linalg.inv(F.T @ F)
        hat = np.einsum("ij,jk,ik->i", F, self.xtx_inv_, F)
        press = np.sum((resid / (1 - hat)) ** 2)
        self.pred_r2_ = 1 - press / np.sum((y - y.mean()) ** 2)
        self.residuals_ = pd.Series(resid, index=pd.Index(run_ids, name="run"))

    def predict(self, X):
        return design_matrix(X, self.kind) @ self.coef_

    def predictive(self, X):
        F = design_matrix(X, self.kind)
        se = self.residual_sd_ * np.sqrt(np.einsum("ij,jk,ik->i", F, self.xtx_inv_, F))
        return F @ self.coef_, se, self.residual_sd_, self.residual_df_

    def inverse_transform(self, y):
        return np.asarray(y, dtype=float)

    def intervals(self, X, level=None):
        level = self.confidence if level is None else level
        mean, se, sigma, df = self.predictive(X)
        q = stats.t.ppf(0.5 + level / 2, df)
        spi = np.sqrt(se ** 2 + sigma ** 2)
        return pd.DataFrame({"predicted": mean, "ci_low": mean - q * se,
                             "ci_high": mean + q * se, "pi_low": mean - q * spi,
                             "pi_high": mean + q * spi})


def lstsq_fit(study, kind="quadratic"):
    """A StudyFit-like object: one LstsqModel per response of the study."""
    X = study.coded().to_numpy()
    ids = study.runs["run"].to_numpy()
    models = {}
    for r in study.responses:
        y = study.runs[r.name].to_numpy(float)
        ok = ~np.isnan(y)
        models[r.name] = LstsqModel(X[ok], y[ok], ids[ok], kind, study.confidence)
    return SimpleNamespace(study=study, models=models, skipped={})


class KnownPolynomial:
    """A response with known polynomial coefficients (random problems)."""

    def __init__(self, coef, kind, sigma, residuals):
        self.coef_ = coef
        self.kind = kind
        self.residual_sd_ = sigma
        self.residual_df_ = 10
        self.pred_r2_ = 0.9
        self.residuals_ = residuals

    def predict(self, X):
        return design_matrix(X, self.kind) @ self.coef_

    def predictive(self, X):
        mean = self.predict(X)
        return mean, np.full(len(mean), 0.3 * self.residual_sd_), self.residual_sd_, 10

    def inverse_transform(self, y):
        return np.asarray(y, dtype=float)

    def intervals(self, X, level=None):
        mean, se, sigma, df = self.predictive(X)
        q = stats.t.ppf(0.975, df)
        spi = np.sqrt(se ** 2 + sigma ** 2)
        return pd.DataFrame({"predicted": mean, "ci_low": mean - q * se,
                             "ci_high": mean + q * se, "pi_low": mean - q * spi,
                             "pi_high": mean + q * spi})


def known_fit(study, coefs: dict, kind: str = "quadratic", sigma: float = 0.01):
    """A StudyFit-like object: each response a ``KnownPolynomial`` with these coefficients.

    For closed-form checks: a small residual SD (``sigma``) and small, even
    residuals, so the search sees the polynomial itself.
    """
    resid = pd.Series(np.linspace(-1, 1, 12) * sigma, index=[str(i) for i in range(12)])
    models = {name: KnownPolynomial(np.asarray(c, dtype=float), kind, sigma, resid)
              for name, c in coefs.items()}
    return SimpleNamespace(study=study, models=models, skipped={})


GOAL_KINDS = ("maximize", "minimize", "target")


def random_problem(seed: int, k: int | None = None, m: int | None = None,
                   kind: str | None = None):
    """A seeded random problem: (study, fit) with 2-8 factors and 2-6 responses.

    Goal limits are set from the spread of each response over the cube, so
    that the goals conflict and D is positive only in part of the region.
    """
    rng = np.random.default_rng(seed)
    k = int(rng.integers(2, 9)) if k is None else k
    m = int(rng.integers(2, 7)) if m is None else m
    kind = ("interactions", "quadratic")[rng.integers(0, 2)] if kind is None else kind
    probe = rng.uniform(-1, 1, (4000, k))
    F = design_matrix(probe, kind)
    factors = [{"name": f"x{j + 1}", "low": 0.0, "high": 10.0} for j in range(k)]
    responses, models = [], {}
    run_ids = [str(i) for i in range(1, 21)]
    shared = rng.standard_normal(20)
    for i in range(m):
        coef = rng.standard_normal(F.shape[1]) * np.r_[1.0, np.full(F.shape[1] - 1, 1.0)]
        coef[0] = 10.0
        values = F @ coef
        goal = GOAL_KINDS[rng.integers(0, 3)]
        shape = float(rng.choice([0.5, 1.0, 2.0]))
        spec = {"name": f"y{i + 1}", "goal": goal, "weight": float(rng.choice([1, 1, 2]))}
        # Demanding limits: full desirability is out of reach or nearly so.
        if goal == "target":
            q = np.quantile(values, [0.15, 0.4, 0.9, 0.97])
            spec.update(lower=float(q[0]), target=float(q[1] + (q[2] - q[1]) * rng.random()),
                        upper=float(q[3]), shape_below=shape,
                        shape_above=float(rng.choice([0.5, 1.0, 2.0])))
        elif goal == "maximize":
            q = np.quantile(values, [0.3, 0.999])
            spec.update(lower=float(q[0]), upper=float(q[1]), shape=shape)
        else:
            q = np.quantile(values, [0.001, 0.7])
            spec.update(lower=float(q[0]), upper=float(q[1]), shape=shape)
        q = np.quantile(values, [0.0, 1.0])
        responses.append(spec)
        resid = pd.Series(0.6 * shared + 0.8 * rng.standard_normal(20), index=run_ids)
        models[f"y{i + 1}"] = KnownPolynomial(coef, kind, 0.03 * (q[1] - q[0]), resid)
    study = study_from_dict({"study": {"name": f"random {seed}"}, "factors": factors,
                             "responses": responses}, with_data=False)
    return study, SimpleNamespace(study=study, models=models, skipped={})


# --------------------------------------------------------------------------
# Independent reference: dense grid + Nelder-Mead, from the published formulas


def d_reference(y, spec) -> np.ndarray:
    """Derringer & Suich (1980) desirability of one goal (tests/reference_desirability.py)."""
    return d_of(y, spec)


def d_overall_reference(X, study, fit) -> np.ndarray:
    """Weighted geometric mean (Derringer 1994), written out with a product."""
    return study_D(study, fit, X)


def dense_grid_optimum(study, fit, points_per_axis: int | None = None, polish: int = 5):
    """Best D on a full grid over the cube, then Nelder-Mead from the best grid points."""
    k = len(study.factors)
    if points_per_axis is None:
        points_per_axis = {2: 201, 3: 61, 4: 25, 5: 13, 6: 9, 7: 7, 8: 6}[k]
    axis = np.linspace(-1, 1, points_per_axis)
    best_D, best_x = -1.0, None
    grid = np.array(np.meshgrid(*[axis] * k, indexing="ij")).reshape(k, -1).T
    D = np.concatenate([d_overall_reference(g, study, fit)
                        for g in np.array_split(grid, max(1, len(grid) // 200000))])
    for i in np.argsort(-D)[:polish]:
        def neg(z):
            if np.any(np.abs(z) > 1):
                return 1.0
            return -d_overall_reference(z[None, :], study, fit)[0]
        res = optimize.minimize(neg, grid[i], method="Nelder-Mead",
                                options={"xatol": 1e-7, "fatol": 1e-10, "maxiter": 4000})
        for x, v in ((res.x, -res.fun), (grid[i], D[i])):
            if v > best_D:
                best_D, best_x = v, x
    return best_D, best_x
