"""Planted faults: does the test suite catch a wrong number in the core formulas?

Each fault below is one deliberate mistake of the kind a tired hand makes (a
sign, a degree of freedom, a shape, a width, a weight, a column order, a level
coding, a mixture term, a kinetic constant, a chance, an alias, a coded unit),
written as ``(file, exact old text, new text, tests to run)``. For each fault
the script copies the project to a scratch folder, plants the fault there, runs
only the listed tests against the scratch copy (its ``core`` imported as
``tradeoff`` through ``PYTHONPATH``, ahead of the editable install), and records
whether a test failed. It prints one line per fault (caught or missed, and the
first failing test) and exits 1 when any fault is missed, any old text is not
found exactly once (the code moved: update the entry), or the unmutated copy
fails its tests.

Before the faults: the unmutated scratch copy must pass every listed test, and
a sanity fault (every desirability 1) must be caught, which shows the planted
code is the code the tests import.

A missed fault means a missing test: write it (with its source named), never
weaken the fault. Not a test itself (it runs the tests); see DEVELOPERS.md.

Run: .venv/bin/python benchmarks/mutations.py [--jobs 2] [--only NAME ...] [--list]
"""
from __future__ import annotations

import argparse
import os
import re
import shutil
import subprocess
import sys
import tempfile
import time
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path
from queue import Queue

ROOT = Path(__file__).resolve().parents[1]
COPIED = ("core", "tests", "demo_data", "pyproject.toml", "README.md", "DEVELOPERS.md")
TIMEOUT = 600  # seconds per fault: a fault that hangs the tests is reported, not caught


@dataclass(frozen=True)
class Fault:
    name: str
    what: str
    file: str
    old: str
    new: str
    tests: tuple[str, ...]


SANITY = Fault(
    "sanity", "every individual desirability is 1 (must be caught)",
    "core/search/desirability.py",
    "    return np.where(np.isnan(y), 0.0, d)\n",
    "    return np.where(np.isnan(y), 0.0, np.ones_like(d))\n",
    ("tests/search/test_desirability.py",))

DESIRE = "tests/search/test_desirability.py"
SEARCH = "tests/search/test_search.py"
UNEQUAL = SEARCH + "::test_search_scorer_with_unequal_target_widths_and_shapes"

