"""A ``derive = "panel_category"`` response: the cumulative-logit model of a
category attribute's scores, behind the prediction interface every response
model offers (``predict``, ``intervals``, ``predictive``, ``mean_covariance``,
``residuals_``, ``report``), so the search, chances, maps and next runs read it
like any other.

The scores are fitted by ``CumulativeLogit`` (``panel_category.py``) on the
response's model terms in coded units (no intercept: the thresholds stand for
it), with ``assessor = "fixed"`` adding sum-to-zero assessor columns, so
predictions are for the average assessor on the latent scale.

What is predicted is a weighted sum of the category probabilities,
``S(x) = sum_k w_k P_k(x)``: the expected category (``w_k`` = the category's
value) or the percent of scores in the top (bottom) N categories (``w_k`` =
100 in those categories, 0 elsewhere).

Intervals (delta method on the fitted parameters, common practice for
functions of maximum-likelihood estimates):

- the mean's SD is ``sqrt(g' V g)`` with ``V`` the inverse observed
  information of (effects, thresholds) and ``g`` the gradient of ``S``; with
  ``f_j`` the logistic density at ``theta_j - x'beta`` and
  ``dw_j = w_{j+1} - w_j``: ``dS/dbeta = x sum_j f_j dw_j`` and
  ``dS/dtheta_j = -f_j dw_j``;
- a new run's observed value is the mean of a panel of ``n`` scores (``n``
  the median number of scores per run), so it also scatters by the scores'
  own spread: ``sigma^2 = mean over runs of (sum_k w_k^2 P_k - S^2) / n_run``
  at the runs' fitted probabilities. The prediction interval is
  ``S +- z sqrt(sd^2 + sigma^2)`` (normal quantiles), cut to the scale.
"""
from __future__ import annotations

import math

import numpy as np
import pandas as pd

from ..errors import ModelError
from .panel_category import CumulativeLogit, _cdf, assessor_columns

__all__ = ["CategoryModel", "category_weights", "fit_category_response"]

_GAUSSIAN_DF = 10 ** 6  # normal quantiles: the delta method gives no t degrees of freedom


def category_weights(categories, summary: str, boxes: int, scale) -> np.ndarray:
    """The weight of each category in the summary (its value, or 100 / 0 for a box)."""
    c = np.asarray(categories, dtype=float)
    lo, hi = scale
    if summary == "top_box":
        return 100.0 * (c >= hi - boxes + 1)
    if summary == "bottom_box":
        return 100.0 * (c <= lo + boxes - 1)
    return c


