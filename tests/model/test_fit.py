"""Per-response models (core/models.py), checked against statsmodels and
published worked examples."""
from __future__ import annotations

import itertools
import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from tradeoff.errors import ModelError
from tradeoff.model.fit import ResponseModel
from tradeoff.model.study_fit import StudyFit, fit_response, fit_study
from tradeoff.derive.load import load_study

DATA = Path(__file__).resolve().parents[1] / "data"


def factorial(k: int) -> np.ndarray:
    """2^k runs in standard order (first factor changes fastest)."""
    return np.array(list(itertools.product([-1.0, 1.0], repeat=k)))[:, ::-1]


def design_columns(X: np.ndarray, labels: list[str], names: list[str]) -> np.ndarray:
    """The model matrix built independently of the library, from term labels."""
    cols = []
    for lab in labels:
        if lab == "intercept":
            cols.append(np.ones(len(X)))
        elif lab.endswith("^2"):
            cols.append(X[:, names.index(lab[:-2])] ** 2)
        else:
            cols.append(np.prod([X[:, names.index(p)] for p in lab.split(":")], axis=0))
    return np.column_stack(cols)


# ---------------------------------------------------------------- statsmodels


@pytest.mark.parametrize("seed, k, n, terms", [
    (0, 3, 15, "interactions"), (1, 4, 30, "quadratic"), (2, 2, 9, "main"),
    (3, 3, 20, ["a", "b", "c", "a:b", "b^2"]),
])
def test_matches_statsmodels_ols(seed, k, n, terms):
    import statsmodels.api as sm
    from statsmodels.stats.outliers_influence import OLSInfluence

    rng = np.random.default_rng(seed)
    names = list("abcd")[:k]
    X = rng.uniform(-1, 1, (n, k))
    y = 5 + X @ rng.normal(size=k) + 0.7 * X[:, 0] * X[:, -1] + rng.normal(0, 0.5, n)
    m = ResponseModel(terms=terms, factor_names=names).fit(X, y)
    M = design_columns(X, m.terms_, names)
    ref = sm.OLS(y, M).fit()
    tol = dict(rtol=1e-8, atol=1e-10)
    np.testing.assert_allclose(m.coef_, ref.params, **tol)
    np.testing.assert_allclose(m.std_errors_, ref.bse, **tol)
    np.testing.assert_allclose(m.t_values_, ref.tvalues, **tol)
    np.testing.assert_allclose(m.p_values_, ref.pvalues, **tol)
    np.testing.assert_allclose(m.r2_, ref.rsquared, **tol)
    np.testing.assert_allclose(m.adj_r2_, ref.rsquared_adj, **tol)
    np.testing.assert_allclose(m.anova_["model"]["f"], ref.fvalue, **tol)
    np.testing.assert_allclose(m.anova_["model"]["p"], ref.f_pvalue, **tol)
    np.testing.assert_allclose(m.residual_sd_, np.sqrt(ref.mse_resid), **tol)
    assert m.residual_df_ == ref.df_resid
    infl = OLSInfluence(ref)
    d = m.diagnostics_
    np.testing.assert_allclose(d["leverage"], infl.hat_matrix_diag, **tol)
    np.testing.assert_allclose(d["studentized"], infl.resid_studentized_internal, **tol)
    np.testing.assert_allclose(d["studentized_deleted"], infl.resid_studentized_external,
                               **tol)
    np.testing.assert_allclose(d["cooks_distance"], infl.cooks_distance[0], **tol)
    press = np.sum(infl.resid_press ** 2)
    np.testing.assert_allclose(m.pred_r2_, 1 - press / ref.centered_tss, **tol)
    # intervals at new points
    Xn = rng.uniform(-1, 1, (7, k))
    frame = ref.get_prediction(design_columns(Xn, m.terms_, names)).summary_frame(alpha=0.05)
    got = m.intervals(Xn)
    np.testing.assert_allclose(got["predicted"], frame["mean"], **tol)
    np.testing.assert_allclose(got["ci_low"], frame["mean_ci_lower"], **tol)
    np.testing.assert_allclose(got["ci_high"], frame["mean_ci_upper"], **tol)
    np.testing.assert_allclose(got["pi_low"], frame["obs_ci_lower"], **tol)
    np.testing.assert_allclose(got["pi_high"], frame["obs_ci_upper"], **tol)
    mean, se, sigma, df = m.predictive(Xn)
    np.testing.assert_allclose(se, frame["mean_se"], **tol)
    assert df == ref.df_resid and sigma == pytest.approx(np.sqrt(ref.mse_resid), rel=1e-10)


