"""A response model of runs that share a batch (a whole plot): split-plot studies.

``WholePlotModel`` is a ``ResponseModel`` whose fit is the REML/GLS fit of
``model/reml.py``: a random intercept per whole plot, fixed effects by
generalised least squares, each term tested on Satterthwaite's denominator
degrees of freedom. Everything else (terms, aliases, levels, transforms,
blends, reduction, the equation) is the least-squares model's, run on the
whitened problem. On top it gives:

- ``whole_plots_``: the number of whole plots, the SD between them and the
  residual SD within them, each with an interval, and the method;
- ``anova_["terms"]``: each whole term's F test with ``df_denominator`` and its
  ``stratum`` ("whole plot" when its columns are constant within every whole
  plot, else "within");
- ``anova_["strata"]``: the classical ANOVA in two strata (Yates 1937; Cochran
  & Cox 1957, ch. 7): whole-plot terms against the whole-plot error, within
  terms against the within error. On balanced data the mixed model's tests
  equal these.

A new run, made in a new batch, scatters with ``s_wp^2 + s^2``: ``predictive``
hands that noise (with its Satterthwaite df) to chances, confirmation,
``next`` and production spread, so every interval includes both variances.
Per-run diagnostics keep the observed, fitted and residual values on the
response's (modelling) scale; the studentized residuals, leverages and Cook's
distances are those of the whitened runs, which are independent under the model.
"""
from __future__ import annotations

import math

import numpy as np
from scipy import special

from ..errors import ModelError
from .diagnostics import diagnostic_arrays
from .fit import ResponseModel, is_blank
from .reduce import backward_eliminate
from .reml import METHOD, WholePlotSolve, plot_codes
from .terms import hierarchy_closure

__all__ = ["WholePlotModel", "strata_anova", "term_strata", "NO_SPLIT_PLOT"]

WHOLE, WITHIN = "whole plot", "within"
NO_SPLIT_PLOT = ("every run is a whole plot of its own: this is no split plot (no runs "
                 "share a batch)")


