"""Cox-direction traces and ternary grids, checked against closed forms.

Cox's direction (Cox 1971; Cornell (2002), Experiments with Mixtures, 3rd
ed., sec. 5.8): moving component i by t changes every other component j by
-t s_j / (1 - s_i), so the others keep their ratios. For the quadratic yarn
model (tests/data, Cornell's example) at the centroid the slope of the
prediction along component 1's direction is worked by hand below.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from reference_desirability import d_of, study_D
from tradeoff import (StudyError, fit_study, load_study, mixture_effects, mixture_trace,
                      ternary_grid)

DATA = Path(__file__).resolve().parents[1] / "data"
DEMO = Path(__file__).resolve().parents[2] / "demo_data" / "flour_blend.toml"
B = [11.7, 9.4, 16.4, 19.0, 11.4, -9.6]  # the fitted yarn model, to one decimal


@pytest.fixture(scope="module")
def yarn():
    study = load_study(DATA / "yarn_elongation_cornell.toml")
    return study, fit_study(study)


def test_trace_keeps_the_others_ratios_and_spans_the_bounds(yarn):
    study, fit = yarn
    t = mixture_trace(study, fit, steps=11)
    assert list(t.columns) == ["response", "component", "deviation", "amount",
                               "proportion", "predicted", "ci_low", "ci_high",
                               "at_reference"]
    part = t[t.component == "polyethylene"]
    # from the centroid, polyethylene runs from 0 to 1 (its bounds)
    np.testing.assert_allclose([part.amount.min(), part.amount.max()], [0.0, 1.0],
                               atol=1e-12)
    ref = part[part.at_reference]
    np.testing.assert_allclose(ref.proportion, 1 / 3)


def test_cox_slope_at_the_centroid_by_hand(yarn):
    study, fit = yarn
    eff = mixture_effects(study, fit).set_index("component")
    m = fit.models["elongation"]
    b = m.coef_
    s = np.full(3, 1 / 3)
    # d/dt of y(s + t a) with a = (1, -1/2, -1/2): gradient . a (worked by hand)
    grad = np.array([b[0] + b[3] * s[1] + b[4] * s[2], b[1] + b[3] * s[0] + b[5] * s[2],
                     b[2] + b[4] * s[0] + b[5] * s[1]])
    a = np.array([1.0, -0.5, -0.5])
    np.testing.assert_allclose(eff.loc["polyethylene", "slope"], grad @ a, rtol=1e-6)
    # total effect: prediction at pure polyethylene minus at (0, 1/2, 1/2)
    total = b[0] - (b[1] / 2 + b[2] / 2 + b[5] / 4)
    np.testing.assert_allclose(eff.loc["polyethylene", "effect"], total, rtol=1e-9)


def test_ternary_grid_columns_and_values(yarn):
    study, fit = yarn
    g = ternary_grid(study, fit, steps=10)
    assert len(g) == 66
    assert list(g.columns[:4]) == ["point", "first_share", "second_share", "third_share"]
    for col in ("inside", "response", "predicted", "desirability", "D"):
        assert col in g.columns
    np.testing.assert_allclose(g[["first_share", "second_share", "third_share"]].sum(axis=1),
                               1.0)
    x = g[["polyethylene", "polystyrene", "polypropylene"]].to_numpy()
    hand = (B[0] * x[:, 0] + B[1] * x[:, 1] + B[2] * x[:, 2] + B[3] * x[:, 0] * x[:, 1]
            + B[4] * x[:, 0] * x[:, 2] + B[5] * x[:, 1] * x[:, 2])
    np.testing.assert_allclose(g.predicted, hand, atol=1e-9)
    # d and D by the published formulas written out (Derringer & Suich 1980,
    # Derringer 1994: tests/reference_desirability.py), the goal as the file says
    goal = study.spec["responses"][0]
    np.testing.assert_allclose(g.desirability, d_of(hand, goal), atol=1e-9)
    np.testing.assert_allclose(g.D, study_D(study, fit, x), atol=1e-12)
    assert 0 < g.D.max() and g.D.min() < 1  # the grid crosses the goal's limits
    assert g.inside.all()
    assert g.attrs["components"] == ("polyethylene", "polystyrene", "polypropylene")


def test_ternary_grid_marks_blends_outside_the_bounds():
    study = load_study(DEMO)
    fit = fit_study(study)
    g = ternary_grid(study, fit, steps=20, settings={"bake_temp": 205})
    assert 0 < g.inside.mean() < 1
    inside = g[g.inside]
    assert (inside.rice_flour >= 40 - 1e-9).all() and (inside.tapioca_starch <= 45 + 1e-9).all()
    assert g.D.notna().all()


def test_ternary_grid_refuses_unknown_components(yarn):
    study, fit = yarn
    with pytest.raises(StudyError, match=r"'polyethylen' is not a component.*did you mean"):
        ternary_grid(study, fit, ["polyethylen", "polystyrene", "polypropylene"])


# -- editing one component of a blend ------------------------------------------------------
def test_cox_edit_by_hand_keeps_the_total_and_the_others_ratios():
    from tradeoff.maps.mixture_tables import cox_direction, cox_edit

    study = load_study(DEMO)
    before = {"rice_flour": 40.0, "sorghum_flour": 15.0, "tapioca_starch": 45.0}
    after = cox_edit(study, before, "rice_flour", 50.0)
    # Cox's direction written out (Cornell (2002), sec. 5.8): the others share what is
    # left, x_j' = x_j (T - x_i') / (T - x_i): 15 and 45 share 50 as 15:45
    assert after == pytest.approx({"rice_flour": 50.0, "sorghum_flour": 12.5,
                                   "tapioca_starch": 37.5}, abs=1e-12)
    assert sum(after.values()) == pytest.approx(100.0, abs=1e-12)
    assert after["tapioca_starch"] / after["sorghum_flour"] == pytest.approx(45 / 15)
    # the move is along the direction the traces use: +t for rice flour, -t s_j/(1-s_i)
    s = np.array([0.40, 0.15, 0.45])
    step = np.array([after[n] - before[n] for n in before]) / 100
    np.testing.assert_allclose(step, 0.10 * cox_direction(s, 0), atol=1e-12)


def test_cox_edit_refuses_what_no_blend_of_the_total_can_hold():
    from tradeoff.maps.mixture_tables import cox_edit

    study = load_study(DEMO)
    blend = {"rice_flour": 40.0, "sorghum_flour": 15.0, "tapioca_starch": 45.0}
    with pytest.raises(StudyError, match=r"Rice flour = 110 % cannot be part of a blend "
                                         r"that totals 100 %"):
        cox_edit(study, blend, "rice_flour", 110.0)
    with pytest.raises(StudyError, match=r"fixes the blend's total at 100 %.*keep their "
                                         r"ratios"):
        cox_edit(study, blend, "rice_flour", 45.0, keep_total=False)
    # from a pure component the others share the rest in their ratios at the centre
    pure = cox_edit(study, {"rice_flour": 100.0, "sorghum_flour": 0.0,
                            "tapioca_starch": 0.0}, "rice_flour", 60.0)
    assert sum(pure.values()) == pytest.approx(100.0)
    assert pure["sorghum_flour"] > 0 and pure["tapioca_starch"] > 0


# -- effects along Cox directions, with their intervals ------------------------------------
def scheffe(p) -> np.ndarray:
    """Scheffe's quadratic model matrix in three proportions, written out (Cornell
    (2002), sec. 2.2): x1, x2, x3, x1x2, x1x3, x2x3."""
    p = np.atleast_2d(p)
    return np.column_stack([p[:, 0], p[:, 1], p[:, 2], p[:, 0] * p[:, 1],
                            p[:, 0] * p[:, 2], p[:, 1] * p[:, 2]])


def test_blend_effects_against_statsmodels_on_the_yarn_blends(yarn):
    """Each component's effect is the difference of two predicted means along its Cox
    direction through the centroid, here from the pure component (x_i = 1) to the
    blend without it (the others 1/2 each); its interval is the t interval of that
    contrast, as statsmodels' OLS t_test gives it for the Scheffe quadratic written
    out by hand (Cornell (2002), sec. 2.7 and 5.8)."""
    import statsmodels.api as sm

    from tradeoff.maps.mixture_tables import blend_effects

    study, fit = yarn
    runs = study.runs
    x = runs[["polyethylene", "polystyrene", "polypropylene"]].to_numpy(float)

    ols = sm.OLS(runs["elongation"].to_numpy(float), scheffe(x)).fit()
    table = blend_effects(study, fit, "elongation").set_index("term")
    for i, name in enumerate(["polyethylene", "polystyrene", "polypropylene"]):
        pure = np.eye(3)[i]
        without = np.where(np.arange(3) == i, 0.0, 0.5)
        c = (scheffe(pure) - scheffe(without))[0]
        test = ols.t_test(c)
        low, high = np.asarray(test.conf_int(alpha=0.05)).ravel()
        row = table.loc[name]
        assert (row.start, row.end) == pytest.approx((0.0, 1.0), abs=1e-12)
        assert row.effect == pytest.approx(float(np.ravel(test.effect)[0]), rel=1e-9)
        assert (row.ci_low, row.ci_high) == pytest.approx((low, high), rel=1e-9)
    # largest size first
    sizes = table["effect"].abs().to_numpy()
    assert (np.diff(sizes) <= 1e-12).all()


def test_blend_effects_on_a_bounded_region_against_statsmodels(tmp_path):
    """The yarn blends with every component held to 0.8 at most: each stretch then
    ends inside the simplex, where the two means share coefficients, so the
    interval needs their covariance (statsmodels' t test of the contrast)."""
    import shutil

    import statsmodels.api as sm

    from tradeoff.maps.mixture_tables import blend_effects

    text = (DATA / "yarn_elongation_cornell.toml").read_text().replace("high = 1", "high = 0.8")
    (tmp_path / "yarn.toml").write_text(text)
    shutil.copy(DATA / "yarn_elongation_cornell.csv", tmp_path)
    study = load_study(tmp_path / "yarn.toml")
    fit = fit_study(study)
    runs = study.runs
    x = runs[["polyethylene", "polystyrene", "polypropylene"]].to_numpy(float)

    ols = sm.OLS(runs["elongation"].to_numpy(float), scheffe(x)).fit()
    table = blend_effects(study, fit, "elongation").set_index("term")
    row = table.loc["polyethylene"]
    # from the centroid: polyethylene 0 (the others 1/2 each) to 0.8 (the others 0.1)
    assert (row.start, row.end) == pytest.approx((0.0, 0.8), abs=1e-12)
    c = (scheffe([0.8, 0.1, 0.1]) - scheffe([0.0, 0.5, 0.5]))[0]
    test = ols.t_test(c)
    low, high = np.asarray(test.conf_int(alpha=0.05)).ravel()
    assert row.effect == pytest.approx(float(np.ravel(test.effect)[0]), rel=1e-9)
    assert (row.ci_low, row.ci_high) == pytest.approx((low, high), rel=1e-9)


def test_blend_effects_of_the_flour_blend_stay_on_the_allowed_blends():
    from tradeoff.maps.mixture_tables import blend_effects

    study = load_study(DEMO)
    fit = fit_study(study)
    table = blend_effects(study, fit, "crumb_hardness", settings={"hydrocolloid": "guar"})
    comps = {c.name: c for c in study.factors if getattr(c, "is_component", False)}
    for _, row in table[table.kind == "component"].iterrows():
        c = comps[row.term]
        assert c.low - 1e-9 <= row.start < row.end <= c.high + 1e-9
    # the hydrocolloid goes from the level held to each other level
    hyd = table[table.term == "hydrocolloid"]
    assert set(hyd.start) == {"guar"} and set(hyd.end) == {"psyllium", "xanthan"}
    assert (table.ci_low < table.effect).all() and (table.effect < table.ci_high).all()