def test_lack_of_fit_matches_statsmodels_comparison_with_cell_means():
    # Lack of fit = extra-sum-of-squares F test of the model against a model with one
    # mean per distinct setting (statsmodels compare_f_test as the reference).
    import statsmodels.api as sm
    rng = np.random.default_rng(5)
    X = np.vstack([factorial(2), factorial(2), np.zeros((4, 2)), [[1, 0], [0, -1]]])
    y = 10 + 2 * X[:, 0] - X[:, 1] + 3 * X[:, 0] ** 2 + rng.normal(0, 0.3, len(X))
    m = ResponseModel(terms="main", factor_names=["a", "b"]).fit(X, y)
    small = sm.OLS(y, design_columns(X, m.terms_, ["a", "b"])).fit()
    _, group = np.unique(X, axis=0, return_inverse=True)
    cells = sm.OLS(y, np.eye(group.max() + 1)[group.ravel()]).fit()
    f, p, df = cells.compare_f_test(small)
    lof = m.anova_["lack_of_fit"]
    assert lof["f"] == pytest.approx(f, rel=1e-9) and lof["p"] == pytest.approx(p, rel=1e-9)
    assert lof["df"] == df and m.anova_["pure_error"]["df"] == len(X) - (group.max() + 1)
    assert "lack of fit is significant" in " ".join(m.warnings_)


def test_curvature_test_matches_a_centre_indicator_in_statsmodels():
    # The curvature F on 1 df equals the squared t of a centre-run indicator added to the
    # full factorial model, whose residual is then exactly the centre points' pure error.
    import statsmodels.api as sm
    X = np.vstack([factorial(2), np.zeros((4, 2))])
    y = np.array([39.3, 40.9, 40.0, 41.5, 40.3, 40.5, 40.7, 40.2])  # 2^2 + 4 centre runs
    m = ResponseModel(terms="interactions", factor_names=["a", "b"]).fit(X, y)
    centre = (X == 0).all(axis=1).astype(float)
    ref = sm.OLS(y, np.column_stack([design_columns(X, m.terms_, ["a", "b"]), centre])).fit()
    c = m.anova_["curvature"]
    assert c["f"] == pytest.approx(ref.tvalues[-1] ** 2, rel=1e-9)
    assert c["p"] == pytest.approx(ref.pvalues[-1], rel=1e-9)
    assert c["difference"] == pytest.approx(y[4:].mean() - y[:4].mean(), rel=1e-12)


# ---------------------------------------------------------------- published examples


def test_two_cubed_pilot_plant_effects():
    # Box, Hunter & Hunter (2005), Statistics for Experimenters, 2nd ed., ch. 5: the
    # pilot plant 2^3 (temperature T, concentration C, catalyst K), yields in standard
    # order 60, 72, 54, 68, 52, 83, 45, 80; published effects (from memory):
    # T 23.0, C -5.0, K 1.5, TC 1.5, TK 10.0, CK 0.0, TCK 0.5.
    y = [60, 72, 54, 68, 52, 83, 45, 80]
    m = ResponseModel(terms="full", factor_names=["T", "C", "K"]).fit(factorial(3), y)
    r = m.report()
    expected = {"T": 23.0, "C": -5.0, "K": 1.5, "T:C": 1.5, "T:K": 10.0, "C:K": 0.0,
                "T:C:K": 0.5}
    for term, value in expected.items():
        assert r["effects"][term] == pytest.approx(value, abs=1e-12)
    assert r["coefficients"]["intercept"] == pytest.approx(64.25)
    assert r["std_errors"] is None and r["p_values"] is None and r["lenth"] is not None


# Montgomery, Design and Analysis of Experiments (Example 6.2, the unreplicated 2^4
# filtration-rate experiment), responses in standard order (from memory):
FILTRATION = [45, 71, 48, 65, 68, 60, 80, 65, 43, 100, 45, 104, 75, 86, 70, 96]
FILTRATION_EFFECTS = {  # published estimates (from memory)
    "A": 21.625, "B": 3.125, "C": 9.875, "D": 14.625, "A:B": 0.125, "A:C": -18.125,
    "A:D": 16.625, "B:C": 2.375, "B:D": -0.375, "C:D": -1.125, "A:B:C": 1.875,
    "A:B:D": 4.125, "A:C:D": -1.625, "B:C:D": -2.625, "A:B:C:D": 1.375}