class WholePlotModel(ResponseModel):
    """A least-squares-shaped model with a random intercept per whole plot.

    Takes the options of ``ResponseModel`` and ``whole_plot_name``, the data
    column that names each run's whole plot (for messages and the report).
    """

    def __init__(self, *, whole_plot_name: str = "whole_plot", **options):
        super().__init__(**options)
        self.whole_plot_name = whole_plot_name

    def fit(self, X_coded, y, run_ids=None, block=None, whole_plot=None) -> "WholePlotModel":
        """Fit as ``ResponseModel.fit``; ``whole_plot`` gives each run's whole plot."""
        if whole_plot is None:
            raise ModelError(f"response '{self.name}': a whole-plot model needs each "
                             f"run's whole plot ({self.whole_plot_name})")
        labels = np.asarray(whole_plot, dtype=object).ravel()
        yy = np.asarray(y, dtype=float).ravel()
        if labels.size != yy.size:
            raise ModelError(f"response '{self.name}': {labels.size} whole-plot labels "
                             f"for {yy.size} runs")
        if any(is_blank(v) for v in labels):
            raise ModelError(f"response '{self.name}': a run has no whole plot: give "
                             f"every run its whole plot ({self.whole_plot_name})")
        labels = labels[~np.isnan(yy)]  # the runs the fit keeps
        self._codes, self._sizes = plot_codes(labels)
        if self._sizes.size < 2:
            raise ModelError(f"response '{self.name}': every run with a value is in one "
                             "whole plot: the variation between whole plots cannot be "
                             "estimated")
        if self._sizes.max() < 2:
            raise ModelError(f"response '{self.name}': {NO_SPLIT_PLOT}")
        return super().fit(X_coded, y, run_ids, block=block)

    def _solve(self, M, z, qr=None):
        try:
            return WholePlotSolve(M, z, self._codes, self._sizes)
        except ModelError as exc:
            raise ModelError(f"response '{self.name}': {exc}") from None

    def _reduce(self, terms, M, z, keep_terms, qr=None):
        pinned = (hierarchy_closure(keep_terms, terms) | {"intercept"}
                  | {t.label for t in terms if t.is_block})
        return backward_eliminate(terms, M, z, pinned, alpha=self.alpha,
                                  confidence=self.confidence, qr=qr,
                                  effect_index=self._effect_index, solve=self._solve)

    def _anova(self, X, z, sol, terms, block, categorical) -> dict:
        strata = term_strata(sol.M, terms, self._codes)
        tests = sol.term_tests(terms)
        for label, row in tests.items():
            row["stratum"] = strata[label]
        return {"terms": tests,
                "strata": strata_anova(sol.M, z, terms, self._codes, strata)}

    def _set_results(self, X, y, z, ids, terms, sol, aliases, warnings, block=None,
                     levels=(), confounded=None) -> None:
        super()._set_results(X, y, z, ids, terms, sol, aliases, warnings, block, levels,
                             confounded)
        self._box_cox_input = None  # Box-Cox assumes independent runs
        # diagnostics: studentized values from the whitened runs, the rest as measured
        fitted = sol.M @ sol.coef
        diag = diagnostic_arrays(sol.z, sol.fitted, sol.leverage, sol.df, len(terms))
        diag.update(observed=z, fitted=fitted, residual=z - fitted)
        self._diag = diag
        # a last level's test on the df of the term it belongs to
        for d in self.derived_coefficients_:
            row = self.anova_["terms"].get(d["group"])
            if row is not None and d.get("t") is not None and d["t"] == d["t"]:
                d["p"] = float(2 * special.stdtr(row["df_denominator"], -abs(d["t"])))
        if self.blocks_ is not None:  # blocks shift whole plots: their own df
            test = sol.term_test([i for i, t in enumerate(terms) if t.is_block])
            self.blocks_.update(f=test["f"], p=test["p"],
                                df_denominator=test["df_denominator"])
        self.ratio_ = float(sol.ratio)
        total, df = sol.new_run_variance()
        self._new_sd, self._new_df = math.sqrt(total), df
        self._components = (sol.s2_wp, sol.s2, sol.cov_components)
        level = self.confidence
        wp_low, wp_high = sol.component_interval(0, level)
        e_low, e_high = sol.component_interval(1, level)
        self.whole_plots_ = {
            "column": self.whole_plot_name, "count": int(self._sizes.size),
            "runs_per_plot": {"min": int(self._sizes.min()), "max": int(self._sizes.max())},
            "sd": math.sqrt(sol.s2_wp), "sd_interval": [wp_low, wp_high],
            "residual_sd": math.sqrt(sol.s2), "residual_sd_interval": [e_low, e_high],
            "ratio": self.ratio_, "new_run_sd": self._new_sd, "new_run_df": df,
            "confidence": level, "method": METHOD}
        if sol.s2_wp == 0:
            self._warnings.append("the whole plots vary no more than the runs within them "
                                  "(SD between whole plots estimated at 0): the tests "
                                  "treat the runs as independent")

    def predictive(self, X_coded):
        """Mean, its SE, and the SD of a new run in a new whole plot with its df."""
        mean, se, _, _ = super().predictive(X_coded)
        df = self._new_df
        return mean, se, float(self._new_sd), int(max(1, math.floor(df))) if \
            math.isfinite(df) else 10 ** 6

    def mean_noise(self, m: int) -> tuple[float, float]:
        """SD and Satterthwaite df of the mean of ``m`` new runs made in one new batch:
        ``s_wp^2 + s^2 / m`` (the batch's shift does not average out)."""
        s2_wp, s2, cov = self._components
        w = np.array([1.0, 1.0 / max(int(m), 1)])
        total = s2_wp + s2 * w[1]
        var = float(w @ cov @ w)
        return math.sqrt(total), (2.0 * total * total / var if var > 0 else math.inf)

    def runs_of(self, m: float) -> "WholePlotModel":
        """Make a new run the mean of ``m`` sub-plot values (a run's panel of ``m``
        scores, ``model/panel_scores.py``): its predictions then scatter by
        ``s_wp^2 + s^2 / m`` with that sum's Satterthwaite df (``mean_noise``)."""
        sd, df = self.mean_noise(m)
        self._new_sd, self._new_df = sd, df
        self.whole_plots_.update(new_run_sd=sd, new_run_df=df, scores_per_run=int(m))
        return self

    def report(self) -> dict:
        out = super().report()
        from .describe import clean_json

        out["whole_plots"] = clean_json(self.whole_plots_)
        return out