class CategoryModel:
    """A category attribute's summary, modelled through its scores.

    Parameters (keyword-only, stored as given): ``terms`` (model name or term
    labels), ``factor_names``, ``factors``, ``name``, ``confidence``,
    ``summary`` ("expected", "top_box", "bottom_box"), ``boxes`` (N),
    ``scale`` (low, high), ``assessor`` ("none" or "fixed").

    Learned: ``terms_`` (column labels), ``logit_`` (the fitted
    ``CumulativeLogit``), ``weights_``, ``sigma_`` (a new run's panel scatter),
    ``n_panel_``, ``n_``, ``n_runs_``, ``r2_`` (run values on fitted), ``pred_r2_``
    (each run predicted by the model fitted without its scores), ``warnings_``.
    """

    transform = "none"

    def __init__(self, *, terms, factor_names, factors=None, name: str = "response",
                 confidence: float = 0.95, summary: str = "expected", boxes: int = 0,
                 scale=(1.0, 5.0), assessor: str = "none"):
        self.terms = terms
        self.factor_names = list(factor_names)
        self.factors = factors
        self.name = name
        self.confidence = confidence
        self.summary = summary
        self.boxes = boxes
        self.scale = scale
        self.assessor = assessor

    # ------------------------------------------------------------------ fit

    def fit(self, X_scores, scores, assessors, runs, run_X, run_ids, run_values):
        """Fit on one coded row per score (its run's settings); ``run_X``,
        ``run_ids`` and ``run_values`` are the runs and their observed summaries."""
        from .levels import factor_levels, level_counts
        from .terms import model_matrix, model_terms

        X = np.asarray(X_scores, dtype=float)
        y = np.asarray(scores, dtype=float)
        obs = np.asarray(run_values, dtype=float)
        seen_values = obs[~np.isnan(obs)]
        if seen_values.size and np.ptp(seen_values) == 0:
            raise ModelError(f"response '{self.name}' is {seen_values[0]:g} in every run: "
                             "there is nothing to model (for a box, choose more "
                             "categories with top = N or bottom = N)")
        n_settings = (1 + np.count_nonzero(np.diff(np.sort(np.round(X, 9), axis=0), axis=0),
                                           axis=0)).tolist()
        terms, notes = model_terms(self.terms, self.factor_names, n_settings=n_settings,
                                   response=self.name, levels=factor_levels(self.factors)
                                   if self.factors is not None else None)
        terms = [t for t in terms if not t.is_intercept]
        M = model_matrix(X, terms)
        labels = [t.label for t in terms]
        rank = np.linalg.matrix_rank(M) if M.shape[1] else 0
        run_count = len(np.unique(np.asarray(runs, dtype=object)))
        if rank < M.shape[1] or run_count < M.shape[1] + 1:
            raise ModelError(f"response '{self.name}': the category model has "
                             f"{M.shape[1]} effects but the {run_count} runs cannot "
                             "estimate them all: use a smaller model (terms = [...])")
        A, labels_a = (assessor_columns(assessors) if self.assessor == "fixed"
                       else (np.zeros((len(y), 0)), []))
        logit = CumulativeLogit(columns=labels + labels_a).fit(np.column_stack([M, A]), y)
        if logit.cov_ is None:
            raise ModelError(f"response '{self.name}': the category model's information "
                             "matrix is singular (a category or a setting predicts the "
                             "scores perfectly): use fewer terms or assessor = \"none\"")
        self._terms, self._p, self._pa = terms, M.shape[1], A.shape[1]
        self.terms_, self.logit_ = labels, logit
        self.weights_ = category_weights(logit.categories_, self.summary, self.boxes,
                                         self.scale)
        self.n_, self.n_runs_ = len(y), run_count
        self.level_runs_ = level_counts(self.factors, np.asarray(run_X, dtype=float)) \
            if self.factors is not None else {}
        # a new run's panel scatter: each run's score variance under the model over its count
        run_ids = np.asarray(run_ids, dtype=object)
        per_run = pd.Series(np.asarray(runs, dtype=object)).value_counts()
        n_run = np.array([per_run.get(r, 0) for r in run_ids], dtype=float)
        P = self._probabilities(np.asarray(run_X, dtype=float))
        S = P @ self.weights_
        V = P @ self.weights_ ** 2 - S ** 2
        seen = n_run > 0
        self.n_panel_ = float(np.median(n_run[seen]))
        self.sigma_ = float(math.sqrt(np.mean(V[seen] / n_run[seen])))
        self._ids = [str(i) for i in run_ids]
        se = np.sqrt(self._mean_var(np.asarray(run_X, dtype=float)) + V / np.maximum(n_run, 1))
        self._diag = {"observed": obs, "fitted": S, "residual": obs - S,
                      "standardized": (obs - S) / np.where(se > 0, se, np.nan)}
        ok = ~np.isnan(obs)
        ss = float(np.sum((obs[ok] - obs[ok].mean()) ** 2))
        self.r2_ = 1 - float(np.sum((obs[ok] - S[ok]) ** 2)) / ss if ss > 0 else float("nan")
        self.pred_r2_ = self._left_out_r2(np.column_stack([M, A]), y,
                                          np.asarray(runs, dtype=object), run_ids,
                                          np.asarray(run_X, dtype=float), obs, ss)
        self.warnings_ = list(notes)
        if not logit.converged_:
            self.warnings_.append("the category model's fit did not fully converge: "
                                  "treat its effects with caution")
        return self

    def _left_out_r2(self, XA, y, runs, run_ids, run_X, obs, ss) -> float:
        """Predicted R2: each run's summary predicted by the model fitted without its
        scores (warm-started from the full fit), 1 - PRESS / total sum of squares.
        NaN when a refit loses a category or does not converge."""
        if not ss > 0:
            return float("nan")
        press = 0.0
        for i, run in enumerate(run_ids):
            if np.isnan(obs[i]):
                continue
            keep = runs != run
            try:
                part = CumulativeLogit().fit(XA[keep], y[keep], start=self.logit_.start_,
                                             information=False)
            except ModelError:
                return float("nan")
            if (len(part.categories_) != len(self.logit_.categories_)
                    or not part.converged_):
                return float("nan")
            probs = part.probabilities(self._design(run_X[i]))[0]
            press += float((obs[i] - probs @ self.weights_) ** 2)
        return 1 - press / ss

    def _check_fitted(self) -> None:
        if not hasattr(self, "logit_"):
            raise ModelError(f"response '{self.name}': the model is not fitted yet: call "
                             "fit first")

    # ------------------------------------------------------------ predictions

    def _design(self, X_coded) -> np.ndarray:
        from .terms import model_matrix

        X = np.atleast_2d(np.asarray(X_coded, dtype=float))
        M = model_matrix(X, self._terms)
        return np.column_stack([M, np.zeros((len(X), self._pa))])  # the average assessor

    def _probabilities(self, X_coded) -> np.ndarray:
        return self.logit_.probabilities(self._design(X_coded))

    def probabilities(self, X_coded) -> pd.DataFrame:
        """Each category's probability at coded settings (columns: the categories)."""
        self._check_fitted()
        return pd.DataFrame(self._probabilities(X_coded),
                            columns=[f"{c:g}" for c in self.logit_.categories_])

    def _gradient(self, X_coded) -> np.ndarray:
        """dS / d(effects, thresholds), one row per setting (the module's formulas)."""
        D = self._design(X_coded)
        lg = self.logit_
        F = _cdf(lg.thresholds_[None, :] - (D @ lg.coef_)[:, None])
        f = F * (1 - F) * np.diff(self.weights_)[None, :]
        return np.column_stack([D * f.sum(axis=1)[:, None], -f])

    def _mean_var(self, X_coded) -> np.ndarray:
        G = self._gradient(X_coded)
        return np.maximum(np.einsum("ij,jk,ik->i", G, self.logit_.cov_, G), 0.0)

    def predict(self, X_coded) -> np.ndarray:
        """The summary (expected category or percent in the boxes) at coded settings."""
        self._check_fitted()
        return self._probabilities(X_coded) @ self.weights_

    def predictive(self, X_coded) -> tuple[np.ndarray, np.ndarray, float, int]:
        """Mean, its delta-method SD, a new run's panel scatter SD, and (normal) df."""
        self._check_fitted()
        return (self.predict(X_coded), np.sqrt(self._mean_var(X_coded)), self.sigma_,
                _GAUSSIAN_DF)

    def mean_covariance(self, X1, X2) -> np.ndarray:
        """Delta-method covariance of the summary between two sets of settings."""
        self._check_fitted()
        return self._gradient(X1) @ self.logit_.cov_ @ self._gradient(X2).T

    def intervals(self, X_coded, level: float | None = None) -> pd.DataFrame:
        """predicted, ci_low, ci_high, pi_low, pi_high (normal quantiles, cut to the scale)."""
        from scipy.special import ndtri

        level = self.confidence if level is None else float(level)
        if not 0 < level < 1:
            raise ModelError(f"response '{self.name}': level {level} must be a fraction "
                             "such as 0.95")
        mean, sd, sigma, _ = self.predictive(X_coded)
        q = float(ndtri(0.5 + level / 2))
        lo, hi = (0.0, 100.0) if self.summary != "expected" else self.scale
        ci, pi = q * sd, q * np.sqrt(sd ** 2 + sigma ** 2)
        return pd.DataFrame({"predicted": mean,
                             "ci_low": np.clip(mean - ci, lo, hi),
                             "ci_high": np.clip(mean + ci, lo, hi),
                             "pi_low": np.clip(mean - pi, lo, hi),
                             "pi_high": np.clip(mean + pi, lo, hi)})

    def inverse_transform(self, y) -> np.ndarray:
        """Modelling scale -> natural scale (the same: no transform)."""
        return np.asarray(y, dtype=float)

    # ------------------------------------------------------------ learned tables

    @property
    def residuals_(self) -> pd.Series:
        """Run value minus the model's summary at the run, indexed by run id."""
        self._check_fitted()
        return pd.Series(self._diag["residual"], index=pd.Index(
            self._ids, dtype=object, name="run"), name=self.name)

    @property
    def diagnostics_(self) -> pd.DataFrame:
        """Per run: observed, fitted, residual, standardized (the residual over the
        SD of a new run's value: the mean's and the panel's scatter), flagged (beyond 3)."""
        self._check_fitted()
        table = pd.DataFrame(self._diag, index=pd.Index(self._ids, dtype=object, name="run"))
        table["flagged"] = np.abs(table["standardized"]) > 3
        return table

    def coefficient_table(self) -> pd.DataFrame:
        """Effects then thresholds: ``name``, ``kind`` (effect, assessor, threshold),
        ``estimate`` (latent scale, per coded unit), ``se``, ``z``, ``p``."""
        from scipy.stats import norm

        self._check_fitted()
        lg = self.logit_
        cats = [f"{c:g}" for c in lg.categories_]
        names = list(lg.columns) + [f"{a}|{b}" for a, b in zip(cats[:-1], cats[1:])]
        kinds = (["effect"] * self._p + ["assessor"] * self._pa
                 + ["threshold"] * len(lg.thresholds_))
        est = np.concatenate([lg.coef_, lg.thresholds_])
        z = est / np.where(lg.se_ > 0, lg.se_, np.nan)
        p = 2 * norm.sf(np.abs(z))
        return pd.DataFrame({"name": names, "kind": kinds, "estimate": est, "se": lg.se_,
                             "z": z, "p": np.where(np.array(kinds) == "threshold", np.nan, p)})

    def report(self) -> dict:
        """The JSON-ready summary printed by ``tradeoff fit --json`` for this response."""
        self._check_fitted()
        table = self.coefficient_table()

        def rows(kind):
            return [{"term" if kind != "threshold" else "between": r.name,
                     "estimate": _num(r.estimate), "se": _num(r.se), "z": _num(r.z),
                     **({"p": _num(r.p)} if kind != "threshold" else {})}
                    for r in table[table["kind"] == kind].itertuples()]

        flagged = self.diagnostics_
        return {
            "response": self.name, "transform": "none", "model": "category",
            "summary": self.summary, "boxes": int(self.boxes), "assessor": self.assessor,
            "scale": [float(v) for v in self.scale],
            "categories": [float(c) for c in self.logit_.categories_],
            "n": int(self.n_), "n_runs": int(self.n_runs_),
            "scores_per_run": _num(self.n_panel_),
            "effects": rows("effect"), "assessors": rows("assessor"),
            "thresholds": rows("threshold"),
            "log_likelihood": _num(self.logit_.loglik_),
            "r2": _num(self.r2_), "pred_r2": _num(self.pred_r2_),
            "residual_sd": _num(self.sigma_),
            "interval_method": "delta method on the effects and thresholds; a new run "
                               "adds the scatter of a panel of the usual size",
            "flagged_runs": [str(i) for i in flagged.index[flagged["flagged"]]],
            "confidence": self.confidence, "warnings": list(self.warnings_),
        }