def test_two_to_the_fourth_effects_and_lenth():
    m = ResponseModel(terms="full", factor_names=list("ABCD")).fit(factorial(4), FILTRATION)
    r = m.report()
    for term, value in FILTRATION_EFFECTS.items():
        assert r["effects"][term] == pytest.approx(value, abs=1e-12)
    # Lenth (1989) by hand from the published effects: median |effect| = 2.625, so
    # s0 = 3.9375 and the cut 2.5 s0 = 9.84375 keeps the 10 smallest; their median is
    # (1.625 + 1.875) / 2 = 1.75, so PSE = 1.5 * 1.75 = 2.625 on d = 15/3 = 5 df.
    # Montgomery reports PSE = 2.625, ME = 6.75 and SME = 13.72 (from memory).
    lenth = r["lenth"]
    assert lenth["pse"] == pytest.approx(2.625, abs=1e-12)
    assert lenth["me"] == pytest.approx(stats.t.ppf(0.975, 5) * 2.625, rel=1e-12)
    gamma = (1 + 0.95 ** (1 / 15)) / 2
    assert lenth["sme"] == pytest.approx(stats.t.ppf(gamma, 5) * 2.625, rel=1e-12)
    assert lenth["me"] == pytest.approx(6.75, abs=0.005)
    # (the recalled SME uses a t quantile rounded from tables: agreement to 0.03)
    assert lenth["sme"] == pytest.approx(13.72, abs=0.03)
    # half-normal coordinates: largest |effect| (A) at Phi^-1(0.5 + 0.5 * 14.5 / 15)
    top = m.half_normal_.iloc[-1]
    assert top["term"] == "A" and top["quantile"] == pytest.approx(
        stats.norm.ppf(0.5 + 0.5 * 14.5 / 15))
    # saturated: sigma for intervals from the PSE (effect SE = 2 sigma / sqrt(16))
    assert m.predictive(np.zeros((1, 4)))[2] == pytest.approx(2.625 * 4 / 2)


def test_reduction_by_lenth_keeps_the_published_active_effects():
    # Montgomery's analysis of the same example finds A, C, D, AC and AD active and
    # reports the reduced model 70.06 + 10.81 x1 + 4.94 x3 + 7.31 x4 - 9.06 x1x3
    # + 8.31 x1x4 (from memory).
    m = ResponseModel(terms="full", factor_names=list("ABCD"), reduce=True).fit(
        factorial(4), FILTRATION)
    assert m.terms_ == ["intercept", "A", "C", "D", "A:C", "A:D"]
    np.testing.assert_allclose(m.coef_, [70.06, 10.81, 4.94, 7.31, -9.06, 8.31], atol=0.005)
    assert m.residual_df_ == 10 and m.lenth_ is None
    assert "|effect| 3.125 below Lenth ME" in m.reduction_["B"]


# Effects built so that Lenth's t quantile on d = m/3 degrees of freedom decides
# which effects are active: D lies just above the margin of error, A:B just
# below it, and a quantile on other degrees of freedom (m/2, m, m/4) or another
# trimming cut (2.5 s0) moves one of them across.
BORDER_EFFECTS = {"A": 20.0, "B": -15.0, "C": 12.0, "D": 6.7, "A:B": 6.4,
                  "A:C": 0.5, "A:D": -0.8, "B:C": 1.0, "B:D": -1.2, "C:D": 1.5,
                  "A:B:C": -1.6, "A:B:D": 1.8, "A:C:D": -2.0, "B:C:D": 2.2,
                  "A:B:C:D": -2.4}


def _lenth_by_hand(effects, d):
    """Lenth (1989): s0 = 1.5 median|c|; PSE = 1.5 median of |c| < 2.5 s0;
    ME = t(0.975, d) PSE."""
    c = np.abs(np.asarray(effects, dtype=float))
    s0 = 1.5 * np.median(c)
    pse = 1.5 * np.median(c[c < 2.5 * s0])
    return pse, stats.t.ppf(0.975, d) * pse


