"""Scheffe mixture models against a published example, statsmodels and closed forms.

Published: Cornell (2002), Experiments with Mixtures, 3rd ed., sec. 2.7, yarn
elongation, simplex-lattice {3, 2} with replicates (tests/data; values from
memory): y = 11.7 x1 + 9.4 x2 + 16.4 x3 + 19.0 x1x2 + 11.4 x1x3 - 9.6 x2x3,
standard errors 0.60 (linear) and 2.61 (binary) (from memory). Independent
checks: statsmodels OLS without an intercept on columns built here, R2 around
the mean (1 - SSE / centred total SS, as the mixture literature reports it).
"""
from __future__ import annotations

import json
import shutil
from pathlib import Path

import numpy as np
import pytest
import statsmodels.api as sm

from tradeoff import ModelError, fit_response, fit_study, load_study
from tradeoff.cli import main
from tradeoff.model.scheffe import (SCHEFFE_SIZE, mixture_model_terms, proportion_equation,
                                    scheffe_terms)
from tradeoff.model.terms import ContrastTerm, model_matrix, parse_term

DATA = Path(__file__).resolve().parents[1] / "data"
DEMO = Path(__file__).resolve().parents[2] / "demo_data" / "flour_blend.toml"
NAMES = ["polyethylene", "polystyrene", "polypropylene"]


@pytest.fixture(scope="module")
def yarn():
    study = load_study(DATA / "yarn_elongation_cornell.toml")
    return study, fit_response(study, "elongation")


def test_yarn_coefficients_match_cornell(yarn):
    _, model = yarn
    assert model.terms_ == NAMES + ["polyethylene:polystyrene",
                                    "polyethylene:polypropylene",
                                    "polystyrene:polypropylene"]
    # Cornell (2002) sec. 2.7 (from memory), to the published one decimal
    np.testing.assert_allclose(model.coef_, [11.7, 9.4, 16.4, 19.0, 11.4, -9.6], atol=0.05)
    # (from memory) standard errors 0.60 and 2.61
    np.testing.assert_allclose(model.std_errors_, [0.60] * 3 + [2.61] * 3, atol=0.01)


def test_yarn_fitted_values_are_the_blend_averages(yarn):
    # a saturated lattice: the fit passes through each blend's average (closed form)
    study, model = yarn
    runs = study.runs
    fitted = model.predict(study.coded().to_numpy())
    means = runs.groupby(NAMES)["elongation"].transform("mean").to_numpy()
    np.testing.assert_allclose(fitted, means, atol=1e-10)


def test_yarn_against_statsmodels_without_intercept(yarn):
    study, model = yarn
    X = study.runs[NAMES].to_numpy(float)
    cols = [X[:, 0], X[:, 1], X[:, 2], X[:, 0] * X[:, 1], X[:, 0] * X[:, 2],
            X[:, 1] * X[:, 2]]
    res = sm.OLS(study.runs["elongation"].to_numpy(float), np.column_stack(cols)).fit()
    np.testing.assert_allclose(model.coef_, res.params, rtol=1e-10)
    np.testing.assert_allclose(model.std_errors_, res.bse, rtol=1e-10)
    np.testing.assert_allclose(model.p_values_, res.pvalues, rtol=1e-8)
    assert model.residual_df_ == int(res.df_resid) == 9
    # R2 around the mean, not statsmodels' uncentred R2 for a model without constant
    np.testing.assert_allclose(model.r2_, 1 - res.ssr / res.centered_tss, rtol=1e-12)
    anova = model.anova_
    assert anova["model"]["df"] == 5 and anova["residual"]["df"] == 9
    np.testing.assert_allclose(anova["residual"]["ss"], res.ssr, rtol=1e-10)
    iv = model.intervals(np.array([[1 / 3, 1 / 3, 1 / 3]]))
    pred = res.get_prediction(np.array([[1 / 3, 1 / 3, 1 / 3, 1 / 9, 1 / 9, 1 / 9]]))
    frame = pred.summary_frame(alpha=0.05)
    np.testing.assert_allclose(iv["ci_low"], frame["mean_ci_lower"], rtol=1e-10)
    np.testing.assert_allclose(iv["pi_high"], frame["obs_ci_upper"], rtol=1e-10)