def _num(v):
    if v is None:
        return None
    v = float(v)
    return v if math.isfinite(v) else None


def fit_category_response(study, response, spec) -> CategoryModel:
    """Fit a ``derive = "panel_category"`` response of a study on its scores."""
    from ..derive.options import _options, _section
    from ..derive.panel_input import attribute_info
    from ..derive.panel_study import panel_scores
    from ..study.coding import to_coded

    opts = _options(study, response)
    if study.mixture is not None:
        raise ModelError(f"response '{response.name}': a category model of blends is not "
                         "offered: use derive = \"panel_mean\"")
    attr = opts["attribute"]
    _, frame = panel_scores(study)
    sub = frame[frame["attribute"] == attr].dropna(subset=["score"])
    index = {r: i for i, r in enumerate(study.runs["run"])}
    counts = sub["run"].value_counts()
    values = study.runs[response.name].to_numpy(float)
    keep = [r for r in study.runs["run"] if counts.get(r, 0) >= opts["min_points"]
            and np.isfinite(values[index[r]])]
    sub = sub[sub["run"].isin(keep)]
    if sub["score"].nunique() < 2:
        raise ModelError(f"response '{response.name}': every '{attr}' score is in one "
                         "category: a category model needs scores in two or more")
    coded = to_coded(study.factors, study.runs)
    rows = [index[r] for r in keep]
    model = CategoryModel(terms=spec, factor_names=study.factor_names,
                          factors=study.factors, name=response.name,
                          confidence=study.confidence, summary=opts["summary"],
                          boxes=opts["boxes"], assessor=opts["assessor"],
                          scale=attribute_info(_section(study, "panel"), attr)["scale"])
    return model.fit(coded[sub["run"].map(index).to_numpy(int)], sub["score"].to_numpy(float),
                     sub["assessor"].to_numpy(object), sub["run"].to_numpy(object),
                     coded[rows], keep, values[rows])