def test_lenth_degrees_of_freedom_decide_the_active_effects():
    labels = list(BORDER_EFFECTS)
    X = factorial(4)
    M = design_columns(X, labels, list("ABCD"))
    # an effect is twice its coefficient in coded units (common practice)
    y = 50 + M @ (np.array(list(BORDER_EFFECTS.values())) / 2)
    effects = list(BORDER_EFFECTS.values())
    m = len(effects)
    pse, me = _lenth_by_hand(effects, m / 3)
    # by hand: median |c| = 2.0, s0 = 3, cut 7.5 keeps 12 effects whose median is
    # (1.6 + 1.8) / 2, so PSE = 2.55 and ME = t(0.975, 5) * 2.55 = 6.555
    assert pse == pytest.approx(2.55) and me == pytest.approx(6.555, abs=1e-3)
    # the case is sensitive: D and A:B change sides with the degrees of freedom
    assert _lenth_by_hand(effects, m / 4)[1] > 6.7 > me > 6.4 > _lenth_by_hand(
        effects, m / 2)[1]
    full = ResponseModel(terms="full", factor_names=list("ABCD")).fit(X, y)
    assert full.report()["lenth"]["me"] == pytest.approx(me, rel=1e-12)
    active = [t for t, e in BORDER_EFFECTS.items() if abs(e) > me]
    assert active == ["A", "B", "C", "D"]
    reduced = ResponseModel(terms="full", factor_names=list("ABCD"), reduce=True).fit(X, y)
    assert reduced.terms_ == ["intercept"] + active
    assert "|effect| 6.4 below Lenth ME 6.555" in reduced.reduction_["A:B"]


def test_reduction_pinned_terms_stay():
    m = ResponseModel(terms="full", factor_names=list("ABCD"), reduce=True,
                      keep=["B:C"]).fit(factorial(4), FILTRATION)
    # B:C is pinned, so B and C stay with it (hierarchy)
    assert {"B", "C", "B:C"} <= set(m.terms_)
    m = ResponseModel(terms="full", factor_names=list("ABCD"), drop=["A:B:C:D"]).fit(
        factorial(4), FILTRATION)
    assert "A:B:C:D" not in m.terms_ and m.residual_df_ == 1


def test_reduction_by_p_value_is_hierarchical():
    rng = np.random.default_rng(11)
    X = np.vstack([factorial(3)] * 2)
    # a:b is strong, a alone is nothing: a must stay with a:b
    y = 20 + 3 * X[:, 0] * X[:, 1] + 2 * X[:, 1] + rng.normal(0, 0.4, len(X))
    m = ResponseModel(terms="interactions", factor_names=list("abc"), reduce=True).fit(X, y)
    assert m.terms_ == ["intercept", "a", "b", "a:b"]
    assert set(m.reduction_) == {"c", "a:c", "b:c"}
    for reason in m.reduction_.values():
        assert float(reason.split("= ")[1]) > 0.10


def test_derringer_suich_quadratic_fits():
    # Derringer & Suich (1980), J. Quality Technology 12(4), 214-219 (tire tread CCD);
    # published quadratic models, from memory (the table was recalled, then checked:
    # its quadratic fit reproduces the published optimum):
    # y1: 139.12, 16.49, 17.88, 10.91, -4.01, -3.45, -1.57, 5.13, 7.13, 7.88
    # y3: 400.38, -99.67, -31.40, -73.92, 7.93, 17.31, 0.43, 8.75, 6.25, 1.25
    # in the order intercept, x1, x2, x3, x1^2, x2^2, x3^2, x1x2, x1x3, x2x3.
    runs = pd.read_csv(DATA / "tire_tread_1980.csv")
    X = runs[["x1", "x2", "x3"]].to_numpy()
    order = ["intercept", "x1", "x2", "x3", "x1^2", "x2^2", "x3^2", "x1:x2", "x1:x3",
             "x2:x3"]
    published = {
        "y1": [139.12, 16.49, 17.88, 10.91, -4.01, -3.45, -1.57, 5.125, 7.13, 7.88],
        "y3": [400.38, -99.67, -31.40, -73.92, 7.93, 17.31, 0.43, 8.75, 6.25, 1.25]}
    for response, coefs in published.items():
        m = ResponseModel(terms="quadratic", factor_names=["x1", "x2", "x3"],
                          name=response).fit(X, runs[response], runs["run"])
        got = dict(zip(m.terms_, m.coef_))
        np.testing.assert_allclose([got[t] for t in order], coefs, atol=0.0051)
        assert m.residual_df_ == 10 and m.anova_["pure_error"]["df"] == 5
        assert m.anova_["curvature"] is None  # axial runs: not a two-level design


