"""A smooth (Gaussian-process) model of one response, in coded units.

Some responses follow no polynomial: liking peaks, texture saturates, data
gathered over earlier studies scatter over the region instead of sitting on
a design. ``SmoothModel`` fits a Gaussian process from scikit-learn to the
coded factor settings (categorical factors as their -1/+1 columns):

* the kernel is a constant times a Matern kernel (nu = 5/2) with one length
  scale per factor (anisotropic), plus a white-noise term for run-to-run
  scatter; the response (on its modelling scale: none, log or sqrt) is
  centred and scaled to unit variance first;
* the kernel's hyperparameters maximise the log marginal likelihood,
  restarted from seeded random starts (same seed, same model);
* predictions follow Rasmussen & Williams (2006), Gaussian Processes for
  Machine Learning, eqs. 2.25-2.26 (Algorithm 2.1): mean k*' alpha, latent
  variance k(x, x) - v'v with v = L \\ k*. The confidence interval uses the
  latent SD (the mean response), the prediction interval adds the noise
  (one new run); both are normal, the posterior's own shape.

There are no effects, p-values or ANOVA: the model has no terms. In their
place come each factor's length scale (the coded distance over which the
response changes appreciably: short = steep or wiggly, long = flat) and the
leave-one-out R2 in the closed form of Rasmussen & Williams (2006), eqs.
5.10-5.12 (hyperparameters held at their fitted values).

It presents the prediction interface of ``ResponseModel`` (``predict``,
``intervals``, ``predictive``, ``inverse_transform``, ``residuals_``,
``pred_r2_``, ``report``), so the search, the chances, the maps and the
what-if panel use it unchanged. scikit-learn is imported inside ``fit`` so
``import tradeoff`` stays light.
"""
from __future__ import annotations

import math
import warnings as _warnings
from typing import Sequence

import numpy as np
import pandas as pd

from ..errors import ModelError, StudyError
from .fit import check_transform_and_confidence, coded_points, runs_to_fit
from .transforms import forward, inverse

__all__ = ["SmoothModel", "smooth_min_runs", "LENGTH_BOUNDS", "GAUSSIAN_DF",
           "REFIT_LOO_MAX_RUNS",
           "NOISE_SHARE_WARN"]

# Coded length scales searched. Shorter than 0.3 coded units (three bends over
# the tested range, -1..+1) a kernel can mimic run-to-run noise by bending
# between neighbouring runs, and the likelihood then prefers it to the noise
# term (seen on pure-noise data with 20 scattered runs); above 100 the response
# is flat along the factor over the region many times over.
LENGTH_BOUNDS = (0.3, 100.0)
_SIGNAL_BOUNDS = (1e-3, 1e3)  # signal variance, in units of the response's variance
_NOISE_BOUNDS = (1e-6, 10.0)  # noise variance, likewise
# The posterior is normal: chances draw from a t with this many degrees of
# freedom, a normal to six digits (the chance module takes a t for every model).
GAUSSIAN_DF = 10 ** 6
# leave-one-out refits up to this many runs (the model comparison's limit too)
REFIT_LOO_MAX_RUNS = 50
# Above this share of the variation in the noise term the model sees little
# but scatter (common practice: a signal-to-noise ratio below 1/3).
NOISE_SHARE_WARN = 0.9
_FLAG = 3.0  # standardized leave-one-out residuals beyond this are marked (common practice)
_AT_BOUND = 1.02  # within 2 % (on the log scale's terms) of a bound counts as at it


def _one_thread():
    """BLAS on one thread while fitting: the matrices are small (n runs), and a
    thread pool only adds waiting (measured: three to four times slower on a
    busy two-core machine)."""
    from threadpoolctl import threadpool_limits

    return threadpool_limits(limits=1, user_api="blas")


def smooth_min_runs(k: int) -> int:
    """Runs with a value a smooth model needs: 2 per factor plus 3 (k + 2
    hyperparameters, with room left to estimate them)."""
    return 2 * k + 3


def _kernel(k: int, *, length_scale=1.0, signal=1.0, noise=0.1):
    from sklearn.gaussian_process.kernels import ConstantKernel, Matern, WhiteKernel

    return (ConstantKernel(signal, _SIGNAL_BOUNDS)
            * Matern(length_scale=np.broadcast_to(np.asarray(length_scale, float),
                                                  (k,)).copy(),
                     length_scale_bounds=LENGTH_BOUNDS, nu=2.5)
            + WhiteKernel(noise, _NOISE_BOUNDS))