def test_term_counts_and_labels():
    # sizes: q, q + C(q,2), + C(q,3), q + 2 C(q,2) + C(q,3) (Cornell 2002, ch. 2)
    for q in (3, 4, 5):
        for model in ("linear", "quadratic", "special_cubic", "cubic"):
            assert len(scheffe_terms(model, q, [f"x{i}" for i in range(q)])) == \
                SCHEFFE_SIZE(model, q)
    labels = [t.label for t in scheffe_terms("cubic", 3, ["a", "b", "c"])]
    assert "a:b:(a-b)" in labels and "a:b:c" in labels
    t = parse_term("a:b:(a-b)", ["a", "b", "c"])
    assert isinstance(t, ContrastTerm) and t.label == "a:b:(a-b)"
    assert t.powers == (2, 1, 0)  # the key no plain label takes; a:b, a, b are its parents
    assert t.contains(parse_term("a:b", ["a", "b", "c"]))
    with pytest.raises(ModelError, match=r"written 'a:b:\(a-b\)'"):
        parse_term("b:a:(b-a)", ["a", "b", "c"])


def test_cubic_columns_against_hand_built_ones():
    rng = np.random.default_rng(1)
    X = rng.dirichlet(np.ones(3), 12)
    M = model_matrix(X, scheffe_terms("cubic", 3, ["a", "b", "c"]))
    a, b, c = X.T
    hand = np.column_stack([a, b, c, a * b, a * c, b * c, a * b * (a - b), a * c * (a - c),
                            b * c * (b - c), a * b * c])
    np.testing.assert_allclose(M, hand, rtol=1e-14)


def test_process_crossing_labels():
    names = ["a", "b", "c", "temp"]
    lin = [t.label for t in mixture_model_terms(names, 3, "quadratic", "linear")]
    assert lin[-3:] == ["a:temp", "b:temp", "c:temp"] and len(lin) == 9
    full = [t.label for t in mixture_model_terms(names, 3, "quadratic", "full",
                                                 process_model="main")]
    assert len(full) == 12 and "a:b:temp" in full
    sq = mixture_model_terms(names, 3, "linear", "full", process_model="quadratic",
                             n_settings=[3, 3, 3, 3])
    X = np.array([[0.2, 0.3, 0.5, 0.5]])
    col = model_matrix(X, [t for t in sq if t.label == "a:temp^2"])
    np.testing.assert_allclose(col, [[0.2 * 0.25]])


@pytest.fixture(scope="module")
def demo():
    study = load_study(DEMO)
    return study, fit_study(study)


FLOURS = ["rice_flour", "sorghum_flour", "tapioca_starch"]


def _process_columns(runs) -> dict:
    """The demo's process columns: bake temperature coded -1..+1, and the hydrocolloid's
    sum-to-zero columns (+1 at the level, -1 at the last level, guar; as statsmodels'
    Sum contrasts)."""
    h = runs["hydrocolloid"].to_numpy(object)
    cols = {"bake_temp": (runs["bake_temp"].to_numpy(float) - 190) / 15}
    for level in ("psyllium", "xanthan"):
        cols[f"hydrocolloid[{level}]"] = (h == level).astype(float) - (h == "guar")
    return cols


def _blend_columns(x) -> dict:
    """Scheffe quadratic blending columns of three components, by the tool's labels."""
    a, b, c = FLOURS
    return {a: x[:, 0], b: x[:, 1], c: x[:, 2], f"{a}:{b}": x[:, 0] * x[:, 1],
            f"{a}:{c}": x[:, 0] * x[:, 2], f"{b}:{c}": x[:, 1] * x[:, 2]}


def _linear_process(x, runs) -> dict:
    """Each linear blending term crossed with each process column (process = "linear")."""
    cols = _blend_columns(x)
    for name, p in _process_columns(runs).items():
        cols.update({f"{flour}:{name}": x[:, j] * p for j, flour in enumerate(FLOURS)})
    return cols


