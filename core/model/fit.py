"""One least-squares model per response, in coded units.

``ResponseModel`` fits a response to the coded factor settings: it picks the
model's terms, drops the ones the runs cannot tell apart (aliases), fits by
QR, and works out everything a practitioner reads off a model: effects,
standard errors and p-values (or Lenth's margins when no degrees of freedom
are left), the ANOVA with lack of fit and curvature, R2, adjusted and
predicted R2, per-run diagnostics, a Box-Cox suggestion, the equation in
natural units, and vectorised predictions with confidence and prediction
intervals. ``fit_study`` fits every response of a study.

Blocks (days, batches: a ``block`` column of the runs, or the column named by
``[study] blocks``) enter every model as nuisance terms ``block[2]``, ...:
b - 1 sum-to-zero (effects) coded columns right after the intercept, so a
factor term confounded with blocks is the one left out and reported. They are
never dropped by reduction, never in the hierarchy, not factor effects (no
Lenth, no half-normal point), and predictions are for the average block
(block columns 0): they still take coded factor settings (n, k) only.
"""
from __future__ import annotations

import functools
import math
from typing import Sequence

import numpy as np
import pandas as pd
from scipy import special, stats

from .anova import anova_table
from .diagnostics import diagnostic_arrays, run_diagnostics
from ..errors import ModelError
from .lenth import half_normal_points, lenth
from .levels import derived_coefficients, factor_levels, level_counts, term_tests
from .reduce import backward_eliminate
from .dependence import find_aliases
from .terms import (Term, block_terms, hierarchy_closure, model_matrix,
                    model_terms, named_model_size, parse_term)
from .transforms import TRANSFORM_NAMES, box_cox, forward, inverse, power_advice
from .describe import response_report
from .equation import fitted_equations
from .notes import alias_notes, effect_index, effect_scale, near_alias_notes
from .solve import LeastSquares

__all__ = ["ResponseModel", "DEFAULT_ALPHA", "coded_points", "runs_to_fit",
           "check_transform_and_confidence"]

DEFAULT_ALPHA = 0.10  # backward elimination drops terms with p above this (common practice)