FAULTS = (
    # -- desirability and D (Derringer & Suich 1980; Derringer 1994) -------------------
    Fault("max-shape", "maximize ignores its shape",
          "core/search/desirability.py",
          "d = np.clip((y - lo) / (hi - lo), 0.0, 1.0) ** goal.shape",
          "d = np.clip((y - lo) / (hi - lo), 0.0, 1.0)",
          (DESIRE,)),
    Fault("min-sign", "minimize rises instead of falling",
          "core/search/desirability.py",
          "d = np.clip((hi - y) / (hi - lo), 0.0, 1.0) ** goal.shape",
          "d = np.clip((y - lo) / (hi - lo), 0.0, 1.0) ** goal.shape",
          (DESIRE,)),
    Fault("target-widths", "target: the widths below and above swapped",
          "core/search/desirability.py",
          "below = np.clip((y - lo) / (t - lo), 0.0, 1.0) ** goal.shape_below\n"
          "            above = np.clip((hi - y) / (hi - t), 0.0, 1.0) ** goal.shape_above",
          "below = np.clip((y - lo) / (hi - t), 0.0, 1.0) ** goal.shape_below\n"
          "            above = np.clip((hi - y) / (t - lo), 0.0, 1.0) ** goal.shape_above",
          (DESIRE + "::test_target_with_unequal_widths_and_shapes",)),
    Fault("target-shapes", "target: the shapes below and above swapped",
          "core/search/desirability.py",
          "0.0, 1.0) ** goal.shape_below\n",
          "0.0, 1.0) ** goal.shape_above\n",
          (DESIRE,)),
    Fault("D-weights", "overall D ignores the weights",
          "core/search/desirability.py",
          "total = logs @ (w / w.sum())",
          "total = logs @ (np.ones(m) / m)",
          (DESIRE,)),
    Fault("scorer-widths", "search scorer: target widths swapped",
          "core/search/problem.py",
          "g.lower, g.target - g.lower, g.shape_below",
          "g.lower, g.upper - g.target, g.shape_below",
          (UNEQUAL,)),
    Fault("scorer-shapes", "search scorer: target shapes swapped",
          "core/search/problem.py",
          "            d **= self.s_b\n            up **= self.s_a\n",
          "            d **= self.s_a\n            up **= self.s_b\n",
          (UNEQUAL,)),
    Fault("scorer-weights", "search scorer: equal weights",
          "core/search/problem.py",
          "self.w_norm = self.weights / self.weights.sum() if m else self.weights",
          "self.w_norm = np.full(m, 1.0 / m) if m else self.weights",
          (UNEQUAL, SEARCH)),
    Fault("scorer-columns", "search scorer: factor goals written over the response columns",
          "core/search/problem.py",
          "for i, j in enumerate(self.col_factor, start=len(self.col_models)):",
          "for i, j in enumerate(self.col_factor, start=0):",
          (UNEQUAL, "tests/maps/test_tables.py")),
    Fault("level-merge", "search's polynomial stack keys columns on their powers only "
          "(a factor's level columns merge)",
          "core/search/problem.py",
          "                union.setdefault(column_key(t), t)\n"
          "        where = {key: i for i, key in enumerate(union)}\n"
          "        C = np.zeros((len(union), len(polys)))\n"
          "        for c, (terms, coef) in enumerate(coef_of):\n"
          "            for t, b in zip(terms, coef):\n"
          "                C[where[column_key(t)], c] += b\n",
          "                union.setdefault(t.powers, t)\n"
          "        where = {key: i for i, key in enumerate(union)}\n"
          "        C = np.zeros((len(union), len(polys)))\n"
          "        for c, (terms, coef) in enumerate(coef_of):\n"
          "            for t, b in zip(terms, coef):\n"
          "                C[where[t.powers], c] += b\n",
          ("tests/search/test_problem_columns.py::"
           "test_level_columns_and_their_interactions_score_as_predicted",
           "tests/search/test_level_choice.py")),
    Fault("D-contours", "D's contour lines vanish",
          "core/maps/contours.py",
          "return np.asarray(overall_desirability(study, fit, X)[0], dtype=float)",
          "return np.asarray(overall_desirability(study, fit, X)[0], dtype=float) * 0.0",
          ("tests/maps/test_contours.py",)),
    Fault("ternary-D", "the ternary grid's d and D belong to other blends (rows reversed)",
          "core/maps/mixture_tables.py",
          "D, d = overall_desirability(study, models, X)",
          "D, d = overall_desirability(study, models, X[::-1])",
          ("tests/maps/test_mixture_tables.py",)),
    Fault("cox-edit", "editing one component: the others share the old rest, not the new",
          "core/maps/mixture_tables.py",
          "new = dict(zip(others, old * (total - value) / old.sum()))",
          "new = dict(zip(others, old * (total - old.sum()) / old.sum()))",
          ("tests/maps/test_mixture_tables.py",)),
    Fault("blend-effect-ci", "a Cox effect's interval adds the two means' covariance",
          "core/maps/mixture_tables.py",
          "var = V[0, 0] + V[1, 1] - 2 * V[0, 1]",
          "var = V[0, 0] + V[1, 1] + 2 * V[0, 1]",
          ("tests/maps/test_mixture_tables.py",)),
    Fault("amount-degree", "the equation in amounts divides every term by the total once",
          "core/model/equation.py",
          "out[label] = float(value) / total ** degree",
          "out[label] = float(value) / total",
          ("tests/model/test_amount_equation.py",)),
    Fault("what-if-recipe", "what-if scores D at the blend typed, its figures at its shares",
          "core/maps/tables.py",
          "        used.update(scaled)\n",
          "",
          ("tests/maps/test_what_if.py",)),
    Fault("limits-max", "a maximize goal also caps the value at its upper limit",
          "core/search/desirability.py",
          "        return goal.lower, np.inf\n",
          "        return goal.lower, goal.upper\n",
          (DESIRE, "tests/search/test_chance.py", "tests/maps/test_contours.py")),
    # -- coded units and level coding ----------------------------------------------------
    Fault("coded-centre", "coded units measured from the low, not the centre",
          "core/study/coding.py",
          "return (values - factor.centre) / factor.half_range",
          "return (values - factor.low) / factor.half_range",
          ("tests/study/test_coding.py", "tests/test_properties.py")),
    Fault("two-levels", "a two-level factor codes its first level +1",
          "core/study/coding.py",
          "np.array([-1.0, 1.0]) if n == 2",
          "np.array([1.0, -1.0]) if n == 2",
          ("tests/study/test_coding.py", "tests/maps/test_tables.py")),
    Fault("sum-to-zero", "a factor of three or more levels treatment-coded (no -1 row)",
          "core/model/columns.py",
          "col = col * ((code == level).astype(float) - (code == n - 1))",
          "col = col * (code == level).astype(float)",
          ("tests/model/test_levels.py",)),
    Fault("block-coding", "blocks treatment-coded instead of sum-to-zero",
          "core/model/terms.py",
          "        columns[first, j] = -1.0\n",
          "        columns[first, j] = 0.0\n",
          ("tests/model/test_blocks.py",)),
    # -- model fit: degrees of freedom, intervals, effects -------------------------------
    Fault("resid-df", "residual degrees of freedom n - p + 1",
          "core/model/solve.py",
          "self.df = n - p\n",
          "self.df = n - p + 1\n",
          ("tests/model/test_fit.py",)),
    Fault("pi-width", "prediction interval without the mean's own error",
          "core/model/fit.py",
          "ci, pi = q * se, q * np.sqrt(se ** 2 + sigma ** 2)",
          "ci, pi = q * se, q * sigma",
          ("tests/model/test_fit.py", "tests/confirm/test_confirm.py")),
    Fault("adj-r2", "adjusted R2 divides the total by n, not n - 1",
          "core/model/fit.py",
          "(sst / (n - 1))",
          "(sst / n)",
          ("tests/model/test_fit.py",)),
    Fault("press", "PRESS divides residuals by 1 + h",
          "core/model/fit.py",
          "press = float(np.sum((sol.resid / (1 - h)) ** 2))",
          "press = float(np.sum((sol.resid / (1 + h)) ** 2))",
          ("tests/model/test_fit.py",)),
    Fault("effects", "an effect is the coefficient, not twice it",
          "core/model/notes.py",
          "return 1.0 if term.cells and len(term.cells) == len(term.factors) else 2.0",
          "return 1.0 if term.cells and len(term.cells) == len(term.factors) else 1.0",
          ("tests/model/test_fit.py",)),
    Fault("lack-of-fit-df", "lack of fit given one degree of freedom too many",
          "core/model/anova.py",
          "df_lof = df_resid - df_pe\n",
          "df_lof = df_resid - df_pe + 1\n",
          ("tests/model/test_fit.py", "tests/model/test_piece_components.py",
           "tests/model/test_blocks.py")),
    Fault("sqrt-back", "a square-root model is not squared back",
          "core/model/transforms.py",
          "return np.square(np.maximum(z, 0.0))",
          "return np.maximum(z, 0.0)",
          ("tests/model/test_fit.py",)),
    # -- Lenth (1989) --------------------------------------------------------------------
    Fault("lenth-df", "Lenth's t on m/2 degrees of freedom, not m/3",
          "core/model/lenth.py",
          "d = m / 3.0",
          "d = m / 2.0",
          ("tests/model/test_fit.py::test_lenth_degrees_of_freedom_decide_the_active_effects",)),
    Fault("lenth-cut", "Lenth's trimming at 2 s0, not 2.5 s0",
          "core/model/lenth.py",
          "trimmed = c[c < 2.5 * s0]",
          "trimmed = c[c < 2.0 * s0]",
          ("tests/model/test_fit.py",)),
    Fault("lenth-normal", "Lenth's margin of error from the normal, not t",
          "core/model/lenth.py",
          "me = float(stats.t.ppf(1 - alpha / 2, d) * pse)",
          "me = float(stats.norm.ppf(1 - alpha / 2) * pse)",
          ("tests/model/test_fit.py",)),
    Fault("margin-sidak", "the margin for all terms together is the one-term margin",
          "core/maps/estimates.py",
          "together_q = (1 + level ** (1.0 / m)) / 2 if m else np.nan",
          "together_q = 0.5 + level / 2 if m else np.nan",
          ("tests/maps/test_estimates.py",)),
    Fault("margin-df", "an effect's margin from the normal, not t on the residual df",
          "core/maps/estimates.py",
          "alone = stats.t.ppf(0.5 + level / 2, df) * se",
          "alone = stats.norm.ppf(0.5 + level / 2) * se",
          ("tests/maps/test_estimates.py",)),
    Fault("power-interval", "the power interval's ends at a 90 % cut, not the level asked",
          "core/model/transforms.py",
          "cut = lmax - 0.5 * stats.chi2.ppf(level, 1)",
          "cut = lmax - 0.5 * stats.chi2.ppf(0.90, 1)",
          ("tests/model/test_transforms.py",)),
    Fault("trace-shift", "the trace axis measured from the range's centre, not the held point",
          "core/maps/slices.py",
          "shift_col = np.concatenate([c - c[m[3]][0] if m[3].any()",
          "shift_col = np.concatenate([c - 0.0 if m[3].any()",
          ("tests/maps/test_slices.py",)),
    # -- mixtures (Scheffe; Cornell 2002) ------------------------------------------------
    Fault("cubic-sign", "full cubic blending term x_a x_b (x_b - x_a)",
          "core/model/terms.py",
          "return a * b * (a - b) * level_column(",
          "return a * b * (b - a) * level_column(",
          ("tests/model/test_scheffe.py",)),
    Fault("cubic-triple", "the full cubic loses its x_a x_b x_c term",
          "core/model/scheffe.py",
          'if model in ("special_cubic", "cubic"):',
          'if model == "special_cubic":',
          ("tests/model/test_scheffe.py",)),
    Fault("pseudo-scale", "pseudo-components scaled by the total, not total minus the lows",
          "core/study/mixture.py",
          "scale = total - float(new_lows.sum())",
          "scale = total + 0.0 * float(new_lows.sum())",
          ("tests/study/test_mixture_study.py", "tests/model/test_scheffe.py")),
    Fault("implied-high", "implied upper bound ignores a component's own low",
          "core/study/mixture.py",
          "new_highs = np.minimum(highs, total - (lows.sum() - lows))",
          "new_highs = np.minimum(highs, total - lows.sum())",
          ("tests/study/test_mixture_study.py",)),
    # -- storage kinetics (Arrhenius) ----------------------------------------------------
    Fault("arrhenius-sign", "the rate falls with temperature (exponent's sign)",
          "core/derive/kinetics.py",
          "e = np.exp(-np.where(one, 0.0, b) * d)",
          "e = np.exp(np.where(one, 0.0, b) * d)",
          ("tests/derive/test_kinetics.py",)),
    Fault("q10", "Q10 with T^2 in place of T (T + 10)",
          "core/derive/kinetics.py",
          "factor = 10.0 / (T * (T + 10.0))",
          "factor = 10.0 / (T * T)",
          ("tests/derive/test_kinetics.py", "tests/derive/test_shelf.py")),
    Fault("kinetics-df", "one-step Arrhenius fit with n - 2 degrees of freedom",
          "core/derive/kinetics.py",
          "            df = len(t) - 3\n",
          "            df = len(t) - 2\n",
          ("tests/derive/test_kinetics.py", "tests/derive/test_shelf.py")),
    # -- chances of meeting the limits ---------------------------------------------------
    Fault("chance-df", "the chance's t on n - p + 2 degrees of freedom",
          "core/search/chance.py",
          "Q[:, i] /= np.sqrt(rng.chisquare(df, draws) / df)",
          "Q[:, i] /= np.sqrt(rng.chisquare(df + 2, draws) / (df + 2))",
          ("tests/search/test_chance.py::"
           "test_chance_of_a_fitted_model_uses_n_minus_p_degrees_of_freedom",)),
    Fault("chance-se", "the chance leaves out the mean's own error",
          "core/search/chance.py",
          "scale = np.sqrt(se ** 2 + sigma ** 2)",
          "scale = np.sqrt(0.0 * se ** 2 + sigma ** 2)",
          ("tests/search/test_chance.py",)),
    Fault("chance-corr", "responses always treated as independent",
          "core/search/chance.py",
          "corr = _correlation_array(used) if correlated and m > 1 else None",
          "corr = None",
          ("tests/search/test_chance.py",)),
    Fault("confirm-m", "confirmation interval for one run, not the mean of m",
          "core/confirm/check.py",
          "se_mean ** 2 + sigma ** 2 / np.maximum(counts, 1)",
          "se_mean ** 2 + sigma ** 2",
          ("tests/confirm/test_confirm.py",)),
    Fault("expected-improvement", "expected improvement subtracts the spread term",
          "core/search/next_batch.py",
          "gain * ndtr(u) + sd * pdf",
          "gain * ndtr(u) - sd * pdf",
          ("tests/search/test_next_batch.py",)),
    # -- storage reach, factor rows in production, strict leave-one-out ---------------
    Fault("reach-multiple", "a shelf life stated up to twice the storage, not 1.5 times",
          "core/derive/reach.py",
          "limit = STATED_MULTIPLE * float(last)",
          "limit = Q1E_MULTIPLE * float(last)",
          ("tests/derive/test_reach.py",)),
    Fault("reach-months", "the 12 months beyond the storage taken as a floor, not a cap",
          "core/derive/reach.py",
          "limit = min(limit, float(last) + Q1E_MONTHS / months)",
          "limit = max(limit, float(last) + Q1E_MONTHS / months)",
          ("tests/derive/test_reach.py",)),
    Fault("factor-row-spread", "a factor's production spread left in coded units",
          "core/search/production.py",
          "x = f.centre + f.half_range * (X[:, j, None] + E[None, :, j])",
          "x = f.centre + f.half_range * X[:, j, None] + E[None, :, j]",
          ("tests/search/test_production.py",)),
    Fault("loo-held", "a smooth model scored with its hyperparameters held",
          "core/model/smooth.py",
          "self.loo_refit_ = self._refit_without_each(X, y, gp.kernel_)",
          "self.loo_refit_ = self.inverse_transform(self.loo_predictions_)",
          ("tests/model/test_compare.py",)),
    # -- pieces per batch ----------------------------------------------------------------
    Fault("harmonic", "pieces per run as the arithmetic mean, not the harmonic",
          "core/model/pieces.py",
          "k = float(len(k_all) / np.sum(1.0 / k_all)) if len(k_all) else math.nan",
          "k = float(np.mean(k_all)) if len(k_all) else math.nan",
          ("tests/model/test_piece_components.py",)),
    Fault("within-df", "within-batch variance on sum k_i degrees of freedom",
          "core/model/pieces.py",
          "df = int(np.sum(n - 1))",
          "df = int(np.sum(n))",
          ("tests/model/test_piece_components.py",)),
    # -- runs sharing a batch (whole plots) -----------------------------------------------
    Fault("wp-whitening", "whitening subtracts the plot mean with c = 1 - 1/(1 + g k)",
          "core/model/reml.py",
          "c = 1.0 - 1.0 / np.sqrt(1.0 + g * sizes)",
          "c = 1.0 - 1.0 / (1.0 + g * sizes)",
          ("tests/model/test_wholeplot.py",)),
    Fault("wp-reml-df", "REML criterion on n instead of n - p",
          "core/model/reml.py",
          "        np.diag(R))))) + (n - p) * math.log(s2))",
          "        np.diag(R))))) + n * math.log(s2))",
          ("tests/model/test_wholeplot.py",)),
    Fault("wp-satterthwaite", "Satterthwaite df without the factor 2",
          "core/model/reml.py",
          "nus.append(2.0 * d * d / var if var > 0 else np.inf)",
          "nus.append(d * d / var if var > 0 else np.inf)",
          ("tests/model/test_wholeplot.py",)),
    Fault("wp-new-run", "a new run's variance leaves out the whole-plot variance",
          "core/model/reml.py",
          "        total = self.s2_wp + self.s2\n",
          "        total = self.s2\n",
          ("tests/model/test_wholeplot.py",)),
    Fault("cat-gradient", "category summary: the thresholds' gradient with the wrong sign",
          "core/model/category_model.py",
          "        return np.column_stack([D * f.sum(axis=1)[:, None], -f])",
          "        return np.column_stack([D * f.sum(axis=1)[:, None], f])",
          ("tests/model/test_category_model.py",)),
    Fault("cat-panel-scatter", "category summary: a new run's scatter not divided by its scores",
          "core/model/category_model.py",
          "        self.sigma_ = float(math.sqrt(np.mean(V[seen] / n_run[seen])))",
          "        self.sigma_ = float(math.sqrt(np.mean(V[seen])))",
          ("tests/model/test_category_model.py",)),
    Fault("cat-top-box", "top box counts one category too many",
          "core/model/category_model.py",
          "        return 100.0 * (c >= hi - boxes + 1)",
          "        return 100.0 * (c >= hi - boxes)",
          ("tests/model/test_category_model.py",)),
    Fault("panel-mean-pi", "a scores model's new run: one score, not the panel mean",
          "core/model/study_fit.py",
          "            model.runs_of(int(round(float(np.median(per_run)))))",
          "            model.runs_of(1)",
          ("tests/model/test_panel_scores.py",)),
    Fault("wp-stratum-df", "whole-plot error df counted from runs, not whole plots",
          "core/model/wholeplot.py",
          "(WHOLE, between, plot_mean(M[:, between]), zb, G),",
          "(WHOLE, between, plot_mean(M[:, between]), zb, n - G),",
          ("tests/model/test_wholeplot.py",)),
    Fault("sp-information", "split-plot information without the whole-plot correction",
          "core/plan/split_plot.py",
          "c = ratio / (1.0 + ratio * sizes)",
          "c = ratio / (1.0 + sizes)",
          ("tests/plan/test_split_plot.py",)),
    # -- designs and aliases -------------------------------------------------------------
    Fault("alias-coset", "alias chains grouped by OR of words, not their product",
          "core/plan/aliases.py",
          "key = min(e ^ w for w in subgroup)",
          "key = min(e | w for w in subgroup)",
          ("tests/plan/test_designs.py",)),
    Fault("alias-sign", "a confounded column's combination loses its signs",
          "core/model/dependence.py",
          "aliases[terms[j].label] = {terms[kept_idx[i]].label: float(f\"{b[i]:.12g}\")",
          "aliases[terms[j].label] = {terms[kept_idx[i]].label: float(f\"{abs(b[i]):.12g}\")",
          ("tests/model/test_dependence.py",)),
    Fault("resolution", "resolution from the longest defining word",
          "core/plan/aliases.py",
          "return min(lengths) if lengths else None",
          "return max(lengths) if lengths else None",
          ("tests/plan/test_designs.py",)),
    # definitive screening designs and their analysis
    Fault("paley-sign", "Paley's first column never antisymmetric",
          "core/plan/conference.py",
          "C[1:, 0] = 1.0 if q % 4 == 1 else -1.0",
          "C[1:, 0] = 1.0",
          ("tests/plan/test_definitive.py",)),
    Fault("no-foldover", "the second half repeats the first instead of mirroring it",
          "core/plan/definitive.py",
          "top, bottom = C.copy(), -C",
          "top, bottom = C.copy(), C.copy()",
          ("tests/plan/test_definitive.py",)),
    Fault("odd-error-half", "the fold-over residual counted once instead of twice",
          "core/model/screening_selection.py",
          "rss_odd = 2.0 * float(",
          "rss_odd = 1.0 * float(",
          ("tests/model/test_screening_selection.py",)),
    Fault("pooled-main-ss", "an inactive main effect pools half its sum of squares",
          "core/model/screening_selection.py",
          "ss_main = 2.0 * gram * coef ** 2",
          "ss_main = gram * coef ** 2",
          ("tests/model/test_screening_selection.py",)),
    # the trade-off frontier and the recommendation's steadiness (issue 28)
    Fault("frontier-minimize-sense", "the frontier treats a minimised goal as maximised",
          "core/search/frontier_result.py",
          '{"maximize": 1.0, "minimize": -1.0, "target": 0.0}',
          '{"maximize": 1.0, "minimize": 1.0, "target": 0.0}',
          ("tests/search/test_frontier.py",)),
    Fault("frontier-rate-upside-down", "the exchange rate is gain per loss, not loss per gain",
          "core/search/frontier_result.py",
          '"rate": loss[ok] / gain[ok]',
          '"rate": gain[ok] / loss[ok]',
          ("tests/search/test_frontier.py",)),
    Fault("knee-over-seams", "the knee ignores the frontier's pieces",
          "core/search/frontier_result.py",
          "        if pieces is not None:\n            lab = list(pieces)",
          "        if pieces is None:\n            lab = list(pieces)",
          ("tests/search/test_frontier.py",)),
    Fault("sensitivity-weight-factor", "a weight is raised by half instead of doubled",
          "core/search/sensitivity.py",
          "WEIGHT_FACTORS = (0.5, 2.0)",
          "WEIGHT_FACTORS = (0.5, 1.5)",
          ("tests/search/test_sensitivity.py",)),
    Fault("sensitivity-limit-span", "a limit moves by 10 % of its upper value, not its span",
          "core/search/sensitivity.py",
          "new = old + sign * LIMIT_SHIFT * span",
          "new = old + sign * LIMIT_SHIFT * abs(g.upper)",
          ("tests/search/test_sensitivity.py",)),
    Fault("sensitivity-stale-goals", "a changed goal's curves are not rebuilt (weights only)",
          "core/search/sensitivity.py",
          "    out._goal_arrays()\n",
          "    out.w_norm = out.weights / out.weights.sum()\n",
          ("tests/search/test_sensitivity.py",)),
    Fault("sensitivity-binding-all", "a goal binds only when every change of it moves the settings",
          "core/search/sensitivity.py",
          'if _moved(changes[changes["goal"] == n]).any())',
          'if _moved(changes[changes["goal"] == n]).all())',
          ("tests/search/test_sensitivity.py",)),
    Fault("conflict-least", "the report's pair is the least conflicting, not the most",
          "core/search/conflict.py",
          'table.sort_values("rho", kind="stable")',
          'table.sort_values("rho", ascending=False, kind="stable")',
          ("tests/report/test_frontier_sections.py",)),
)