# ---------------------------------------------------------------- transforms, equation


def test_log_transform_back_transforms_predictions_and_intervals():
    rng = np.random.default_rng(3)
    X = np.vstack([factorial(2)] * 3)
    y = np.exp(1 + 0.5 * X[:, 0] + rng.normal(0, 0.1, len(X)))
    m = ResponseModel(terms="main", factor_names=["a", "b"], transform="log").fit(X, y)
    plain = ResponseModel(terms="main", factor_names=["a", "b"]).fit(X, np.log(y))
    Xn = np.array([[0.3, -0.2], [1.0, 1.0]])
    np.testing.assert_allclose(m.predict(Xn), np.exp(plain.predict(Xn)), rtol=1e-12)
    iv, iv_log = m.intervals(Xn), plain.intervals(Xn)
    for col in iv.columns:
        np.testing.assert_allclose(iv[col], np.exp(iv_log[col]), rtol=1e-12)
    np.testing.assert_allclose(m.inverse_transform([0.0, 1.0]), [1.0, np.e])
    mean, _, _, _ = m.predictive(Xn)
    np.testing.assert_allclose(mean, plain.predict(Xn), rtol=1e-12)


def test_sqrt_transform_against_statsmodels_on_the_square_root():
    # A square-root model is ordinary least squares on sqrt(y) (statsmodels OLS
    # here); predictions and interval ends are squared back to natural units.
    import statsmodels.api as sm

    rng = np.random.default_rng(6)
    X = np.vstack([factorial(2)] * 3)
    y = (3 + 0.8 * X[:, 0] - 0.4 * X[:, 1] + rng.normal(0, 0.1, len(X))) ** 2
    m = ResponseModel(terms="main", factor_names=["a", "b"], transform="sqrt").fit(X, y)
    ref = sm.OLS(np.sqrt(y), sm.add_constant(X)).fit()
    np.testing.assert_allclose(m.coef_, ref.params, rtol=1e-10)
    Xn = np.array([[0.3, -0.2], [1.0, 1.0]])
    frame = ref.get_prediction(sm.add_constant(Xn, has_constant="add")).summary_frame(
        alpha=0.05)
    iv = m.intervals(Xn)
    np.testing.assert_allclose(m.predict(Xn), frame["mean"] ** 2, rtol=1e-10)
    np.testing.assert_allclose(iv["pi_low"], frame["obs_ci_lower"] ** 2, rtol=1e-10)
    np.testing.assert_allclose(iv["ci_high"], frame["mean_ci_upper"] ** 2, rtol=1e-10)


def test_box_cox_matches_scipy_for_an_intercept_only_model():
    # With only an intercept, the Box-Cox profile likelihood is scipy's boxcox_normmax (mle).
    y = stats.lognorm.rvs(0.6, size=40, random_state=np.random.default_rng(4))
    m = ResponseModel(terms=[], factor_names=["a"]).fit(np.zeros((40, 1)) + 0.0, y)
    ref = stats.boxcox_normmax(y, method="mle")
    assert m.box_cox_["lambda"] == pytest.approx(ref, abs=1e-4)
    assert m.box_cox_["low"] <= ref <= m.box_cox_["high"]


def test_box_cox_suggests_log_for_multiplicative_noise():
    rng = np.random.default_rng(8)
    X = np.vstack([factorial(3)] * 4)
    y = np.exp(2 + 0.8 * X[:, 0] - 0.5 * X[:, 1] + rng.normal(0, 0.25, len(X)))
    m = ResponseModel(terms="main", factor_names=list("abc")).fit(X, y)
    assert m.box_cox_["suggest"] == "log"
    assert any(w.startswith("A log scale would fit better than the measured scale")
               and 'transform = "log"' in w for w in m.warnings_)


