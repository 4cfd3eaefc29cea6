"""A panel response modelled on its scores (runs random, assessors fixed) against
the run-stratum analysis of the run means and statsmodels MixedLM."""
from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest

from tradeoff.derive.load import load_study
from tradeoff.model.study_fit import fit_response

STUDY = """[study]
data = "runs.csv"
model = "main"
[panel]
data = "panel.csv"
scale = [0, 100]
[[factors]]
name = "a"
low = 0
high = 1
[[factors]]
name = "b"
low = 0
high = 1
[[factors]]
name = "c"
low = 0
high = 1
[[responses]]
name = "sweet"
derive = "panel_mean"
attribute = "sweetness"
fit_on = "{fit_on}"
"""


def _study(tmp_path, fit_on="scores", seed=2):
    # a generated 2^3 panel study: one run per product, eight assessors, every
    # assessor tasting every run
    rng = np.random.default_rng(seed)
    runs = list(itertools.product([0, 1], repeat=3))
    (tmp_path / "runs.csv").write_text("run,a,b,c\n" + "".join(
        f"R{i},{a},{b},{c}\n" for i, (a, b, c) in enumerate(runs)))
    rows = []
    run_shift = rng.normal(0, 3, len(runs))
    for j in range(8):
        gen = rng.normal(0, 5)
        for i, (a, b, c) in enumerate(runs):
            s = 50 + 6 * a - 4 * b + 1 * c + run_shift[i] + gen + rng.normal(0, 4)
            rows.append(f"R{i},J{j},sweetness,{s:.2f}\n")
    (tmp_path / "panel.csv").write_text("run,assessor,attribute,score\n" + "".join(rows))
    (tmp_path / "s.toml").write_text(STUDY.format(fit_on=fit_on))
    return load_study(tmp_path / "s.toml")


def test_scores_model_equals_the_run_stratum_on_balanced_panels(tmp_path):
    # Balanced complete panel, run variance estimated above 0: the GLS estimate is
    # the least-squares fit of the run means and its SE is that fit's SE with the
    # run-stratum df (Cochran & Cox 1957, ch. 7: split-plot strata; common practice).
    import statsmodels.formula.api as smf

    study = _study(tmp_path)
    model = fit_response(study, "sweet")
    rep = model.report()
    assert model.whole_plots_["sd"] > 0
    means = study.runs.assign(y=study.runs["sweet"])
    ols = smf.ols("y ~ I(2*a-1) + I(2*b-1) + I(2*c-1)", data=means).fit()
    for ours, theirs in zip(["a", "b", "c"], ["I(2 * a - 1)", "I(2 * b - 1)", "I(2 * c - 1)"]):
        assert rep["coefficients"][ours] == pytest.approx(ols.params[theirs], abs=1e-6)
        assert rep["std_errors"][ours] == pytest.approx(ols.bse[theirs], rel=1e-4)
    assert model.anova_["terms"]["a"]["df_denominator"] == pytest.approx(4, abs=1e-3)


def test_scores_model_matches_statsmodels_mixedlm(tmp_path):
    # Reference library: statsmodels MixedLM, score ~ factors + C(assessor),
    # random intercept per run, REML.
    import statsmodels.formula.api as smf

    study = _study(tmp_path, seed=9)
    model = fit_response(study, "sweet")
    rep = model.report()
    frame = pd.read_csv(tmp_path / "panel.csv").merge(pd.read_csv(tmp_path / "runs.csv"))
    for f in "abc":
        frame[f + "c"] = 2 * frame[f] - 1
    ml = smf.mixedlm("score ~ ac + bc + cc + C(assessor, Sum)", frame,
                     groups=frame["run"]).fit(reml=True)
    for f in "abc":
        assert rep["coefficients"][f] == pytest.approx(ml.params[f + "c"], abs=1e-4)
        assert rep["std_errors"][f] == pytest.approx(ml.bse[f + "c"], rel=1e-3)


def test_one_run_per_product_gets_tests_only_from_the_scores(tmp_path):
    study = _study(tmp_path, fit_on="runs")
    runs_model = fit_response(study, "sweet")
    assert runs_model.residual_df_ == 4  # 8 run values, 4 coefficients
    scores = fit_response(_study(tmp_path, fit_on="scores"), "sweet")
    assert scores.n_ == 64
    assert np.isfinite(scores.anova_["terms"]["a"]["p"])