def test_pseudo_component_fit_against_statsmodels_and_proportions(demo):
    study, fit = demo
    model = fit.models["specific_volume"]
    runs = study.runs
    A = runs[FLOURS].to_numpy(float)
    lows = np.array([40, 15, 10])
    y = runs["specific_volume"].to_numpy(float)
    pseudo_cols = _linear_process((A - lows) / 35, runs)
    # 6 blending terms, 3 flours x (temperature + 2 hydrocolloid columns)
    assert sorted(model.terms_) == sorted(pseudo_cols) and len(model.terms_) == 15
    pseudo = sm.OLS(y, np.column_stack([pseudo_cols[k] for k in model.terms_])).fit()
    np.testing.assert_allclose(model.coef_, pseudo.params, rtol=1e-9)
    # the same model written in proportions of the total: fit the proportions directly
    prop_cols = _linear_process(A / 100, runs)
    props = sm.OLS(y, np.column_stack([prop_cols[k] for k in model.terms_])).fit()
    report = model.report()
    assert report["mixture_scale"] == "pseudo"
    got = report["proportion_coefficients"]
    np.testing.assert_allclose([got[k] for k in model.terms_], props.params, rtol=1e-7)


def test_reduction_never_drops_a_linear_blending_term(demo):
    study, _ = demo
    model = fit_response(study, "crust_lightness", reduce=True, alpha=0.999999)
    model_small = fit_response(study, "crust_lightness", reduce=True, alpha=1e-12)
    for m in (model, model_small):
        assert {"rice_flour", "sorghum_flour", "tapioca_starch"} <= set(m.terms_)
    assert len(model_small.terms_) < 15


def test_too_few_blends_names_how_many(write_study):
    text = (DATA / "yarn_elongation_cornell.toml").read_text().replace(
        'data = "yarn_elongation_cornell.csv"', 'data = "runs.csv"').replace(
        'model = "quadratic"', 'model = "special_cubic"')
    runs = (DATA / "yarn_elongation_cornell.csv").read_text()
    path = write_study(text, runs)
    with pytest.raises(ModelError, match=r"7 blending terms and needs at least 7 "
                                         r"different blends, but the runs hold 6"):
        fit_response(load_study(path), "elongation")