def _constant_within(column: np.ndarray, codes: np.ndarray) -> bool:
    lo = np.full(codes.max() + 1, np.inf)
    hi = np.full(codes.max() + 1, -np.inf)
    np.minimum.at(lo, codes, column)
    np.maximum.at(hi, codes, column)
    return bool(np.all(hi - lo <= 1e-9 * max(1.0, float(np.abs(column).max()))))


def term_strata(M: np.ndarray, terms, codes: np.ndarray) -> dict:
    """{whole-term label: "whole plot" or "within"} (intercept and blocks left out)."""
    out: dict[str, str] = {}
    for j, t in enumerate(terms):
        if t.is_intercept or t.is_block:
            continue
        whole = _constant_within(M[:, j], codes)
        out[t.group] = WHOLE if whole and out.get(t.group, WHOLE) == WHOLE else WITHIN
    return out


def _extra_ss(A: np.ndarray, y: np.ndarray, idx_groups: dict) -> tuple[float, int, dict]:
    """Residual SS and df of y on A, and each group's extra SS and its df (rank)."""
    def resid(B):
        if B.shape[1] == 0:
            return float(y @ y), 0
        coef, _, rank, _ = np.linalg.lstsq(B, y, rcond=None)
        r = y - B @ coef
        return float(r @ r), int(rank)
    sse, rank = resid(A)
    rows = {}
    for label, idx in idx_groups.items():
        rest = [j for j in range(A.shape[1]) if j not in idx]
        ss_without, rank_without = resid(A[:, rest])
        rows[label] = (max(0.0, ss_without - sse), rank - rank_without)
    return sse, rank, rows


def strata_anova(M: np.ndarray, z: np.ndarray, terms, codes: np.ndarray,
                 strata: dict) -> dict:
    """The ANOVA in two strata, between and within whole plots.

    Between: the plot means of ``z`` on the plot means of the intercept, block
    and whole-plot columns; error df = plots - rank. Within: deviations from
    the plot means on the within columns' deviations; error df = runs - plots
    - rank. Each term's SS is its extra SS in its stratum (type III there); its
    F is against its stratum's error. Sums of squares are on the modelling scale.
    A term with no degrees of freedom left in its stratum (a blend's terms, whose
    within-plot deviations are tied to each other) is listed under ``no_df``: only
    the mixed model, which combines the strata, tests it.
    """
    n = z.size
    sizes = np.bincount(codes)
    G = sizes.size

    def plot_mean(A):
        two = A if A.ndim == 2 else A[:, None]
        s = np.zeros((G, two.shape[1]))
        np.add.at(s, codes, two)
        return (s / sizes[:, None])[codes]

    zb = plot_mean(z)[:, 0]
    zw = z - zb
    between = [j for j, t in enumerate(terms) if t.is_intercept or t.is_block
               or strata.get(t.group) == WHOLE]
    within = [j for j in range(len(terms)) if j not in between]
    out = {}
    Ab = plot_mean(M[:, between])
    if not any(terms[j].is_intercept for j in between):
        # a blend has no intercept column: the plot means still have a mean of their own
        Ab = np.column_stack([np.ones(n), Ab])
        between = [None] + between
    for name, cols, A, y, total_df in (
            (WHOLE, between, Ab, zb, G),
            (WITHIN, within, M[:, within] - plot_mean(M[:, within]), zw, n - G)):
        groups: dict[str, list[int]] = {}
        for pos, j in enumerate(cols):
            t = None if j is None else terms[j]
            if t is not None and not (t.is_intercept or t.is_block):
                groups.setdefault(t.group, []).append(pos)
        sse, rank, rows = _extra_ss(A, y, groups)
        df_e = total_df - rank
        ms_e = sse / df_e if df_e > 0 else np.nan
        table, none = {}, []
        for label, (ss, df) in rows.items():
            if df < 1:  # confounded within its stratum: only the mixed model tests it
                none.append(label)
                continue
            f = (ss / df) / ms_e if df > 0 and df_e > 0 and ms_e > 0 else np.nan
            table[label] = {"ss": ss, "df": int(df), "ms": ss / df if df else np.nan,
                            "f": f, "p": float(special.fdtrc(df, df_e, f))
                            if np.isfinite(f) else np.nan}
        out[name] = {"terms": table, "error": {"ss": sse, "df": int(df_e), "ms": ms_e},
                     "no_df": none}
    return out
