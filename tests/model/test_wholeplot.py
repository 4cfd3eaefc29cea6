"""Runs sharing a batch: the REML random-intercept model against statsmodels MixedLM
(REML) and against the classical split-plot ANOVA written out here."""
from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from scipy import special

from tradeoff.cli import main
from tradeoff.derive.load import load_study
from tradeoff.model.reml import WholePlotSolve, plot_codes
from tradeoff.model.study_fit import fit_response, fit_study
from tradeoff.model.wholeplot import WholePlotModel

# Tensile strength of paper: 3 pulp preparation methods (whole-plot factor, one
# batch of pulp per method and replicate), each batch divided into 4 samples
# cooked at 4 temperatures; 3 replicates (days). Montgomery, Design and Analysis
# of Experiments, split-plot chapter (from memory). Columns: replicate 1 (pulp 1,
# 2, 3), replicate 2 (pulp 1, 2, 3), replicate 3 (pulp 1, 2, 3).
STRENGTH = {200: [30, 34, 29, 28, 31, 31, 31, 35, 32],
            225: [35, 41, 26, 32, 36, 30, 37, 40, 34],
            250: [37, 38, 33, 40, 42, 32, 41, 39, 39],
            275: [36, 42, 36, 41, 40, 40, 40, 44, 45]}
# Montgomery's ANOVA table for these data (from memory): replicates 77.55 (2 df),
# pulp 128.39 (2), whole-plot error (replicates x pulp) 36.28 (4),
# temperature 434.08 (3), pulp x temperature 75.17 (6), total 822.97 (35).
PUBLISHED_SS = {"rep": 77.55, "pulp": 128.39, "wp_error": 36.28, "temp": 434.08,
                "pulp:temp": 75.17, "total": 822.97}

STUDY = """\
[study]
name = "paper strength"
data = "runs.csv"
blocks = "rep"
whole_plot = "batch"

[[factors]]
name = "pulp"
levels = ["1", "2", "3"]
hard_to_change = true

[[factors]]
name = "temp"
levels = ["200", "225", "250", "275"]

[[responses]]
name = "strength"
goal = "maximize"
lower = 30
upper = 45
"""


def strength_table() -> pd.DataFrame:
    rows = []
    for t, values in STRENGTH.items():
        for j, y in enumerate(values):
            rep, pulp = j // 3 + 1, j % 3 + 1
            rows.append({"rep": rep, "batch": f"r{rep}p{pulp}", "pulp": str(pulp),
                         "temp": str(t), "strength": float(y)})
    return pd.DataFrame(rows)


@pytest.fixture
def strength_study(tmp_path):
    d = strength_table()
    d.insert(0, "run", range(1, len(d) + 1))
    (tmp_path / "runs.csv").write_text(d.to_csv(index=False))
    (tmp_path / "study.toml").write_text(STUDY)
    return tmp_path / "study.toml"


def classical_split_plot(d: pd.DataFrame) -> dict:
    """The balanced split-plot ANOVA from cell means (common practice; the
    layout of Montgomery's table): replicates as blocks, whole-plot error =
    replicate x pulp, within error pooled (replicate x temperature and
    replicate x pulp x temperature)."""
    y, gm = d["strength"], d["strength"].mean()
    ss = lambda by, k: k * float(((d.groupby(by)["strength"].mean() - gm) ** 2).sum())  # noqa
    out = {"total": float(((y - gm) ** 2).sum()), "rep": ss("rep", 12), "pulp": ss("pulp", 12),
           "temp": ss("temp", 9)}
    out["wp_error"] = ss(["rep", "pulp"], 4) - out["rep"] - out["pulp"]
    out["pulp:temp"] = ss(["pulp", "temp"], 3) - out["pulp"] - out["temp"]
    out["within_error"] = (out["total"] - out["rep"] - out["pulp"] - out["wp_error"]
                           - out["temp"] - out["pulp:temp"])
    return out