# --------------------------------------------------------------------------------------


def check_texts(faults) -> list[str]:
    """Problems with the entries: old text not found exactly once, or no change."""
    problems = []
    for f in faults:
        path = ROOT / f.file
        if not path.exists():
            problems.append(f"{f.name}: {f.file} does not exist")
            continue
        count = path.read_text(encoding="utf-8").count(f.old)
        if count != 1:
            problems.append(f"{f.name}: the old text is found {count} times in {f.file} "
                            "(the code moved: update the entry)")
        if f.old == f.new:
            problems.append(f"{f.name}: the new text equals the old one")
    return problems


def make_copy(where: Path) -> Path:
    """A scratch copy of the project; its core is importable as ``tradeoff``."""
    ignore = shutil.ignore_patterns("__pycache__", ".pytest_cache", ".hypothesis", "*.pyc")
    for name in COPIED:
        src = ROOT / name
        if src.is_dir():
            shutil.copytree(src, where / name, ignore=ignore)
        elif src.exists():
            shutil.copy2(src, where / name)
    (where / "_import").mkdir()
    (where / "_import" / "tradeoff").symlink_to(where / "core", target_is_directory=True)
    return where


def environment(copy: Path) -> dict:
    env = dict(os.environ)
    env.update(PYTHONPATH=str(copy / "_import"), PYTHONDONTWRITEBYTECODE="1",
               OPENBLAS_NUM_THREADS="1", OMP_NUM_THREADS="1", MKL_NUM_THREADS="1")
    env.pop("CI", None)
    return env