class SmoothModel:
    """A Gaussian-process model of one response in coded factor units.

    Parameters
    ----------
    factor_names : every study factor, in study order (the columns of X).
    transform : ``none``, ``log`` or ``sqrt``: the scale the response is modelled on.
    confidence : level of the confidence and prediction intervals.
    name : the response's name, used in messages.
    factors : the study's Factor objects, for length scales in natural units.
    restarts : random restarts of the hyperparameter search after the first start.
    seed : seed of the restarts.
    kernel : a fitted-form kernel ``signal * Matern + White`` to start from
        (default: unit length scales); with ``optimize=False`` it is used as
        given (the hyperparameter search is off).
    optimize : search the hyperparameters (True) or keep ``kernel`` fixed.
    refit_loo : with ``optimize``, score the model (``loo_r2_``, ``loo_rmse_``,
        ``pred_r2_``) by leaving each run out and refitting every hyperparameter
        without it (started from the whole-data fit), so the figure is as strict as
        a polynomial's PRESS and the model comparison's; False keeps the closed form
        with the whole-data hyperparameters held (slightly favourable to the model).
        Up to ``REFIT_LOO_MAX_RUNS`` runs; above, the closed form.
    """

    terms = "smooth"

    def __init__(self, *, factor_names: Sequence[str], transform: str = "none",
                 confidence: float = 0.95, name: str = "response",
                 factors: Sequence | None = None, restarts: int = 8, seed: int = 0,
                 kernel=None, optimize: bool = True, refit_loo: bool = True):
        self.factor_names = factor_names
        self.transform = transform
        self.confidence = confidence
        self.name = name
        self.factors = factors
        self.restarts = restarts
        self.seed = seed
        self.kernel = kernel
        self.optimize = optimize
        self.refit_loo = refit_loo

    # ------------------------------------------------------------------ fit

    def _refit_without_each(self, X, y, kernel) -> np.ndarray:
        """Each run's prediction (natural units) by the model refitted without it."""
        out = np.empty(len(y))
        for i in range(len(y)):
            keep = np.arange(len(y)) != i
            part = SmoothModel(factor_names=self.factor_names, transform=self.transform,
                               confidence=self.confidence, name=self.name,
                               factors=self.factors, restarts=0, seed=self.seed,
                               kernel=kernel, refit_loo=False)
            out[i] = part.fit(X[keep], y[keep]).predict(X[i:i + 1])[0]
        return out

    def fit(self, X_coded, y, run_ids=None, block=None) -> "SmoothModel":
        """Fit to coded settings X (n, k) and responses y (n,); blank (NaN) y rows are left out.

        ``block`` labels are accepted for the same call as ``ResponseModel``;
        a smooth model has no block terms, so a note says they were not used.
        """
        from sklearn.gaussian_process import GaussianProcessRegressor

        name = self.name
        names = list(self.factor_names)
        self._check_options()
        X, y, ids = runs_to_fit(X_coded, y, run_ids, name, names)
        notes: list[str] = []
        blank = np.isnan(y)
        if blank.any():
            notes.append(f"run(s) {', '.join(str(i) for i in ids[blank][:10])}"
                         f"{', ...' if blank.sum() > 10 else ''} have no value: left "
                         "out of this model")
        X, y, ids = X[~blank].copy(), y[~blank].copy(), ids[~blank].copy()
        n, k = X.shape
        need = smooth_min_runs(k)
        if n < need:
            # A study-level mistake (the model asked for), not a response to skip.
            raise StudyError(f"response '{name}': model = 'smooth' needs at least 2 runs "
                             f"per factor plus 3 ({need} for {k} factors), found {n} with "
                             "a value: choose a polynomial model (main, interactions) or "
                             "add runs")
        z = forward(y, self.transform, response=name)
        if np.ptp(z) == 0:
            raise ModelError(f"response '{name}' is {y[0]:g} in every run: there is "
                             "nothing to model: check the data or remove the response")
        if block is not None and len(set(np.asarray(block, dtype=object)
                                          .ravel().tolist())) > 1:
            notes.append("a smooth model has no block terms: differences between "
                         "blocks count as run-to-run scatter here")

        self._mean, self._scale = float(z.mean()), float(z.std())
        zn = (z - self._mean) / self._scale
        kernel = self.kernel if self.kernel is not None else _kernel(k)
        gp = GaussianProcessRegressor(
            kernel=kernel, normalize_y=False, copy_X_train=True,
            optimizer="fmin_l_bfgs_b" if self.optimize else None,
            n_restarts_optimizer=int(self.restarts) if self.optimize else 0,
            random_state=np.random.RandomState(int(self.seed)))
        with _warnings.catch_warnings(), _one_thread():
            # A start that stops at a bound or at its iteration limit is expected
            # among the restarts; the best one is kept and bounds are reported below.
            _warnings.simplefilter("ignore")
            gp.fit(X, zn)
        self._gp = gp
        signal_k, noise_k = gp.kernel_.k1, gp.kernel_.k2
        signal = float(signal_k.k1.constant_value)
        lengths = np.broadcast_to(np.asarray(signal_k.k2.length_scale, float), (k,))
        noise = float(noise_k.noise_level)

        # Leave-one-out predictions in closed form (Rasmussen & Williams 2006,
        # eqs. 5.10-5.12): mu_-i = y_i - [K^-1 y]_i / [K^-1]_ii, var_-i = 1 / [K^-1]_ii.
        from scipy.linalg import cho_solve

        Kinv = cho_solve((gp.L_, True), np.eye(n))
        dinv = np.diag(Kinv)
        loo = zn - gp.alpha_ / dinv
        loo_sd = np.sqrt(1.0 / dinv)
        fitted = gp.predict(X)

        s = self._scale
        self.n_ = n
        self.length_scales_ = {f: float(v) for f, v in zip(names, lengths)}
        self.signal_sd_ = math.sqrt(signal) * s
        self.noise_sd_ = math.sqrt(noise) * s
        self.noise_share_ = noise / (noise + signal)
        self.sigma_ = self.noise_sd_
        self.sigma_df_ = GAUSSIAN_DF
        self.log_marginal_likelihood_ = float(gp.log_marginal_likelihood_value_)
        self.kernel_ = gp.kernel_
        sst = float(np.sum((z - z.mean()) ** 2))
        self.fitted_ = self._mean + s * fitted
        self.loo_predictions_ = self._mean + s * loo
        self.r2_ = 1.0 - float(np.sum((z - self.fitted_) ** 2)) / sst
        self.loo_refit_ = None
        held = self.loo_predictions_
        if self.optimize and self.refit_loo and n <= REFIT_LOO_MAX_RUNS:
            if n - 1 >= need:
                # each run predicted by the model refitted without it (natural units)
                self.loo_refit_ = self._refit_without_each(X, y, gp.kernel_)
                held = forward(self.loo_refit_, self.transform, response=name)
            else:
                # at the fewest runs the model takes, a run left out leaves too few
                # to refit: the closed form, with the whole-data settings held
                notes.append(f"with {n} runs, the fewest a smooth model takes, leaving "
                             "one out leaves too few to refit it: its predicted R2 keeps "
                             "the whole-data length scales (slightly favourable to it)")
        press = float(np.sum((z - held) ** 2))
        self.loo_r2_ = 1.0 - press / sst
        self.pred_r2_ = self.loo_r2_  # the name the search's poor-model warning reads
        self.loo_rmse_ = math.sqrt(press / n)
        self._ids, self._X, self._z, self._y = ids, X, z, y
        std = (z - self.loo_predictions_) / (s * loo_sd)
        self._diag = {"observed": z, "fitted": self.fitted_,
                      "residual": z - self.fitted_,
                      "loo_predicted": self.loo_predictions_,
                      "loo_residual": z - self.loo_predictions_,
                      "loo_sd": s * loo_sd, "studentized_deleted": std}
        self.flagged_runs_ = [str(i) for i, t in zip(ids, std) if abs(t) > _FLAG]
        self.warnings_ = notes + self._fit_warnings(lengths, signal, noise)
        return self

    def _check_options(self) -> None:
        name = self.name
        check_transform_and_confidence(name, self.transform, self.confidence)
        if isinstance(self.factor_names, str) or len(self.factor_names) == 0:
            raise ModelError(f"response '{name}': factor_names must list the study's "
                             "factors")
        if not isinstance(self.restarts, (int, np.integer)) or self.restarts < 0:
            raise ModelError(f"response '{name}': restarts must be a whole number, 0 or "
                             f"more, found {self.restarts!r}")

    def _fit_warnings(self, lengths, signal, noise) -> list[str]:
        out = []
        low, high = LENGTH_BOUNDS
        for f, ell in zip(self.factor_names, lengths):
            if ell <= low * _AT_BOUND:
                out.append(f"the length scale of '{f}' sits at its lower bound ({low:g} "
                           "coded units): the model bends between neighbouring runs "
                           "along it, which is more likely noise than a real pattern: "
                           "treat its predictions with caution or add runs")
            elif ell >= high / _AT_BOUND:
                out.append(f"the length scale of '{f}' sits at its upper bound "
                           f"({high:g} coded units): the response hardly changes along "
                           f"'{f}' in these runs")
        share = noise / (noise + signal)
        if share > NOISE_SHARE_WARN:
            out.append(f"the noise term takes {share:.0%} of the variation: the smooth "
                       "model sees little pattern beyond run-to-run scatter, so its "
                       "predictions stay close to the average")
        return out

    # -------------------------------------------------------------- predict

    def _check_fitted(self) -> None:
        if not hasattr(self, "_gp"):
            raise ModelError(f"response '{self.name}': the model is not fitted yet: call "
                             "fit first")

    def _points(self, X_coded) -> np.ndarray:
        return coded_points(X_coded, self.name, len(self.factor_names))

    def _latent(self, X, with_sd: bool = True):
        """Posterior mean and latent SD on the modelling scale (R&W eqs. 2.25-2.26)."""
        from scipy.linalg import solve_triangular

        gp = self._gp
        Ks = gp.kernel_.k1(X, gp.X_train_)  # signal covariance with the runs (n*, n)
        mean = self._mean + self._scale * (Ks @ gp.alpha_)
        if not with_sd:
            return mean, None
        v = solve_triangular(gp.L_, Ks.T, lower=True, check_finite=False)
        var = gp.kernel_.k1.diag(X) - np.einsum("ij,ij->j", v, v)
        return mean, self._scale * np.sqrt(np.maximum(var, 0.0))

    def predictive(self, X_coded) -> tuple[np.ndarray, np.ndarray, float, int]:
        """Mean, its (latent) SD, the noise SD and degrees of freedom, modelling scale.

        For Monte Carlo: a new observation at x is mean + sd * z + noise * z'.
        The degrees of freedom are ``GAUSSIAN_DF`` (the posterior is normal).
        """
        self._check_fitted()
        mean, sd = self._latent(self._points(X_coded))
        return mean, sd, float(self.sigma_), int(self.sigma_df_)

    def mean_covariance(self, X1, X2) -> np.ndarray:
        """Posterior covariance of the mean response between two sets of settings
        (n1, n2), modelling scale: k(x1, x2) - v1' v2 (R&W eq. 2.24)."""
        from scipy.linalg import solve_triangular

        self._check_fitted()
        gp = self._gp
        A, B = self._points(X1), self._points(X2)
        k = gp.kernel_.k1
        va = solve_triangular(gp.L_, k(A, gp.X_train_).T, lower=True, check_finite=False)
        vb = solve_triangular(gp.L_, k(B, gp.X_train_).T, lower=True, check_finite=False)
        return self._scale ** 2 * (k(A, B) - va.T @ vb)

    def predict(self, X_coded) -> np.ndarray:
        """Mean prediction in natural units (for log: the back-transformed mean, a median)."""
        self._check_fitted()
        return inverse(self._latent(self._points(X_coded), with_sd=False)[0],
                       self.transform)

    def intervals(self, X_coded, level: float | None = None) -> pd.DataFrame:
        """Predictions with confidence (mean) and prediction (new run) intervals, natural units.

        Columns: predicted, ci_low, ci_high, pi_low, pi_high. Normal quantiles:
        the confidence interval from the latent SD, the prediction interval from
        the latent SD and the noise together.
        """
        from scipy.special import ndtri

        level = self.confidence if level is None else float(level)
        if not 0 < level < 1:
            raise ModelError(f"response '{self.name}': level {level} must be a fraction "
                             "such as 0.95")
        mean, sd, sigma, _ = self.predictive(X_coded)
        q = float(ndtri(0.5 + level / 2))
        ci = q * sd
        pi = q * np.sqrt(sd ** 2 + sigma ** 2)
        tr = self.transform
        return pd.DataFrame({"predicted": inverse(mean, tr),
                             "ci_low": inverse(mean - ci, tr), "ci_high": inverse(mean + ci, tr),
                             "pi_low": inverse(mean - pi, tr), "pi_high": inverse(mean + pi, tr)})

    def inverse_transform(self, y) -> np.ndarray:
        """Modelling scale -> natural scale."""
        return inverse(y, self.transform)

    # ------------------------------------------------------------ learned tables

    @property
    def residuals_(self) -> pd.Series:
        """Leave-one-out residuals (observed - predicted from the other runs,
        modelling scale) indexed by run id (text).

        A smooth model passes close to its own runs, so its in-sample residuals
        understate the scatter; each run predicted from the others does not (the
        chance module correlates responses through these).
        """
        self._check_fitted()
        return pd.Series(self._diag["loo_residual"], index=pd.Index(
            [str(i) for i in self._ids], dtype=object, name="run"), name=self.name)

    @property
    def diagnostics_(self) -> pd.DataFrame:
        """Per-run table indexed by run id (modelling scale): observed, fitted,
        residual, loo_predicted, loo_residual, loo_sd and studentized_deleted
        (the leave-one-out residual over its predictive SD, the smooth model's
        counterpart of the deleted studentized residual), flagged (beyond 3)."""
        self._check_fitted()
        table = pd.DataFrame(self._diag, index=pd.Index(
            [str(i) for i in self._ids], dtype=object, name="run"))
        table["flagged"] = np.abs(table["studentized_deleted"]) > _FLAG
        return table

    def length_scale_table(self) -> pd.DataFrame:
        """One row per factor: ``factor``, ``length_scale`` (coded units),
        ``natural`` (the same distance in the factor's units; NaN for a
        categorical factor), ``at_bound`` (``low``, ``high`` or empty),
        shortest (steepest) first."""
        self._check_fitted()
        low, high = LENGTH_BOUNDS
        rows = []
        for j, (f, ell) in enumerate(self.length_scales_.items()):
            fac = self.factors[j] if self.factors is not None else None
            nat = (ell * fac.half_range if fac is not None and not fac.is_categorical
                   else np.nan)
            bound = ("low" if ell <= low * _AT_BOUND else
                     "high" if ell >= high / _AT_BOUND else "")
            rows.append({"factor": f, "length_scale": ell, "natural": nat,
                         "at_bound": bound})
        table = pd.DataFrame(rows, columns=["factor", "length_scale", "natural", "at_bound"])
        return table.sort_values("length_scale", kind="stable").reset_index(drop=True)

    # --------------------------------------------------------------- report

    def report(self) -> dict:
        """The JSON-ready summary printed by ``tradeoff fit --json`` for this response."""
        self._check_fitted()
        table = self.length_scale_table()
        natural = {r.factor: _num(r.natural) for r in table.itertuples()}
        return {
            "response": self.name,
            "transform": self.transform,
            "model": "smooth",
            "n": self.n_,
            "kernel": "constant x Matern (nu = 5/2, one length scale per factor) + noise",
            "length_scales": {f: _num(v) for f, v in self.length_scales_.items()},
            "length_scales_natural": {f: natural[f] for f in self.length_scales_},
            "length_scale_bounds": list(LENGTH_BOUNDS),
            "signal_sd": _num(self.signal_sd_),
            "noise_sd": _num(self.noise_sd_),
            "noise_share": _num(self.noise_share_),
            "r2": _num(self.r2_),
            "loo_r2": _num(self.loo_r2_),
            "loo_rmse": _num(self.loo_rmse_),
            "pred_r2": _num(self.pred_r2_),
            "residual_sd": _num(self.noise_sd_),
            "log_marginal_likelihood": _num(self.log_marginal_likelihood_),
            "restarts": int(self.restarts) if self.optimize else 0,
            "seed": int(self.seed),
            "flagged_runs": list(self.flagged_runs_),
            "confidence": self.confidence,
            "warnings": list(self.warnings_),
        }


def _num(v):
    if v is None:
        return None
    v = float(v)
    return v if math.isfinite(v) else None
