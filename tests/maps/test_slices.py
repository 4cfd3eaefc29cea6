"""Slices through a setting and the model's interaction table, checked against
statsmodels OLS on the published tire tread compound of Derringer & Suich (1980),
Journal of Quality Technology 12(4), 214-219 (tests/data/tire_tread_1980.*;
recalled from memory, then checked: a quadratic fit of the table reproduces the
published optimum).
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from reference_desirability import study_D
from tradeoff import StudyError, load_study
from tradeoff.model.study_fit import fit_study
from tradeoff.maps.slices import model_interaction, slices

DATA = Path(__file__).resolve().parents[1] / "data"
SETTINGS = {"x1": -0.05, "x2": 0.15, "x3": -0.87}


@pytest.fixture(scope="module")
def tire():
    study = load_study(DATA / "tire_tread_1980.toml")
    return study, fit_study(study)


def _ols(response: str):
    """The full quadratic fitted by statsmodels (the reference library)."""
    import statsmodels.formula.api as sm
    runs = pd.read_csv(DATA / "tire_tread_1980.csv")
    formula = (f"{response} ~ x1 + x2 + x3 + x1:x2 + x1:x3 + x2:x3 + I(x1**2) + I(x2**2)"
               " + I(x3**2)")
    return sm.ols(formula, data=runs).fit()


def test_slice_matches_statsmodels_prediction_intervals(tire):
    study, fit = tire
    table = slices(study, SETTINGS, fit=fit, n=11)
    part = table[(table["factor"] == "x2") & (table["response"] == "y1")]
    assert len(part) == 12  # 11 points plus the held setting 0.15
    points = pd.DataFrame({"x1": SETTINGS["x1"], "x2": part["value"].to_numpy(),
                           "x3": SETTINGS["x3"]})
    frame = _ols("y1").get_prediction(points).summary_frame(alpha=0.05)
    assert np.allclose(part["predicted"], frame["mean"])
    assert np.allclose(part["pi_low"], frame["obs_ci_lower"])
    assert np.allclose(part["pi_high"], frame["obs_ci_upper"])
    # the published lower limit of the abrasion index is 120 (maximize, no upper
    # limit; Derringer & Suich 1980, from memory)
    assert (part["lower_limit"] == 120).all() and part["upper_limit"].isna().all()


def test_slice_marks_the_held_setting_and_carries_d(tire):
    study, fit = tire
    table = slices(study, SETTINGS, fit=fit, n=21)
    assert set(table["response"]) == {"y1", "y2", "y3", "y4", "D"}
    now = table[table["current"]]
    # one held point per factor and response
    assert len(now) == 3 * 5
    for f, value in SETTINGS.items():
        assert np.allclose(now[now["factor"] == f]["value"], value)
    d = table[(table["response"] == "D") & (table["factor"] == "x1")]
    X = np.column_stack([d["value"], np.full(len(d), SETTINGS["x2"]),
                         np.full(len(d), SETTINGS["x3"])])
    # D written out from the published formulas (tests/reference_desirability.py)
    assert np.allclose(d["predicted"], study_D(study, fit, X), rtol=1e-12, atol=1e-15)
    assert d["pi_low"].isna().all()


def test_slice_needs_every_setting(tire):
    study, fit = tire
    with pytest.raises(StudyError, match=r"no setting given for factor\(s\) \['x3'\]"):
        slices(study, {"x1": 0, "x2": 0}, fit=fit)


def test_model_interaction_agrees_with_the_equation(tire):
    study, fit = tire
    cells = model_interaction(study, "y2", "x1", "x3", fit=fit)
    assert list(cells["a_coded"]) == [-1, -1, 1, 1] and list(cells["b_coded"]) == [-1, 1, -1, 1]
    ols = _ols("y2")
    points = pd.DataFrame({"x1": cells["a_coded"], "x2": 0.0, "x3": cells["b_coded"]})
    frame = ols.get_prediction(points).summary_frame(alpha=0.05)
    assert np.allclose(cells["predicted"], frame["mean"])
    assert np.allclose(cells["ci_low"], frame["mean_ci_lower"])
    # the interaction contrast of the four points is the x1:x3 coefficient
    p = cells["predicted"].to_numpy()
    assert (p[3] - p[2] - p[1] + p[0]) / 4 == pytest.approx(ols.params["x1:x3"])


def test_model_interaction_with_a_categorical_factor():
    from conftest import DEMO

    study = load_study(DEMO)
    cells = model_interaction(study, "liking", "protein", "binder")
    assert list(cells["b_level"]) == ["rice syrup", "date paste"] * 2
    assert list(cells["a_level"]) == [20, 20, 30, 30]
    with pytest.raises(StudyError, match="two different factors"):
        model_interaction(study, "liking", "binder", "binder")


def test_a_blend_components_slice_keeps_the_others_ratios():
    # Cox's direction (Cox 1971; Cornell (2002), Experiments with Mixtures, 3rd
    # ed., sec. 5.8): with component i at amount x, each other component j is
    # s_j (T - x) / (1 - s_i) (closed form), so the blend adds up to the total T
    from tradeoff.study.coding import to_coded

    study = load_study(Path(__file__).resolve().parents[2] / "demo_data" / "flour_blend.toml")
    fit = fit_study(study)
    at = {"rice_flour": 40.0, "sorghum_flour": 15.0, "tapioca_starch": 45.0, "bake_temp": 205.0,
          "hydrocolloid": "xanthan"}
    table = slices(study, at, fit=fit, n=9)
    names = ["rice_flour", "sorghum_flour", "tapioca_starch"]
    shares = np.array([at[n] for n in names]) / 100.0
    for i, name in enumerate(names):
        part = table[(table["factor"] == name) & (table["response"] == "specific_volume")]
        x = part["value"].to_numpy()
        assert x.min() == pytest.approx(study.factor(name).low)
        assert x.max() == pytest.approx(study.factor(name).high)
        amounts = np.outer((100.0 - x) / (1 - shares[i]), shares)
        amounts[:, i] = x
        np.testing.assert_allclose(amounts.sum(axis=1), 100.0)
        blends = pd.DataFrame(amounts, columns=names).assign(bake_temp=205.0,
                                                             hydrocolloid="xanthan")
        expected = fit.models["specific_volume"].predict(to_coded(study.factors, blends))
        np.testing.assert_allclose(part["predicted"], expected, rtol=1e-10)
        assert part.loc[part["current"], "value"].tolist() == pytest.approx([at[name]])
    # along the hydrocolloid: one point per level, the blend and temperature held
    part = table[(table["factor"] == "hydrocolloid") & (table["response"] == "specific_volume")]
    levels = list(study.factor("hydrocolloid").levels)
    assert list(part["level"]) == levels and list(part["current"]) == [False, True, False]
    held = pd.DataFrame({**{n: at[n] for n in names}, "bake_temp": 205.0,
                         "hydrocolloid": levels})
    expected = fit.models["specific_volume"].predict(to_coded(study.factors, held))
    np.testing.assert_allclose(part["predicted"], expected, rtol=1e-10)


def test_trace_axis_is_the_move_in_coded_units_and_every_trace_meets_at_zero(tire):
    # The response trace plot (Cornell (2002), Experiments with Mixtures, sec. 5.8;
    # Myers, Montgomery & Anderson-Cook (2016), Response Surface Methodology, 4th ed.,
    # the mixture chapters; from memory): every factor's trace is drawn against its
    # move away from a reference point, so all traces cross at the reference.
    study, fit = tire
    table = slices(study, SETTINGS, fit=fit, n=11)
    for f in study.factors:
        part = table[(table["factor"] == f.name) & (table["response"] == "y1")]
        half = (f.high - f.low) / 2
        centre = (f.high + f.low) / 2
        # coded units: (x - centre) / half-range (common practice)
        np.testing.assert_allclose(part["coded"], (part["value"] - centre) / half)
        np.testing.assert_allclose(part["shift"], (part["value"] - SETTINGS[f.name]) / half)
        # along the trace, the prediction is statsmodels' at the moved setting
        moved = pd.DataFrame({**{g: SETTINGS[g] for g in SETTINGS},
                              f.name: part["value"].to_numpy()})
        np.testing.assert_allclose(part["predicted"], _ols("y1").predict(moved))
    at_zero = table[table["shift"] == 0.0]
    for response, part in at_zero.groupby("response"):
        assert len(part) == len(study.factors)  # one per factor, all at the held point
        assert part["predicted"].nunique() == 1 or np.ptp(part["predicted"]) < 1e-9
        assert part["current"].all()


def test_trace_axis_of_a_blend_component_spans_its_own_range():
    study = load_study(Path(__file__).resolve().parents[2] / "demo_data" / "flour_blend.toml")
    fit = fit_study(study)
    at = {"rice_flour": 40.0, "sorghum_flour": 15.0, "tapioca_starch": 45.0,
          "bake_temp": 205.0, "hydrocolloid": "xanthan"}
    table = slices(study, at, fit=fit, n=9)
    for name in ("rice_flour", "sorghum_flour", "tapioca_starch"):
        f = study.factor(name)
        part = table[(table["factor"] == name) & (table["response"] == "D")]
        # -1 at the component's least amount, +1 at its most (its own range)
        assert part["coded"].min() == pytest.approx(-1) and part["coded"].max() == pytest.approx(1)
        np.testing.assert_allclose(part["shift"], 2 * (part["value"] - at[name])
                                   / (f.high - f.low))
    # three levels spread evenly over -1 .. +1, in the study's order
    part = table[(table["factor"] == "hydrocolloid") & (table["response"] == "D")]
    assert list(part["coded"]) == [-1.0, 0.0, 1.0]
    assert part.loc[part["current"], "shift"].tolist() == [0.0]