def test_classical_sums_of_squares_match_the_published_table():
    # Montgomery's split-plot ANOVA (from memory): checks the transcription
    ss = classical_split_plot(strength_table())
    for key, value in PUBLISHED_SS.items():
        assert ss[key] == pytest.approx(value, abs=0.006), key


def test_split_plot_tests_equal_the_classical_anova(strength_study):
    study = load_study(strength_study)
    model = fit_response(study, "strength")
    assert isinstance(model, WholePlotModel)
    c = classical_split_plot(strength_table())
    ms_wp, ms_w = c["wp_error"] / 4, c["within_error"] / 18
    terms = model.anova_["terms"]
    # pulp against the whole-plot error on (2, 4) df; Montgomery's F 7.08 (from memory)
    f_pulp = (c["pulp"] / 2) / ms_wp
    assert f_pulp == pytest.approx(7.08, abs=0.005)
    assert terms["pulp"]["stratum"] == "whole plot"
    assert terms["pulp"]["df_denominator"] == pytest.approx(4, abs=1e-6)
    assert terms["pulp"]["f"] == pytest.approx(f_pulp, rel=1e-6)
    assert terms["pulp"]["p"] == pytest.approx(special.fdtrc(2, 4, f_pulp), rel=1e-5)
    # temperature and the interaction against the pooled within error on 18 df
    for key, df in (("temp", 3), ("pulp:temp", 6)):
        f = (c[key] / df) / ms_w
        assert terms[key]["stratum"] == "within"
        assert terms[key]["df_denominator"] == pytest.approx(18, abs=1e-6)
        assert terms[key]["f"] == pytest.approx(f, rel=1e-6)
        assert terms[key]["p"] == pytest.approx(special.fdtrc(df, 18, f), rel=1e-5)
    # the two strata of the ANOVA, written out
    strata = model.anova_["strata"]
    assert strata["whole plot"]["terms"]["pulp"]["ss"] == pytest.approx(c["pulp"], rel=1e-9)
    assert strata["whole plot"]["error"]["ss"] == pytest.approx(c["wp_error"], rel=1e-9)
    assert strata["whole plot"]["error"]["df"] == 4
    assert strata["within"]["terms"]["temp"]["ss"] == pytest.approx(c["temp"], rel=1e-9)
    assert strata["within"]["error"]["ss"] == pytest.approx(c["within_error"], rel=1e-9)
    assert strata["within"]["error"]["df"] == 18
    # variance components by the ANOVA method, which REML equals on balanced data
    # (Searle, Casella & McCulloch 1992, ch. 6): s^2 = MS_within, s_wp^2 = (MS_wp - MS_w)/4
    wp = model.whole_plots_
    assert wp["residual_sd"] ** 2 == pytest.approx(ms_w, rel=1e-6)
    assert wp["sd"] ** 2 == pytest.approx((ms_wp - ms_w) / 4, rel=1e-6)
    assert wp["count"] == 9


def _mixedlm(d: pd.DataFrame, formula: str, groups: str):
    smf = pytest.importorskip("statsmodels.formula.api")
    # Nelder-Mead to a tight tolerance: the default optimiser stops near 1e-4
    return smf.mixedlm(formula, d, groups=d[groups]).fit(reml=True, method="nm",
                                                         maxiter=20000, ftol=1e-14)


def test_reml_fit_equals_statsmodels_on_the_published_study(strength_study):
    # statsmodels MixedLM (REML), a reference library
    d = strength_table()
    ref = _mixedlm(d, "strength ~ C(rep, Sum) + C(pulp, Sum) * C(temp, Sum)", "batch")
    patsy = pytest.importorskip("patsy")
    M = np.asarray(patsy.dmatrix("C(rep, Sum) + C(pulp, Sum) * C(temp, Sum)", d))
    codes, sizes = plot_codes(d["batch"])
    sol = WholePlotSolve(M, d["strength"].to_numpy(float), codes, sizes)
    np.testing.assert_allclose(sol.coef, ref.fe_params.to_numpy(), rtol=1e-4, atol=1e-9)
    np.testing.assert_allclose(sol.se, ref.bse_fe.to_numpy(), rtol=0.01)
    assert sol.s2 == pytest.approx(ref.scale, rel=1e-4)
    assert sol.s2_wp == pytest.approx(float(ref.cov_re.iloc[0, 0]), rel=1e-4)


