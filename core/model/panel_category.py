"""Category scores (1 to 5, a 9-point scale ...) by a cumulative-logit model.

A category scale orders its points but does not space them evenly, so its
scores are modelled as ordered outcomes, not averaged as lengths: the
proportional-odds model (McCullagh 1980, "Regression models for ordinal
data", JRSS B 42)

    P(score <= k) = 1 / (1 + exp(-(theta_k - x'beta)))

with one threshold ``theta_k`` between neighbouring categories and one effect
per model column shared by every threshold. A positive effect moves scores up
the scale. ``x`` holds the study's model columns in coded units (no
intercept: the thresholds take its place) and, with ``assessor = "fixed"``,
sum-to-zero assessor columns, so predictions are for the average assessor.

The fit maximises the likelihood (BFGS on the thresholds written as a first
value and log steps, so they stay in order); standard errors come from the
observed information (the numerical Jacobian of the analytic score).
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from ..errors import ModelError

__all__ = ["CumulativeLogit", "fit_category", "assessor_columns"]


def _cdf(x):
    return 0.5 * (1.0 + np.tanh(0.5 * x))  # the logistic, without overflow


class CumulativeLogit:
    """A proportional-odds model of ordered categories.

    Attributes after ``fit``: ``coef_`` (effects on the latent scale, one per
    column), ``thresholds_`` (K - 1 cut points), ``se_`` (standard errors of
    effects then thresholds), ``categories_`` (the observed categories, in
    order), ``loglik_``.
    """

    def __init__(self, columns: list[str] | None = None):
        self.columns = columns

    # -- likelihood on (beta, c): thresholds theta_1 = c_1, theta_j = theta_{j-1} + e^{c_j}

    def _theta(self, c):
        return np.cumsum(np.concatenate([c[:1], np.exp(c[1:])]))

    def _loglik_grad(self, beta, theta, X, k):
        eta = X @ beta
        ext = np.concatenate([[-np.inf], theta, [np.inf]])
        a, b = ext[k + 1] - eta, ext[k] - eta
        Fa, Fb = _cdf(a), _cdf(b)
        fa = np.where(np.isfinite(a), Fa * (1 - Fa), 0.0)
        fb = np.where(np.isfinite(b), Fb * (1 - Fb), 0.0)
        P = np.clip(Fa - Fb, 1e-300, None)
        ll = float(np.log(P).sum())
        g_beta = X.T @ (-(fa - fb) / P)
        g_theta = np.zeros(len(theta))
        np.add.at(g_theta, np.minimum(k, len(theta) - 1), np.where(k < len(theta), fa / P, 0))
        np.add.at(g_theta, np.maximum(k - 1, 0), np.where(k > 0, -fb / P, 0))
        return ll, g_beta, g_theta

    def fit(self, X, y, *, start=None, information: bool = True) -> "CumulativeLogit":
        """Maximum likelihood; ``start`` (effects then threshold steps, as ``start_``)
        warm-starts it, ``information=False`` skips the standard errors."""
        from scipy import optimize

        X = np.asarray(X, float)
        y = np.asarray(y)
        cats = np.unique(y)
        if len(cats) < 2:
            raise ModelError("every score is in one category: a category model needs "
                             "scores in at least two categories")
        k = np.searchsorted(cats, y)
        p, m = X.shape[1], len(cats) - 1
        cum = np.cumsum(np.bincount(k, minlength=m + 1))[:-1] / len(y)
        theta0 = np.log(cum / (1 - cum))
        c0 = np.concatenate([theta0[:1], np.log(np.maximum(np.diff(theta0), 1e-3))])

        def objective(v):
            beta, c = v[:p], v[p:]
            theta = self._theta(c)
            ll, gb, gt = self._loglik_grad(beta, theta, X, k)
            # chain rule: d theta_j / d c_1 = 1, d theta_j / d c_m = e^{c_m} (j >= m)
            gc = np.cumsum(gt[::-1])[::-1]
            gc[1:] *= np.exp(c[1:])
            return -ll, -np.concatenate([gb, gc])

        start = np.concatenate([np.zeros(p), c0]) if start is None else start
        res = optimize.minimize(objective, start, jac=True,
                                method="BFGS", options={"gtol": 1e-9, "maxiter": 2000})
        if not information:  # the estimates only (leave-one-out refits)
            self.coef_, self.thresholds_ = res.x[:p], self._theta(res.x[p:])
            self.categories_, self.converged_ = cats, bool(res.success) or np.max(
                np.abs(res.jac)) < 1e-5
            self.start_ = res.x
            return self
        beta, theta = res.x[:p], self._theta(res.x[p:])
        self.coef_, self.thresholds_, self.categories_ = beta, theta, cats
        self.start_ = res.x
        self.loglik_ = -float(res.fun)
        self.converged_ = bool(res.success) or np.max(np.abs(res.jac)) < 1e-5
        # observed information on (beta, theta) by differencing the analytic score
        v0 = np.concatenate([beta, theta])

        def score(v):
            _, gb, gt = self._loglik_grad(v[:p], v[p:], X, k)
            return np.concatenate([gb, gt])

        h = 1e-6 * np.maximum(1.0, np.abs(v0))
        info = np.empty((len(v0), len(v0)))
        for j in range(len(v0)):
            up, dn = v0.copy(), v0.copy()
            up[j] += h[j]
            dn[j] -= h[j]
            info[:, j] = -(score(up) - score(dn)) / (2 * h[j])
        info = 0.5 * (info + info.T)
        try:
            self.cov_ = np.linalg.inv(info)
            self.se_ = np.sqrt(np.clip(np.diag(self.cov_), 0, None))
        except np.linalg.LinAlgError:
            self.cov_ = None
            self.se_ = np.full(len(v0), np.nan)
        return self

    def probabilities(self, X) -> np.ndarray:
        """Each category's probability, one row per setting (columns in category order)."""
        eta = np.asarray(X, float) @ self.coef_
        cum = _cdf(self.thresholds_[None, :] - eta[:, None])
        cum = np.column_stack([np.zeros(len(eta)), cum, np.ones(len(eta))])
        return np.diff(cum, axis=1)

    def expected(self, X) -> np.ndarray:
        """The expected category (probability-weighted mean of the category values)."""
        return self.probabilities(X) @ self.categories_.astype(float)

    def top_box(self, X, top: int = 1, *, bottom: bool = False) -> np.ndarray:
        """The chance of a score in the top (or bottom) ``top`` categories."""
        P = self.probabilities(X)
        return P[:, :top].sum(axis=1) if bottom else P[:, -top:].sum(axis=1)