def test_natural_equation_reproduces_predictions(write_study):
    study = load_study(write_study(STUDY, RUNS))
    m = fit_response(study, "hardness", terms=["protein", "glycerol", "binder",
                                               "protein:glycerol", "protein:binder",
                                               "protein^2"])
    rng = np.random.default_rng(9)
    nat = pd.DataFrame({"protein": rng.uniform(20, 30, 6), "glycerol": rng.uniform(4, 10, 6),
                        "binder": rng.choice(["rice syrup", "date paste"], 6)})
    coded_binder = np.where(nat["binder"] == "rice syrup", -1.0, 1.0)
    values = {"protein": nat["protein"].to_numpy(), "glycerol": nat["glycerol"].to_numpy(),
              "binder": coded_binder}
    total = np.zeros(6)
    for label, c in m.natural_coefficients_.items():
        term = np.ones(6)
        if label != "intercept":
            for part in label.split(":"):
                term = term * (values[part[:-2]] ** 2 if part.endswith("^2") else values[part])
        total += c * term
    fit = StudyFit(study=study, models={"hardness": m})
    table = fit.predict(nat)
    np.testing.assert_allclose(table["predicted"], total, rtol=1e-10)


# ---------------------------------------------------------------- study level, flags

STUDY = """\
[study]
name = "bars"
data = "runs.csv"

[[factors]]
name = "protein"
low = 20
high = 30

[[factors]]
name = "glycerol"
low = 4
high = 10

[[factors]]
name = "binder"
levels = ["rice syrup", "date paste"]

[[responses]]
name = "hardness"

[[responses]]
name = "flat"

[[responses]]
name = "aw"
transform = "log"
"""


def _runs() -> str:
    rng = np.random.default_rng(12)
    lines = ["run,protein,glycerol,binder,hardness,flat,aw"]
    corners = factorial(3).tolist() + [[0, 0, -1], [0, 0, 1], [0, 0, -1], [0, 0, 1],
                                       [1, 0, -1], [0, 1, 1]]
    for i, (p, g, b) in enumerate(corners, start=1):
        h = 15 + 3 * p - 2 * g + b + 1.5 * p * g + 0.8 * p * p + rng.normal(0, 0.2)
        aw = 0.6 + 0.02 * g + rng.normal(0, 0.003)
        lines.append(f"R{i:02d},{25 + 5 * p},{7 + 3 * g},"
                     f"{'rice syrup' if b < 0 else 'date paste'},{h:.3f},5,"
                     f"{aw:.4f}" if i != 3 else
                     f"R{i:02d},{25 + 5 * p},{7 + 3 * g},"
                     f"{'rice syrup' if b < 0 else 'date paste'},{h:.3f},5,")
    return "\n".join(lines) + "\n"


RUNS = _runs()


def test_fit_study_collects_unfittable_responses(write_study):
    study = load_study(write_study(STUDY, RUNS))
    fit = fit_study(study)
    assert list(fit.models) == ["hardness", "aw"]
    assert fit.skipped == {"flat": "response 'flat' is 5 in every run: there is nothing "
                                   "to model: check the data or remove the response"}
    aw = fit.models["aw"]
    assert aw.n_ == 13 and "run(s) R03 have no value" in aw.warnings_[0]
    assert list(aw.residuals_.index) == [f"R{i:02d}" for i in range(1, 15) if i != 3]
    table = fit.predict({"protein": [25, 30], "glycerol": [7, 10],
                         "binder": ["date paste", "rice syrup"]})
    assert list(table.columns) == ["point", "response", "predicted", "ci_low", "ci_high",
                                   "pi_low", "pi_high"]
    assert table["response"].tolist() == ["hardness", "hardness", "aw", "aw"]
    # the study's hardness model is 'interactions': check one prediction by hand
    h = fit.models["hardness"]
    coef = dict(zip(h.terms_, h.coef_))
    by_hand = (coef["intercept"] + coef["protein"] - coef["binder"] + coef["glycerol"]
               + coef["protein:glycerol"] - coef["protein:binder"] - coef["glycerol:binder"])
    assert table["predicted"].iloc[1] == pytest.approx(by_hand)
    assert (table["ci_low"] < table["predicted"]).all()
    assert (table["pi_low"] < table["ci_low"]).all()
    with pytest.raises(ModelError, match=r"response 'flat' is 5 in every run"):
        fit_response(study, "flat")
    report = json.loads(json.dumps(fit.report()))  # valid JSON, no NaN
    assert report["responses"]["aw"]["transform"] == "log"