def _generated(seed: int, unequal: bool) -> pd.DataFrame:
    """A generated split-plot study (for property checks against statsmodels):
    oven temperature set once per load, two recipe factors varied within it:
    balanced (a 2x2 factorial in every load) or not (2 to 5 random settings)."""
    rng = np.random.default_rng(seed)
    rows, plot = [], 0
    for rep in range(4):
        for oven in (-1.0, 0.0, 1.0):
            plot += 1
            u = rng.normal(0, 1.2)
            k = int(rng.integers(2, 6)) if unequal else 4
            for i in range(k):
                a, b = rng.uniform(-1, 1, 2) if unequal else ((-1) ** i, (-1) ** (i // 2))
                y = 10 + 1.5 * oven + 0.8 * a - 0.5 * b + 0.4 * oven * a + u + rng.normal(0, 0.7)
                rows.append({"oven": oven, "a": a, "b": b, "plot": f"p{plot}", "y": y})
    return pd.DataFrame(rows)


@pytest.mark.parametrize("seed,unequal", [(3, False), (11, True), (29, True)])
def test_generated_studies_equal_statsmodels(seed, unequal):
    d = _generated(seed, unequal)
    ref = _mixedlm(d, "y ~ oven + a + b + oven:a + oven:b + a:b", "plot")
    model = WholePlotModel(terms="interactions", factor_names=["oven", "a", "b"],
                           whole_plot_name="plot")
    model.fit(d[["oven", "a", "b"]].to_numpy(), d["y"].to_numpy(), whole_plot=d["plot"])
    order = ["intercept", "oven", "a", "b", "oven:a", "oven:b", "a:b"]
    names = ["Intercept", "oven", "a", "b", "oven:a", "oven:b", "a:b"]
    coef = dict(zip(model.terms_, model.coef_))
    se = dict(zip(model.terms_, model.std_errors_))
    np.testing.assert_allclose([coef[t] for t in order], ref.fe_params[names], rtol=1e-4,
                               atol=1e-7)
    if unequal:
        # statsmodels takes its standard errors from the Hessian of its likelihood
        # in all parameters at once; on unbalanced data they then differ from the
        # GLS standard errors sqrt(diag((X'V^-1 X)^-1)) (Searle, Casella &
        # McCulloch 1992, ch. 6) by about 1 %: those are written out here, with
        # statsmodels' variance components
        o, a, b = (d[c].to_numpy(float) for c in ("oven", "a", "b"))
        X = np.column_stack([np.ones(len(d)), o, a, b, o * a, o * b, a * b])
        plots = d["plot"].to_numpy(dtype=object)
        Z = (plots[:, None] == np.unique(plots)[None, :]).astype(float)
        V = ref.scale * np.eye(len(d)) + float(ref.cov_re.iloc[0, 0]) * Z @ Z.T
        want = np.sqrt(np.diag(np.linalg.inv(X.T @ np.linalg.solve(V, X))))
        np.testing.assert_allclose([se[t] for t in order], want, rtol=1e-3)
    else:
        np.testing.assert_allclose([se[t] for t in order], ref.bse_fe[names], rtol=0.01)
    wp = model.whole_plots_
    assert wp["residual_sd"] ** 2 == pytest.approx(ref.scale, rel=1e-4)
    assert wp["sd"] ** 2 == pytest.approx(float(ref.cov_re.iloc[0, 0]), rel=1e-4)
    # a new run in a new batch carries both variances
    _, _, sigma, _ = model.predictive(np.zeros((1, 3)))
    assert sigma ** 2 == pytest.approx(ref.scale + float(ref.cov_re.iloc[0, 0]), rel=1e-4)
    assert model.anova_["terms"]["oven"]["stratum"] == "whole plot"
    assert model.anova_["terms"]["a"]["stratum"] == "within"


def test_prediction_interval_uses_both_variances():
    d = _generated(3, False)
    model = WholePlotModel(terms="main", factor_names=["oven", "a", "b"])
    model.fit(d[["oven", "a", "b"]].to_numpy(), d["y"].to_numpy(), whole_plot=d["plot"])
    x = np.array([[0.5, -0.2, 0.3]])
    mean, se, sigma, df = model.predictive(x)
    table = model.intervals(x, level=0.9)
    from scipy import stats
    half = stats.t.ppf(0.95, df) * np.sqrt(se[0] ** 2 + sigma ** 2)
    assert table["pi_high"][0] - table["predicted"][0] == pytest.approx(half, rel=1e-9)
    wp = model.whole_plots_
    assert sigma == pytest.approx(np.hypot(wp["sd"], wp["residual_sd"]), rel=1e-12)


def test_reduction_uses_the_split_plot_tests():
    d = _generated(11, True)
    model = WholePlotModel(terms="interactions", factor_names=["oven", "a", "b"],
                           reduce=True, alpha=0.10)
    model.fit(d[["oven", "a", "b"]].to_numpy(), d["y"].to_numpy(), whole_plot=d["plot"])
    full = WholePlotModel(terms="interactions", factor_names=["oven", "a", "b"])
    full.fit(d[["oven", "a", "b"]].to_numpy(), d["y"].to_numpy(), whole_plot=d["plot"])
    dropped = model.reduction_
    assert dropped and "oven" in model.terms_
    # the first term dropped is the one with the largest split-plot p in the full model
    first = next(iter(dropped))
    tests = full.anova_["terms"]
    removable = [t for t in ("oven:a", "oven:b", "a:b")]
    assert first == max(removable, key=lambda t: tests[t]["p"])
    assert dropped[first] == f"p = {tests[first]['p']:.3g}"


def test_every_run_its_own_plot_is_refused():
    d = _generated(3, False)
    model = WholePlotModel(terms="main", factor_names=["oven", "a", "b"], name="y")
    with pytest.raises(Exception, match="no split plot"):
        model.fit(d[["oven", "a", "b"]].to_numpy(), d["y"].to_numpy(),
                  whole_plot=[str(i) for i in range(len(d))])


def test_fit_json_and_text_show_both_variances(strength_study, capsys):
    assert main(["fit", str(strength_study), "--json"]) == 0
    r = json.loads(capsys.readouterr().out)["responses"]["strength"]
    wp = r["whole_plots"]
    assert {"count", "sd", "sd_interval", "residual_sd", "residual_sd_interval",
            "method"} <= set(wp)
    assert wp["count"] == 9 and "Satterthwaite" in wp["method"]
    low, high = wp["sd_interval"]
    assert low <= wp["sd"] <= high
    for row in r["anova"]["terms"].values():
        assert {"p", "df_denominator", "stratum"} <= set(row)
    assert set(r["anova"]["strata"]) == {"whole plot", "within"}
    assert main(["fit", str(strength_study)]) == 0
    text = capsys.readouterr().out
    assert "between whole plots" in text and "within whole plots" in text
    assert "SD between whole plots" in text


def test_whole_plot_study_fits_every_response_through_fit_study(strength_study):
    fitted = fit_study(load_study(strength_study))
    assert not fitted.skipped
    table = fitted.predict({"pulp": ["2"], "temp": ["275"]})
    assert table["pi_low"][0] < table["ci_low"][0] < table["predicted"][0]


def test_blocks_are_tested_against_the_whole_plot_error(strength_study):
    # replicates (days) as blocks: in the whole-plot stratum, F = MS_rep / MS_wp on
    # (2, 4) df (the classical split-plot table, written out above)
    model = fit_response(load_study(strength_study), "strength")
    c = classical_split_plot(strength_table())
    f = (c["rep"] / 2) / (c["wp_error"] / 4)
    assert model.blocks_["f"] == pytest.approx(f, rel=1e-6)
    assert model.blocks_["df_denominator"] == pytest.approx(4, abs=1e-6)
    assert model.blocks_["p"] == pytest.approx(special.fdtrc(2, 4, f), rel=1e-5)


def test_confirmation_mean_of_runs_in_one_batch_keeps_the_batch_variance():
    d = _generated(3, False)
    model = WholePlotModel(terms="main", factor_names=["oven", "a", "b"])
    model.fit(d[["oven", "a", "b"]].to_numpy(), d["y"].to_numpy(), whole_plot=d["plot"])
    wp = model.whole_plots_
    for m in (1, 3, 10):
        sd, df = model.mean_noise(m)
        assert sd ** 2 == pytest.approx(wp["sd"] ** 2 + wp["residual_sd"] ** 2 / m,
                                        rel=1e-12)
        assert df > 0
    assert model.mean_noise(1)[1] == pytest.approx(wp["new_run_df"], rel=1e-12)


def test_variance_components_information_equals_the_dense_formulas():
    # the REML expected information tr(P V_i P V_j) / 2 and dC/dth written out
    # densely (Searle, Casella & McCulloch 1992, ch. 6), against the plot-wise sums
    d = _generated(29, True)
    patsy = pytest.importorskip("patsy")
    M = np.asarray(patsy.dmatrix("oven + a + b + oven:a", d))
    codes, sizes = plot_codes(d["plot"])
    sol = WholePlotSolve(M, d["y"].to_numpy(float), codes, sizes)
    n = len(d)
    Z = np.zeros((n, sizes.size))
    Z[np.arange(n), codes] = 1.0
    V = sol.s2 * np.eye(n) + sol.s2_wp * Z @ Z.T
    Vi = np.linalg.inv(V)
    C = np.linalg.inv(M.T @ Vi @ M)
    P = Vi - Vi @ M @ C @ M.T @ Vi
    Vs = (Z @ Z.T, np.eye(n))
    info = 0.5 * np.array([[np.trace(P @ a @ P @ b) for b in Vs] for a in Vs])
    np.testing.assert_allclose(sol.cov_components, np.linalg.inv(info), rtol=1e-8)
    np.testing.assert_allclose(sol.C, C, rtol=1e-8)
    for dC, Vk in zip(sol.dC, Vs):
        np.testing.assert_allclose(dC, C @ M.T @ Vi @ Vk @ Vi @ M @ C, rtol=1e-8,
                                   atol=1e-14)


def test_effect_margins_use_each_terms_own_df(strength_study, capsys):
    # with runs sharing batches each term is tested on its own (Satterthwaite) df:
    # its effect's margin alone is the same two-sided t test, so a term stands out
    # alone exactly when its p-value is below 1 - confidence (common practice)
    from scipy import stats

    from tradeoff.maps.estimates import effect_estimates, term_df

    study = load_study(strength_study)
    for name, model in fit_study(study).models.items():
        est = effect_estimates(model).set_index("term")
        p = dict(zip(model.terms_, model.p_values_))
        t = dict(zip(model.terms_, model.t_values_))
        for term, row in est.iterrows():
            if term not in p or not np.isfinite(p[term]):
                continue
            assert (row["verdict"] != "could be noise") == (p[term] < 0.05), (name, term)
            # the df recovered from t and p gives that p back
            d = term_df(t[term], p[term], 1.0)
            assert 2 * stats.t.sf(abs(t[term]), d) == pytest.approx(p[term], rel=1e-8)