def test_fit_json_says_mixture_scale(tmp_path, capsys):
    for name in ("yarn_elongation_cornell.toml", "yarn_elongation_cornell.csv"):
        shutil.copy(DATA / name, tmp_path / name)
    assert main(["fit", str(tmp_path / "yarn_elongation_cornell.toml"), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)["responses"]["elongation"]
    assert out["mixture_scale"] == "proportion"
    assert out["model"][0] == "polyethylene" and "intercept" not in out["terms"]
    np.testing.assert_allclose(out["proportion_coefficients"]["polystyrene"], 9.4,
                               atol=1e-9)


def test_proportion_equation_identity_for_proportions():
    from tradeoff.model.scheffe import MixtureInfo

    terms = scheffe_terms("quadratic", 3, ["a", "b", "c"])
    info = MixtureInfo(components=("a", "b", "c"), lows=(0.0, 0.0, 0.0))
    eq = proportion_equation(terms, np.arange(1.0, 7.0), ["a", "b", "c"], info)
    assert list(eq.values()) == [1.0, 2.0, 3.0, 4.0, 5.0, 6.0]


def test_full_process_crossing_against_statsmodels(tmp_path):
    for name in ("flour_blend.toml", "flour_blend_runs.csv"):
        shutil.copy(DEMO.parent / name, tmp_path / name)
    path = tmp_path / "flour_blend.toml"
    path.write_text(path.read_text().replace('process = "linear"', 'process = "full"'))
    study = load_study(path)
    model = fit_response(study, "crumb_hardness")
    runs = study.runs
    z = (runs[FLOURS].to_numpy(float) - [40, 15, 10]) / 35
    # every blending term crossed with every process column (the process model 'main')
    cols = _blend_columns(z)
    for name, p in _process_columns(runs).items():
        cols.update({f"{term}:{name}": col * p for term, col in _blend_columns(z).items()})
    assert sorted(model.terms_) == sorted(cols) and len(cols) == 24
    assert "rice_flour:sorghum_flour:bake_temp" in cols
    assert "sorghum_flour:tapioca_starch:hydrocolloid[xanthan]" in cols
    res = sm.OLS(runs["crumb_hardness"].to_numpy(float),
                 np.column_stack([cols[k] for k in model.terms_])).fit()
    np.testing.assert_allclose(model.coef_, res.params, rtol=1e-8)
    np.testing.assert_allclose(model.r2_, 1 - res.ssr / res.centered_tss, rtol=1e-10)


CUBIC_STUDY = """\
[study]
name = "full cubic blend (generated for a check)"
data = "runs.csv"

[mixture]
total = 1
model = "cubic"

[[components]]
name = "a"
low = 0
high = 1

[[components]]
name = "b"
low = 0
high = 1

[[components]]
name = "c"
low = 0
high = 1

[[responses]]
name = "y"
"""


def test_full_cubic_fit_against_statsmodels_on_written_out_columns(write_study):
    # A simplex-lattice {3, 3} (10 blends, the lattice that supports the full
    # cubic) plus the three interior axial blends and a second centroid,
    # generated from a known full cubic with seeded noise. The contrast columns
    # are written here as d_ij x_i x_j (x_i - x_j), i before j (Scheffe's full
    # cubic, Cornell (2002), ch. 2, from memory), so a sign slip in the tool's
    # a:b:(a-b) column flips its coefficients against statsmodels OLS.
    third = [(1, 0, 0), (0, 1, 0), (0, 0, 1)]
    third += [(2 / 3, 1 / 3, 0), (1 / 3, 2 / 3, 0), (2 / 3, 0, 1 / 3), (1 / 3, 0, 2 / 3),
              (0, 2 / 3, 1 / 3), (0, 1 / 3, 2 / 3), (1 / 3, 1 / 3, 1 / 3),
              (2 / 3, 1 / 6, 1 / 6), (1 / 6, 2 / 3, 1 / 6), (1 / 6, 1 / 6, 2 / 3),
              (1 / 3, 1 / 3, 1 / 3)]
    P = np.array(third, dtype=float)
    a, b, c = P.T
    cols = np.column_stack([a, b, c, a * b, a * c, b * c, a * b * (a - b),
                            a * c * (a - c), b * c * (b - c), a * b * c])
    truth = np.array([10.0, 14.0, 8.0, 6.0, -4.0, 3.0, 9.0, -7.0, 5.0, 20.0])
    y = cols @ truth + np.random.default_rng(7).normal(0, 0.2, len(P))
    rows = ["run,a,b,c,y"] + [
        f"{i + 1},{float(p[0])!r},{float(p[1])!r},{float(1 - p[0] - p[1])!r},{float(v)!r}"
        for i, (p, v) in enumerate(zip(P, y))]
    study = load_study(write_study(CUBIC_STUDY, "\n".join(rows) + "\n"))
    model = fit_response(study, "y")
    assert model.terms_ == ["a", "b", "c", "a:b", "a:c", "b:c", "a:b:(a-b)", "a:c:(a-c)",
                            "b:c:(b-c)", "a:b:c"]
    res = sm.OLS(y, cols).fit()
    np.testing.assert_allclose(model.coef_, res.params, rtol=1e-8, atol=1e-9)
    np.testing.assert_allclose(model.std_errors_, res.bse, rtol=1e-8)
    assert model.residual_df_ == int(res.df_resid) == 4
    # the contrast coefficients keep the signs they were generated with
    assert np.sign(model.coef_[6:9]).tolist() == [1.0, -1.0, 1.0]
    probe = np.array([[0.5, 0.3, 0.2], [0.1, 0.2, 0.7]])
    pa, pb, pc = probe.T
    hand = np.column_stack([pa, pb, pc, pa * pb, pa * pc, pb * pc, pa * pb * (pa - pb),
                            pa * pc * (pa - pc), pb * pc * (pb - pc), pa * pb * pc])
    np.testing.assert_allclose(model.predict(probe), hand @ res.params, rtol=1e-9)