def test_outlying_run_is_flagged_by_id():
    rng = np.random.default_rng(6)
    X = np.vstack([factorial(3)] * 3)
    y = 10 + X[:, 0] + rng.normal(0, 0.2, len(X))
    y[7] += 3.0
    ids = [f"T{i}" for i in range(len(y))]
    m = ResponseModel(terms="main", factor_names=list("abc")).fit(X, y, ids)
    assert m.flagged_runs_ == ["T7"]
    assert any(w.startswith("run T7 has a studentized") for w in m.warnings_)


def test_half_fraction_model_reports_aliases():
    base = factorial(3)
    X = np.column_stack([base, base.prod(axis=1)])
    y = np.arange(8.0) ** 1.5
    m = ResponseModel(terms="interactions", factor_names=list("abcd")).fit(X, y)
    # I = ABCD (Box, Hunter & Hunter (2005), ch. 6): BC = +AD, BD = +AC, CD = +AB
    assert m.aliases_ == {"b:c": {"a:d": 1.0}, "b:d": {"a:c": 1.0}, "c:d": {"a:b": 1.0}}
    r = m.report()
    assert r["aliases"]["c:d"] == [{"term": "a:b", "coef": 1.0}] and r["residual_df"] == 0
    assert any("'c:d' cannot be told apart from a:b" in w for w in r["warnings"])


# ---------------------------------------------------------------- bad input


def test_bad_input_messages():
    X = factorial(2)
    with pytest.raises(ModelError, match=r"response 'liking': the 'interactions' model "
                                         r"has 7 terms but only 4 runs have a value: .*"
                                         r"'main' \(4 terms\) would fit"):
        ResponseModel(terms="interactions", factor_names=list("abc"), name="liking").fit(
            np.column_stack([X, [0.2, -0.5, 0.7, 0.1]]), [1, 2, 3, 4.0])
    with pytest.raises(ModelError, match=r"response 'cost': only 1 run\(s\) have a value"):
        ResponseModel(factor_names=["a", "b"], name="cost").fit(X, [1, np.nan, np.nan,
                                                                    np.nan])
    with pytest.raises(ModelError, match=r"response 'cost' is 2 in every run"):
        ResponseModel(factor_names=["a", "b"], name="cost").fit(X, [2, 2, 2, 2.0])
    with pytest.raises(ModelError, match=r"term 'a\^2': factor 'a' has only two settings"):
        ResponseModel(terms=["a", "a^2"], factor_names=["a", "b"]).fit(X, [1, 2, 3, 5.0])
    with pytest.raises(ModelError, match=r"not fitted yet"):
        ResponseModel(factor_names=["a", "b"]).predict(X)
    with pytest.raises(ModelError, match=r"one column per factor \(2\), found shape"):
        ResponseModel(factor_names=["a", "b"]).fit(X[:, :1], [1, 2, 3, 4.0])
    with pytest.raises(ModelError, match=r"transform 'log' needs values above 0"):
        ResponseModel(factor_names=["a", "b"], transform="log").fit(X, [1, 2, 0, 4.0])
    with pytest.raises(ModelError, match=r"term 'a:b' to keep is not in the model"):
        ResponseModel(terms="main", factor_names=["a", "b"], keep=["a:b"]).fit(
            X, [1, 2, 3, 5.0])
    with pytest.raises(ModelError, match=r"factor 'b' has a blank or non-numeric setting "
                                         r"in run 2"):
        ResponseModel(factor_names=["a", "b"]).fit([[1, 1], [1, np.nan]], [1, 2.0])
    m = ResponseModel(terms="main", factor_names=["a", "b"]).fit(X, [1, 2, 3, 5.0])
    with pytest.raises(ModelError, match=r"one column per factor"):
        m.predict(np.zeros((3, 3)))


def test_study_file_pins_terms(write_study):
    study = load_study(write_study(STUDY.replace(
        'name = "hardness"\n',
        'name = "hardness"\ndrop_terms = ["glycerol:binder"]\nkeep_terms = ["protein:binder"]\n'),
        RUNS))
    m = fit_response(study, "hardness", reduce=True)
    assert "glycerol:binder" not in m.requested_terms_
    assert {"protein", "binder", "protein:binder"} <= set(m.terms_)