class ResponseModel:
    """A least-squares model of one response in coded factor units.

    Parameters
    ----------
    terms : a model name (``main``, ``interactions``, ``full``, ``quadratic``)
        or a list of term labels such as ``["protein", "protein:glycerol"]``.
    factor_names : every study factor, in study order (the columns of X).
    transform : ``none``, ``log`` or ``sqrt``: the scale the response is modelled on.
    confidence : level of the confidence and prediction intervals.
    name : the response's name, used in messages.
    reduce : backward elimination to a smaller hierarchical model.
    alpha : p-value above which reduction drops a term.
    keep, drop : terms pinned in (never dropped by reduction) or out (never fitted).
    factors : the study's Factor objects, for the equation in natural units.
    block_name : the data column the blocks passed to ``fit`` come from (for the report).
    mixture : for a blend, a ``MixtureInfo`` (model/scheffe.py): the model has no
        intercept (Scheffe), its blending terms have no +-1 effects, and the
        equation is also given in proportions of the total.
    """

    def __init__(self, *, terms: str | Sequence[str] = "interactions",
                 factor_names: Sequence[str], transform: str = "none",
                 confidence: float = 0.95, name: str = "response", reduce: bool = False,
                 alpha: float = DEFAULT_ALPHA, keep: Sequence[str] = (),
                 drop: Sequence[str] = (), factors: Sequence | None = None,
                 block_name: str = "block", mixture=None):
        self.terms = terms
        self.factor_names = factor_names
        self.transform = transform
        self.confidence = confidence
        self.name = name
        self.reduce = reduce
        self.alpha = alpha
        self.keep = keep
        self.drop = drop
        self.factors = factors
        self.block_name = block_name
        self.mixture = mixture

    # ------------------------------------------------------------------ fit

    def fit(self, X_coded, y, run_ids=None, block=None) -> "ResponseModel":
        """Fit to coded settings X (n, k) and responses y (n,); blank (NaN) y rows are left out.

        ``block`` (optional, one label per run) adds sum-to-zero block terms when
        the runs fall in two or more blocks.
        """
        name = self.name
        names = list(self.factor_names)
        self._check_options()
        X, y, ids = runs_to_fit(X_coded, y, run_ids, name, names)
        if block is not None:
            block = np.asarray(block, dtype=object).ravel()
            if block.size != y.size:
                raise ModelError(f"response '{name}': {block.size} block labels for "
                                 f"{y.size} runs")
            blank_block = np.array([is_blank(v) for v in block], dtype=bool)
            if blank_block.any():
                raise ModelError(f"response '{name}': run {ids[blank_block][0]} has no "
                                 f"block: give every run its block ({self.block_name})")

        warnings: list[str] = []
        blank = np.isnan(y)
        if blank.any():
            warnings.append(f"run(s) {', '.join(str(i) for i in ids[blank][:10])}"
                            f"{', ...' if blank.sum() > 10 else ''} have no value: left "
                            "out of this model")
            X, y, ids = X[~blank], y[~blank], ids[~blank]
            if block is not None:
                block = block[~blank]
        else:
            # X is only read during fit; y and the ids are kept, so they are copied
            # (as the selection above copies them) and never share the caller's data.
            y, ids = y.copy(), ids.copy()
        n = y.size
        if n < 2:
            raise ModelError(f"response '{name}': only {n} run(s) have a value: a model "
                             "needs at least 2, and a useful one many more")
        z = forward(y, self.transform, response=name)
        if np.ptp(z) == 0:
            raise ModelError(f"response '{name}' is {y[0]:g} in every run: there is "
                             "nothing to model: check the data or remove the response")

        # Distinct settings per factor decide the squares: only a quadratic model
        # or a list of terms has any (other named models do not need the count).
        n_settings = None
        if not isinstance(self.terms, str) or self.terms == "quadratic":
            Xs = np.sort(np.round(X, 9), axis=0)
            n_settings = (1 + np.count_nonzero(np.diff(Xs, axis=0), axis=0)).tolist()
        self._levels = factor_levels(self.factors)
        self.level_runs_ = level_counts(self.factors, X)
        terms, notes = model_terms(self.terms, names, n_settings=n_settings, response=name,
                                   levels=self._levels)
        if self.mixture is not None:  # Scheffe: the blending terms stand for the intercept
            terms = [t for t in terms if not t.is_intercept]
        warnings += notes
        keep_terms = self._pinned(self.keep, terms, "keep")
        drop_terms = self._pinned(self.drop, terms, "drop")
        if any(t.is_intercept for t in drop_terms):
            raise ModelError(f"response '{name}': the intercept cannot be dropped")
        terms = [t for t in terms if t not in drop_terms]

        M = model_matrix(X, terms)
        # Block columns right after the intercept: a factor term confounded with
        # the blocks is then the one left out (the blocks always stay).
        bterms, B, levels = (block_terms(block, len(names)) if block is not None
                             else ([], None, []))
        if bterms:
            terms = terms[:1] + bterms + terms[1:]
            M = np.asfortranarray(np.hstack([M[:, :1], B, M[:, 1:]]))
        keep_mask, aliases, qr = find_aliases(M, terms, return_qr=True)
        clean = all(len(v) == 1 for v in aliases.values())
        if len(terms) > n and not clean:
            raise ModelError(self._too_many(len(terms), n, len(names), len(bterms)))
        notes, confounded = alias_notes(aliases, {t.label for t in bterms})
        warnings += notes
        if not keep_mask.all():  # (no copy of M when every term is kept)
            terms = [t for t, k in zip(terms, keep_mask) if k]
            M = M[:, keep_mask]
        if len(terms) > n:  # cannot happen after alias removal, kept as a guard
            raise ModelError(self._too_many(len(terms), n, len(names), len(bterms)))

        self.requested_terms_ = [t.label for t in terms]
        self.reduction_ = None
        if self.reduce:
            terms, M, dropped_log = self._reduce(terms, M, z, keep_terms, qr)
            self.reduction_ = dropped_log
            if dropped_log:
                qr = None

        sol = self._solve(M, z, qr)
        warnings += near_alias_notes(terms, M, sol.cdiag, sol.qr.R)
        self._terms = terms
        self._sol = sol
        self._set_results(X, y, z, ids, terms, sol, aliases, warnings,
                          block if bterms else None, levels, confounded)
        return self

    def _solve(self, M: np.ndarray, z: np.ndarray, qr=None):  # a subclass may fit by GLS
        return LeastSquares(M, z, qr)

    def _check_options(self) -> None:
        name = self.name
        check_transform_and_confidence(name, self.transform, self.confidence)
        if not 0 < float(self.alpha) < 1:
            raise ModelError(f"response '{name}': alpha {self.alpha} must be a fraction "
                             "such as 0.10")
        if isinstance(self.factor_names, str) or len(self.factor_names) == 0:
            raise ModelError(f"response '{name}': factor_names must list the study's "
                             "factors")

    def _pinned(self, labels, terms: list[Term], what: str) -> list[Term]:
        if isinstance(labels, str):
            labels = [labels]
        out = []
        for text in labels or ():
            if isinstance(text, str) and text.strip().startswith("block["):
                raise ModelError(f"response '{self.name}': '{text}' is a block term: "
                                 "blocks are always in the model; list factor terms "
                                 f"to {what}")
            t = parse_term(text, list(self.factor_names), response=self.name)
            match = [u for u in terms if u.powers == t.powers]  # every column of it
            if not match:
                raise ModelError(f"response '{self.name}': term '{text}' to {what} is not "
                                 f"in the model {[u.label for u in terms]}: check the name")
            out.extend(match)
        return out

    def _too_many(self, p: int, n: int, k: int, n_blocks: int = 0) -> str:
        spec = self.terms
        what = f"the '{spec}' model" if isinstance(spec, str) else "the listed model"
        fits = [m for m in ("interactions", "main") if named_model_size(m, k) <= n]
        if fits:
            hint = (f"'{fits[0]}' ({named_model_size(fits[0], k)} terms) would fit, or "
                    f"list at most {n} terms")
        else:
            hint = (f"even main effects need {k + 1} runs: add runs or list at most "
                    f"{n} terms")
        with_blocks = (f" (with {n_blocks} block term{'s' if n_blocks > 1 else ''})"
                       if n_blocks else "")
        return (f"response '{self.name}': {what} has {p} terms{with_blocks} but only {n} "
                f"runs have a value: a model cannot have more terms than runs: {hint}")

    def _reduce(self, terms: list[Term], M: np.ndarray, z: np.ndarray,
                keep_terms: list[Term], qr=None) -> tuple[list[Term], np.ndarray, dict[str, str]]:
        """Hierarchical backward elimination (p-values, or Lenth's ME when saturated)."""
        pinned = (hierarchy_closure(keep_terms, terms) | {"intercept"}
                  | {t.label for t in terms if t.is_block})
        return backward_eliminate(terms, M, z, pinned, alpha=self.alpha,
                                  confidence=self.confidence, qr=qr,
                                  effect_index=self._effect_index)

    def _set_results(self, X, y, z, ids, terms, sol: LeastSquares, aliases, warnings,
                     block=None, levels=(), confounded=None) -> None:
        n, p = z.size, len(terms)
        # a generalised fit brings its whitened response (and so its own R2)
        zs = getattr(sol, "z", z)
        self.terms_ = [t.label for t in terms]
        self.coef_ = sol.coef.copy()
        self.aliases_ = {k: dict(v) for k, v in aliases.items()}
        self.n_ = int(n)
        self.residual_df_ = int(sol.df)
        sst = getattr(sol, "sst", None) or float(np.sum((z - z.mean()) ** 2))
        self.r2_ = float(1 - sol.sse / sst)
        if sol.df > 0:
            self.residual_sd_ = float(math.sqrt(sol.sse / sol.df))
            self.adj_r2_ = float(1 - (sol.sse / sol.df) / (sst / (n - 1)))
        else:
            self.residual_sd_ = float("nan")
            self.adj_r2_ = float("nan")
        h = sol.leverage
        if np.all(h < 1 - 1e-10):
            press = float(np.sum((sol.resid / (1 - h)) ** 2))
            self.press_ = press
            self.pred_r2_ = float(1 - press / sst)
        else:
            self.press_ = float("nan")
            self.pred_r2_ = float("nan")
        self.std_errors_ = None if sol.se is None else sol.se.copy()
        self.t_values_ = None if sol.t is None else sol.t.copy()
        self.p_values_ = None if sol.p is None else sol.p.copy()
        eff = set(self._effect_index(terms))
        # low-to-high change; for a level of a factor with three or more levels,
        # its deviation from the average over levels (notes.effect_scale)
        self.effect_scales_ = np.array([
            effect_scale(t) if i in eff or (t.cells and not t.is_square and not (
                self.mixture is not None and self.mixture.is_mixture_term(t))) else np.nan
            for i, t in enumerate(terms)])
        self.effects_ = sol.coef * self.effect_scales_
        with np.errstate(divide="ignore", invalid="ignore"):
            self.sum_squares_ = sol.coef ** 2 / sol.cdiag  # adjusted SS, 1 df each

        # Lenth's method when nothing is left for an error estimate.
        self.lenth_ = None
        self.half_normal_ = None
        self.sigma_, self.sigma_df_ = self.residual_sd_, self.residual_df_
        if sol.df == 0:
            eff_idx = self._effect_index(terms)
            if len(eff_idx) >= 3:
                effects = self.effects_[eff_idx]
                res = lenth(effects, level=self.confidence)
                self.lenth_ = res
                self.half_normal_ = half_normal_points([self.terms_[i] for i in eff_idx],
                                                       effects)
                # PSE estimates the standard error of an effect, 2 sigma sqrt(c_jj):
                # turn it into sigma so predictions still get intervals.
                scale = float(np.mean(2 * np.sqrt(sol.cdiag[eff_idx])))
                if res.pse > 0:
                    self.sigma_ = res.pse / scale
                    self.sigma_df_ = max(1, int(res.df))
                warnings.append("no residual degrees of freedom (every run is used by a "
                                "term): effects are judged against margins worked out from "
                                "the smaller effects (Lenth 1989: a term alone stands out "
                                f"beyond {res.me:.4g}, among all {res.m} terms beyond "
                                f"{res.sme:.4g}), and intervals use the noise those "
                                "effects show")
            else:
                warnings.append("no residual degrees of freedom and too few effects for "
                                "Lenth's method: no error estimate, no intervals")

        # ANOVA, lack of fit and curvature on the modelling scale.
        cat = [f is not None and f.is_categorical for f in (self.factors or [None] * len(
            self.factor_names))]
        self.anova_ = self._anova(X, z, sol, terms, block, cat)
        self.derived_coefficients_ = derived_coefficients(
            terms, sol.coef, sol.Rinv, self.sigma_, self.sigma_df_,
            list(self.factor_names), self._levels)
        scale_of = {t.group: s for t, s in zip(terms, self.effect_scales_) if t.cells}
        for d in self.derived_coefficients_:  # the last level's effect, as its columns'
            s = scale_of.get(d["group"], np.nan)
            d["effect"] = d["estimate"] * s if s == s else None
            d["effect_std_error"] = d["std_error"] * s if s == s else None
        self.blocks_ = self._block_results(terms, sol, levels, block, confounded or {})
        lof = self.anova_.get("lack_of_fit")
        if lof is not None and lof["p"] == lof["p"] and lof["p"] < 0.05:
            warnings.append(f"lack of fit is significant (p = {lof['p']:.3g}): the model "
                            "misses a pattern the replicates show: consider more terms "
                            "or a transform")
        curv = self.anova_.get("curvature")
        if curv is not None and curv["p"] == curv["p"] and curv["p"] < 0.05:
            warnings.append(f"curvature is significant (p = {curv['p']:.3g}): the centre "
                            "points do not lie on the plane of the factorial runs; the "
                            "model cannot say which factor bends, and predictions between "
                            "centre and corners are less trustworthy (axial runs would "
                            "locate it)")

        # Per-run diagnostics (the table itself is built on first use).
        self._diag = diagnostic_arrays(zs, sol.fitted, sol.leverage, sol.df, p)
        self._ids = ids
        flagged = self._diag["flagged"]
        self.flagged_runs_ = [str(i) for i in ids[flagged]]
        for run, t in zip(self.flagged_runs_, self._diag["studentized_deleted"][flagged]):
            warnings.append(f"run {run} has a studentized (deleted) residual of "
                            f"{t:.2f}, beyond +-3: check it for a recording or making "
                            "error")
        if sol.df > 0 and sol.sse <= 1e-20 * max(sst, 1e-300):
            warnings.append("the model passes through every run exactly: its standard "
                            "errors are 0 and its p-values mean nothing")
        if self.pred_r2_ == self.pred_r2_ and self.r2_ - self.pred_r2_ > 0.2:
            warnings.append(f"predicted R2 ({self.pred_r2_:.2f}) is far below R2 "
                            f"({self.r2_:.2f}): the model may follow noise; consider "
                            "reducing it")

        # Box-Cox suggestion on the natural scale with the same terms: on first use.
        self._box_cox_input = (y, sol.qr) if sol.df > 0 else None
        self._box_cox = None
        # the equation in natural units, or for a blend in proportions of the total
        self.natural_coefficients_, self.proportion_coefficients_ = fitted_equations(
            terms, sol.coef, self.factors, list(self.factor_names), self.mixture,
            levels=self._levels)
        self._warnings = warnings
        # What prediction needs, precomputed once: block columns are 0 at the
        # average block, so only the factor terms' rows take part.
        idx = [i for i, t in enumerate(terms) if not t.is_block]
        self._pred_terms = [terms[i] for i in idx]
        self._pred_coef = sol.coef[idx]
        self._Rinv = sol.Rinv[idx]

    def _anova(self, X, z, sol, terms, block, categorical) -> dict:
        """The ANOVA with lack of fit and curvature, and each whole term's F test."""
        out = anova_table(X, z, sol.sse, len(terms), block, categorical=categorical)
        out["terms"] = term_tests(terms, sol.coef, sol.Rinv, sol.sse, sol.df)
        return out

    def _block_results(self, terms, sol: LeastSquares, levels, block, confounded) -> dict | None:
        """Block effects (one per block, summing to 0), their adjusted SS and test."""
        bidx = [i for i, t in enumerate(terms) if t.is_block]
        if not bidx:
            return None
        b = len(levels)
        beta = sol.coef[bidx]
        # effects of all b blocks: the first is minus the sum of the others
        L = np.vstack([-np.ones(len(bidx)), np.eye(len(bidx))])
        effects = L @ beta
        C = sol.Rinv[bidx] @ sol.Rinv[bidx].T  # block part of (X'X)^-1
        # extra SS of the block columns given every other term: beta' C^-1 beta
        ss = float(beta @ np.linalg.solve(C, beta))
        df = len(bidx)
        labels = np.asarray([str(v) for v in block], dtype=object)
        counts = {lev: int(np.sum(labels == lev)) for lev in levels}
        if sol.df > 0:
            s2 = sol.sse / sol.df
            se = np.sqrt(s2 * np.einsum("ij,jk,ik->i", L, C, L))
            f = (ss / df) / s2 if s2 > 0 else (np.inf if ss > 0 else np.nan)
            p = float(special.fdtrc(df, sol.df, f)) if f == f else np.nan
        else:
            se = np.full(b, np.nan)
            f = p = np.nan
        return {"column": self.block_name, "levels": list(levels), "runs": counts,
                "terms": [terms[i].label for i in bidx],
                "effects": dict(zip(levels, effects.tolist())),
                "std_errors": dict(zip(levels, se.tolist())),
                "ss": ss, "df": df, "f": float(f), "p": float(p),
                "confounded": {k: list(v) for k, v in confounded.items()}}

    @property
    def box_cox_(self) -> dict | None:
        """Box-Cox lambda (with its likelihood interval) and the suggested transform.

        None when some value is 0 or negative or no residual degrees of freedom are
        left. Computed on first use: it is not needed for predictions.
        """
        self._check_fitted()
        if self._box_cox is None and self._box_cox_input is not None:
            y, fac = self._box_cox_input
            self._box_cox = box_cox(y, fac.Q, level=self.confidence) or {}
            self._box_cox_input = None
        return self._box_cox or None

    @property
    def warnings_(self) -> list[str]:
        """What the user should know about this model, one sentence each."""
        self._check_fitted()
        out = list(self._warnings)
        bc = self.box_cox_
        if bc is not None:
            sentence, helps = power_advice(bc, self.transform)
            if helps:
                out.append(sentence[0].upper() + sentence[1:]
                           + f" (set transform = \"{bc['suggest']}\" for this response)")
        return out

    @property
    def residuals_(self) -> pd.Series:
        """Residuals (observed - fitted, modelling scale) indexed by run id (text)."""
        self._check_fitted()
        return pd.Series(self._diag["residual"], index=pd.Index(
            [str(i) for i in self._ids], dtype=object, name="run"), name=self.name)

    @property
    def diagnostics_(self) -> pd.DataFrame:
        """Per-run table indexed by run id: observed, fitted, residual, leverage,
        studentized, studentized_deleted, cooks_distance, flagged (modelling scale)."""
        self._check_fitted()
        return run_diagnostics(self._ids, self._diag)

    # -------------------------------------------------------------- predict

    def _check_fitted(self) -> None:
        if not hasattr(self, "coef_"):
            raise ModelError(f"response '{self.name}': the model is not fitted yet: call "
                             "fit first")

    def _matrix(self, X_coded) -> np.ndarray:
        return model_matrix(coded_points(X_coded, self.name, len(self.factor_names)),
                            self._pred_terms)

    def predictive(self, X_coded) -> tuple[np.ndarray, np.ndarray, float, int]:
        """Mean, its standard error, sigma and its degrees of freedom, on the modelling scale.

        For Monte Carlo: a new observation at x is mean + se_mean * t + sigma * t'.
        In a saturated model sigma comes from Lenth's PSE (df = m/3, rounded down).
        """
        self._check_fitted()
        M = self._matrix(X_coded)
        mean = M @ self._pred_coef
        A = M @ self._Rinv
        se = np.sqrt(np.einsum("ij,ij->i", A, A)) * self.sigma_
        return mean, se, float(self.sigma_), int(self.sigma_df_)

    def mean_covariance(self, X1, X2) -> np.ndarray:
        """Covariance of the fitted means between two sets of settings (n1, n2),
        modelling scale: ``sigma^2 m(x1)' (X'X)^-1 m(x2)`` with ``(X'X)^-1 = Rinv Rinv'``
        (NaN without an estimate of sigma). The next batch uses it to update the
        uncertainty after a run it plans (core/search/next_batch.py)."""
        self._check_fitted()
        A = self._matrix(X1) @ self._Rinv
        B = self._matrix(X2) @ self._Rinv
        return float(self.sigma_) ** 2 * (A @ B.T)

    def predict(self, X_coded) -> np.ndarray:
        """Mean prediction in natural units (for log: the back-transformed mean, a median)."""
        self._check_fitted()
        return inverse(self._matrix(X_coded) @ self._pred_coef, self.transform)

    def intervals(self, X_coded, level: float | None = None) -> pd.DataFrame:
        """Predictions with confidence (mean) and prediction (new run) intervals, natural units.

        Columns: predicted, ci_low, ci_high, pi_low, pi_high. Intervals are NaN
        when the model has no error estimate.
        """
        return pd.DataFrame(self.interval_array(X_coded, level), columns=[
            "predicted", "ci_low", "ci_high", "pi_low", "pi_high"])

    def interval_array(self, X_coded, level: float | None = None) -> np.ndarray:
        """``intervals`` as a bare (n, 5) array in the same column order (no table)."""
        level = self.confidence if level is None else float(level)
        if not 0 < level < 1:
            raise ModelError(f"response '{self.name}': level {level} must be a fraction "
                             "such as 0.95")
        mean, se, sigma, df = self.predictive(X_coded)
        q = _t_quantile(0.5 + level / 2, df) if df > 0 and sigma == sigma else np.nan
        ci, pi = q * se, q * np.sqrt(se ** 2 + sigma ** 2)  # NaN without an error estimate
        return inverse(np.column_stack([mean, mean - ci, mean + ci, mean - pi, mean + pi]),
                       self.transform)

    def polynomial(self) -> tuple[list, np.ndarray]:
        """The mean model on the modelling scale: its terms (with powers) and coefficients."""
        self._check_fitted()
        return list(self._pred_terms), self._pred_coef.copy()

    def inverse_transform(self, y) -> np.ndarray:
        """Modelling scale -> natural scale."""
        return inverse(y, self.transform)

    def report(self) -> dict:
        """The JSON-ready summary printed by ``tradeoff fit --json`` for this response."""
        self._check_fitted()
        out = response_report(self)
        if self.mixture is not None:
            # which units the coefficients are for, and the equation in proportions
            out["model"] = [getattr(t, "label", t) for t in self.terms]
            out["mixture_scale"] = self.mixture.scale
            out["proportion_coefficients"] = dict(self.proportion_coefficients_)
        return out

    def _effect_index(self, terms) -> list[int]:
        """Positions of the factor effects: no blending term of a mixture model
        (a proportion has no low-to-high effect), no intercept, square or block."""
        idx = effect_index(terms)
        if self.mixture is None:
            return idx
        return [i for i in idx if not self.mixture.is_mixture_term(terms[i])]