def assessor_columns(assessors) -> tuple[np.ndarray, list[str]]:
    """Sum-to-zero columns of the assessors (the first is minus the rest, so all
    zero is the average assessor) and their labels ``assessor[NAME]``."""
    codes, names = pd.factorize(pd.Series(assessors, dtype=object), sort=False)
    A = np.zeros((len(codes), len(names) - 1))
    for j in range(1, len(names)):
        A[codes == j, j - 1] = 1.0
    A[codes == 0, :] = -1.0
    return A, [f"assessor[{n}]" for n in names[1:]]


def fit_category(study, attribute: str, *, assessor: str = "none",
                 terms=None) -> tuple[CumulativeLogit, list[str]]:
    """Fit the cumulative-logit model of one category attribute's scores on the
    study's model terms (coded units), with the assessor as sum-to-zero fixed
    columns when ``assessor = "fixed"``. Returns the model and its column labels."""
    from ..derive.panel_study import panel_scores
    from ..study.coding import to_coded
    from .terms import model_matrix, model_terms

    if assessor not in ("none", "fixed"):
        raise ModelError(f"assessor = {assessor!r}: use \"none\" or \"fixed\"")
    _, frame = panel_scores(study)
    sub = frame[frame["attribute"] == attribute].dropna(subset=["score"])
    index = {r: i for i, r in enumerate(study.runs["run"])}
    sub = sub[sub["run"].map(index).notna()]
    if sub.empty:
        raise ModelError(f"no '{attribute}' scores for the study's runs")
    coded = to_coded(study.factors, study.runs)[sub["run"].map(index).to_numpy(int)]
    spec = terms if terms is not None else (study.terms if study.terms is not None
                                             else study.model)
    n_settings = [len(np.unique(coded[:, j])) for j in range(coded.shape[1])]
    all_terms, _ = model_terms(spec if isinstance(spec, str) else list(spec),
                               study.factor_names, n_settings=n_settings)
    tlist = [t for t in all_terms if t.label != "intercept"]
    M = model_matrix(coded, tlist)
    labels = [t.label for t in tlist]
    if assessor == "fixed":
        A, names = assessor_columns(sub["assessor"])
        M = np.column_stack([M, A])
        labels += names
    model = CumulativeLogit(columns=labels).fit(M, sub["score"].to_numpy(float))
    return model, labels