def test_saturated_runs_fall_back_to_runs_fixed_like_the_panel_anova(tmp_path):
    # 2x2 with its interaction on four runs: no run-to-run df; the factor effects
    # are tested against the panel's scatter. Reference: statsmodels OLS
    # score ~ a * b + C(assessor) (sum coding) on the scores.
    import statsmodels.formula.api as smf

    rng = np.random.default_rng(1)
    (tmp_path / "runs.csv").write_text("run,a,b\nR0,0,0\nR1,1,0\nR2,0,1\nR3,1,1\n")
    rows = []
    for j in range(9):
        g = rng.normal(0, 5)
        for i, (a, b) in enumerate([(0, 0), (1, 0), (0, 1), (1, 1)]):
            rows.append(f"R{i},J{j},sweetness,{50 + 6 * a - 4 * b + g + rng.normal(0, 4):.2f}\n")
    (tmp_path / "panel.csv").write_text("run,assessor,attribute,score\n" + "".join(rows))
    text = STUDY.format(fit_on="scores").replace('model = "main"', 'model = "interactions"')
    (tmp_path / "s.toml").write_text(text.replace('[[factors]]\nname = "c"\nlow = 0\nhigh = 1\n', ""))
    model = fit_response(load_study(tmp_path / "s.toml"), "sweet")
    rep = model.report()
    frame = pd.read_csv(tmp_path / "panel.csv").merge(pd.read_csv(tmp_path / "runs.csv"))
    frame["ac"], frame["bc"] = 2 * frame["a"] - 1, 2 * frame["b"] - 1
    ols = smf.ols("score ~ ac * bc + C(assessor, Sum)", frame).fit()
    assert rep["residual_df"] == ols.df_resid == 24
    for ours, theirs in (("a", "ac"), ("b", "bc"), ("a:b", "ac:bc")):
        assert rep["std_errors"][ours] == pytest.approx(ols.bse[theirs], rel=1e-9)
        assert rep["p_values"][ours] == pytest.approx(ols.pvalues[theirs], rel=1e-6)
    assert any("runs fixed" in w for w in model.warnings_)


def test_prediction_interval_is_for_a_new_runs_panel_mean(tmp_path):
    # A new product's panel mean of 8 scores scatters by the run variance plus the
    # score variance over 8 (Naes, Brockhoff & Tomic 2010, ch. 5: a product mean
    # over a panel; common practice). Independent computation: the variance
    # components and the mean's SE from statsmodels MixedLM (REML), written out.
    import statsmodels.formula.api as smf
    from scipy import stats

    study = _study(tmp_path, seed=9)
    model = fit_response(study, "sweet")
    frame = pd.read_csv(tmp_path / "panel.csv").merge(pd.read_csv(tmp_path / "runs.csv"))
    for f in "abc":
        frame[f + "c"] = 2 * frame[f] - 1
    ml = smf.mixedlm("score ~ ac + bc + cc + C(assessor, Sum)", frame,
                     groups=frame["run"]).fit(reml=True)
    x = np.array([[0.5, -1.0, 0.2]])
    L = np.zeros(len(ml.fe_params))
    names = list(ml.fe_params.index)
    L[names.index("Intercept")] = 1.0
    for f, v in zip("abc", x[0]):
        L[names.index(f + "c")] = v
    cov = np.asarray(ml.cov_params().loc[names, names])
    se = float(np.sqrt(L @ cov @ L))
    new_var = float(ml.cov_re.iloc[0, 0]) + ml.scale / 8
    wp = model.whole_plots_
    assert wp["scores_per_run"] == 8
    assert wp["new_run_sd"] == pytest.approx(np.sqrt(new_var), rel=1e-3)
    table = model.intervals(x, level=0.95)
    q = stats.t.ppf(0.975, max(1, int(np.floor(wp["new_run_df"]))))
    half = float(table["pi_high"].iloc[0] - table["predicted"].iloc[0])
    assert half == pytest.approx(q * np.sqrt(se ** 2 + new_var), rel=2e-3)
    # and it is narrower than one new score's interval (run SD^2 + score SD^2)
    single = np.sqrt(se ** 2 + ml.cov_re.iloc[0, 0] + ml.scale)
    assert half < q * single