@functools.lru_cache(maxsize=256)
def _t_quantile(p: float, df: int) -> float:
    return float(stats.t.ppf(p, df))  # the same few (level, df) pairs come back often


def is_blank(value) -> bool:
    if value is None:
        return True
    if isinstance(value, (float, np.floating)):
        return not math.isfinite(value)
    return isinstance(value, str) and not value.strip()


def check_transform_and_confidence(name: str, transform: str, confidence) -> None:
    """The options every model kind shares, refused in the same words."""
    if transform not in TRANSFORM_NAMES:
        raise ModelError(f"response '{name}': transform '{transform}' is not one I "
                         f"know: use one of {', '.join(TRANSFORM_NAMES)}")
    if not 0.5 <= float(confidence) < 1:
        raise ModelError(f"response '{name}': confidence {confidence} must be a "
                         "fraction such as 0.95")


def runs_to_fit(X_coded, y, run_ids, name: str, names: list) -> tuple:
    """Checked (X, y, run ids) for a fit; shared by every model kind (same words).

    Blank responses stay (NaN, left out by the fit); blank settings and
    infinite responses are refused, naming the run.
    """
    X = np.asarray(X_coded, dtype=float)
    if X.ndim != 2 or X.shape[1] != len(names):
        raise ModelError(f"response '{name}': expected coded settings with one column "
                         f"per factor ({len(names)}), found shape {X.shape}")
    y = np.asarray(y, dtype=float).ravel()
    if y.size != X.shape[0]:
        raise ModelError(f"response '{name}': {y.size} values for {X.shape[0]} runs")
    # run ids stay as given; they become text only where shown (cheap fit)
    ids = np.arange(1, y.size + 1) if run_ids is None else np.asarray(run_ids, dtype=object)
    if ids.size != y.size:
        raise ModelError(f"response '{name}': {ids.size} run ids for {y.size} runs")
    bad = ~np.isfinite(X)
    if bad.any():
        j = int(np.flatnonzero(bad.any(axis=0))[0])
        raise ModelError(f"response '{name}': factor '{names[j]}' has a blank or "
                         f"non-numeric setting in run {ids[bad[:, j]][0]}")
    if np.isinf(y).any():
        raise ModelError(f"response '{name}': an infinite value in run "
                         f"{ids[np.isinf(y)][0]}: check the data")
    return X, y, ids


def coded_points(X_coded, name: str, n_factors: int) -> np.ndarray:
    """Coded settings as an (n, k) float array; one row may come as a flat vector.

    Shared by every model kind, so each refuses a wrong shape in the same words.
    """
    X = np.asarray(X_coded, dtype=float)
    if X.ndim == 1:
        X = X.reshape(1, -1)
    if X.ndim != 2 or X.shape[1] != n_factors:
        raise ModelError(f"response '{name}': expected settings with one column "
                         f"per factor ({n_factors}), found shape {X.shape}")
    return X