def imported_from(copy: Path) -> Path:
    """Where ``tradeoff`` is imported from in the scratch copy's environment."""
    out = subprocess.run([sys.executable, "-c",
                          "import pathlib, tradeoff; "
                          "print(pathlib.Path(tradeoff.__file__).resolve())"],
                         cwd=copy, env=environment(copy), capture_output=True, text=True,
                         check=True)
    return Path(out.stdout.strip())


def run_tests(copy: Path, tests) -> tuple[int, str, float]:
    """(pytest exit status, first failing test or a short reason, seconds)."""
    cmd = [sys.executable, "-m", "pytest", "-x", "-q", "-p", "no:cacheprovider",
           "--no-header", "-rfE", *tests]
    start = time.perf_counter()
    try:
        out = subprocess.run(cmd, cwd=copy, env=environment(copy), capture_output=True,
                             text=True, timeout=TIMEOUT)
    except subprocess.TimeoutExpired:
        return -1, f"timed out after {TIMEOUT} s", time.perf_counter() - start
    seconds = time.perf_counter() - start
    first = ""
    for line in out.stdout.splitlines():
        m = re.match(r"^(FAILED|ERROR) (\S+)", line)
        if m:
            first = m.group(2)
            break
    if out.returncode not in (0, 1):
        tail = (out.stdout + out.stderr).strip().splitlines()[-3:]
        first = " | ".join(tail)
    return out.returncode, first, seconds


def plant(copy: Path, fault: Fault) -> str:
    path = copy / fault.file
    text = path.read_text(encoding="utf-8")
    path.write_text(text.replace(fault.old, fault.new, 1), encoding="utf-8")
    return text


def try_fault(copy: Path, fault: Fault) -> tuple[str, str, float]:
    """('caught' | 'missed' | 'error', first failing test or reason, seconds)."""
    original = plant(copy, fault)
    try:
        code, first, seconds = run_tests(copy, fault.tests)
    finally:
        (copy / fault.file).write_text(original, encoding="utf-8")
    if code == 1:
        return "caught", first, seconds
    if code == 0:
        return "missed", "", seconds
    return "error", first, seconds


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--jobs", type=int, default=2, choices=(1, 2),
                        help="faults tried at once (the machine has 2 cores)")
    parser.add_argument("--only", nargs="+", metavar="NAME", help="try only these faults")
    parser.add_argument("--list", action="store_true", help="list the faults and stop")
    parser.add_argument("--no-baseline", action="store_true",
                        help="skip the run of the unmutated copy (faster, less safe)")
    args = parser.parse_args()

    faults = FAULTS
    if args.only:
        unknown = sorted(set(args.only) - {f.name for f in FAULTS})
        if unknown:
            print(f"unknown fault(s): {', '.join(unknown)}", file=sys.stderr)
            return 2
        faults = tuple(f for f in FAULTS if f.name in args.only)
    if args.list:
        for f in FAULTS:
            print(f"{f.name:<22} {f.file:<30} {f.what}")
        return 0

    problems = check_texts((SANITY,) + faults)
    if problems:
        print("the faults no longer match the code:", file=sys.stderr)
        for p in problems:
            print("  " + p, file=sys.stderr)
        return 1

    started = time.perf_counter()
    with tempfile.TemporaryDirectory(prefix="tradeoff-mutations-") as tmp:
        copies = [make_copy(Path(tmp) / f"copy{i}") for i in range(args.jobs)]
        for copy in copies:
            where = imported_from(copy)
            if not where.is_relative_to(copy / "core"):
                print(f"tradeoff is imported from {where}, not from the scratch copy "
                      f"{copy / 'core'}", file=sys.stderr)
                return 1
        print(f"{len(faults)} faults, scratch copies in {tmp}, tradeoff imported from "
              "the copies' core/")

        if not args.no_baseline:
            tests = sorted({t for f in faults for t in f.tests})
            code, first, seconds = run_tests(copies[0], tests)
            if code != 0:
                print(f"the unmutated copy fails its tests ({first}): fix that first",
                      file=sys.stderr)
                return 1
            print(f"unmutated copy: {len(tests)} test selections pass ({seconds:.0f} s)")
        outcome, first, seconds = try_fault(copies[0], SANITY)
        if outcome != "caught":
            print(f"the sanity fault was not caught ({outcome} {first}): the tests do not "
                  "import the scratch copy", file=sys.stderr)
            return 1
        print(f"sanity fault caught by {first} ({seconds:.0f} s)")
        print()

        free: Queue = Queue()
        for copy in copies:
            free.put(copy)

        def one(fault: Fault):
            copy = free.get()
            try:
                return fault, *try_fault(copy, fault)
            finally:
                free.put(copy)

        width = max(len(f.name) for f in faults)
        print(f"{'fault':<{width}}  {'result':<7} {'s':>4}  caught by / what")
        results = []
        with ThreadPoolExecutor(max_workers=args.jobs) as pool:
            for fault, outcome, first, seconds in pool.map(one, faults):
                results.append((fault, outcome))
                shown = first if outcome != "missed" else f"MISSED: {fault.what}"
                print(f"{fault.name:<{width}}  {outcome:<7} {seconds:4.0f}  {shown}",
                      flush=True)

    caught = sum(1 for _, o in results if o == "caught")
    missed = [f.name for f, o in results if o == "missed"]
    errors = [f.name for f, o in results if o == "error"]
    print()
    print(f"{len(results)} faults: {caught} caught, {len(missed)} missed, {len(errors)} "
          f"errors ({time.perf_counter() - started:.0f} s)")
    if missed:
        print("missed: " + ", ".join(missed))
    if errors:
        print("errors (the fault broke the import or the run, not a test): "
              + ", ".join(errors))
    return 1 if missed or errors else 0


if __name__ == "__main__":
    sys.exit(main())
