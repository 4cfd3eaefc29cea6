"""Tables behind the workbench's pictures, checked against independent computations."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from tradeoff import StudyError, load_study
from tradeoff.maps.tables import desirability_curves, interaction_means, runs_table

from conftest import DEMO
from reference_desirability import d_of, overall


@pytest.fixture(scope="module")
def demo():
    return load_study(DEMO)


def test_runs_table_coded_values(demo):
    table = runs_table(demo)
    raw = pd.read_csv(DEMO.parent / "snack_bar_runs.csv")
    # Coded units: (x - centre) / half-range (common practice)
    expected = (raw["protein"].to_numpy() - 25.0) / 5.0
    assert np.allclose(table["protein coded"], expected)
    assert np.allclose(table["mix_temp coded"], (raw["mix_temp"] - 50.0) / 10.0)
    assert list(table["binder coded"]) == [-1.0 if b == "rice syrup" else 1.0
                                           for b in raw["binder"]]
    assert not table["outside"].any() and (table["marks"] == "").all()


def test_runs_outside_the_box_and_blanks_are_marked(write_study):
    runs = ("run,protein,binder,hardness\n1,20,rice syrup,18.5\n2,30,rice syrup,\n"
            "3,20,date paste,16.0\n4,32.5,date paste,24.5\n5,25,date paste,21.0\n")
    study = load_study(write_study(runs=runs))
    table = runs_table(study)
    assert list(table["outside"]) == [False, False, False, True, False]
    assert table.loc[5, "marks"] == "outside the tested box in protein (coded +1.50)"
    assert table.loc[3, "marks"] == "hardness blank"


def test_desirability_curve_follows_the_published_formula(demo):
    curves = desirability_curves(demo)
    liking = curves[curves["name"] == "liking"]
    # Derringer & Suich (1980) one-sided: d = ((y - L) / (U - L))**r, here r = 1
    inside = liking[(liking.value > 6) & (liking.value < 7.5)]
    assert np.allclose(inside["desirability"], (inside["value"] - 6) / 1.5)
    assert (liking[liking.value <= 6]["desirability"] == 0).all()
    assert (liking[liking.value >= 7.5]["desirability"] == 1).all()
    fresh = curves[curves["name"] == "hardness_fresh"].set_index("value")["desirability"]
    assert fresh[17.0] == 1.0 and fresh[12.0] == 0.0 and fresh[24.0] == 0.0
    # the factor goal (protein, maximize 20..30) is drawn too
    assert set(curves["name"]) == {"hardness_fresh", "hardness_12w", "water_activity",
                                   "liking", "cost", "protein"}


def test_interaction_means_match_a_groupby(demo):
    cells = interaction_means(demo, "liking", "protein", "binder")
    raw = pd.read_csv(DEMO.parent / "snack_bar_runs.csv")
    corner = raw[raw["protein"] != 25]
    expected = corner.groupby(["protein", "binder"])["liking"].mean()
    got = cells.set_index(["a_level", "b_level"])["mean"]
    for (p, b), value in expected.items():
        assert got[(p, b)] == pytest.approx(value)
    assert list(cells["runs"]) == [4, 4, 4, 4]
    with pytest.raises(StudyError, match="needs two different factors"):
        interaction_means(demo, "liking", "protein", "protein")


# --------------------------------------------------------------------------
# Fitted-model tables, checked against statsmodels (reference library)

@pytest.fixture(scope="module")
def fitted(demo):
    from tradeoff.model.study_fit import fit_study

    return fit_study(demo)


def _ols(demo, response):
    """The same two-factor-interaction model fitted by statsmodels on coded columns."""
    import statsmodels.formula.api as sm
    frame = demo.coded().copy()
    frame["y"] = demo.runs[response].to_numpy(float)
    formula = "y ~ (protein + glycerol + binder + mix_temp) ** 2"
    return sm.ols(formula, data=frame).fit()


def test_effect_table_matches_statsmodels(demo, fitted):
    from tradeoff.maps.tables import effect_table

    ols = _ols(demo, "liking")
    table = effect_table(fitted.models["liking"]).set_index("term")
    # effect = 2 * coefficient in coded units (Box, Hunter & Hunter 2005, ch. 5)
    for term in ("protein", "binder", "glycerol:mix_temp"):
        assert table.at[term, "effect"] == pytest.approx(2 * ols.params[term], rel=1e-9)
        assert table.at[term, "p_value"] == pytest.approx(ols.pvalues[term], rel=1e-6)
    sizes = table["effect"].abs().to_numpy()
    assert (np.diff(sizes) <= 0).all()  # largest first


def test_contour_grid_matches_statsmodels_and_the_desirability_formula(demo, fitted):
    from tradeoff.maps.tables import contour_grid

    held = {"binder": "date paste", "mix_temp": 55.0}
    grid = contour_grid(demo, fitted, "protein", "glycerol", held, n=5)
    assert len(grid) == 25
    assert sorted(grid["x"].unique()) == pytest.approx([20, 22.5, 25, 27.5, 30])
    coded = pd.DataFrame({"protein": (grid["x"] - 25) / 5, "glycerol": (grid["y"] - 7) / 3,
                          "binder": 1.0, "mix_temp": 0.5})
    for response in ("liking", "cost"):
        ref = _ols(demo, response).predict(coded)
        assert np.allclose(grid[response], ref, rtol=1e-9)
    # D: weighted geometric mean (Derringer 1994) of the individual desirabilities
    # (Derringer & Suich 1980), both written out in tests/reference_desirability.py,
    # with the goals as the study file states them
    tables = {t["name"]: t for t in demo.spec["responses"] + demo.spec["factors"]}
    parts, weights = [], []
    for r in demo.responses:
        parts.append(d_of(grid[r.name].to_numpy(), tables[r.name]))
        weights.append(tables[r.name].get("weight", 1.0))
    parts.append(d_of(grid["x"].to_numpy(), tables["protein"]))
    weights.append(0.5)
    assert np.allclose(grid["D"], overall(parts, weights), atol=1e-12)
    within = np.ones(25, dtype=bool)
    for r in demo.responses:
        g, v = r.goal, grid[r.name]
        if g.kind == "maximize":
            within &= v >= g.lower
        elif g.kind == "minimize":
            within &= v <= g.upper
        else:
            within &= (v >= g.lower) & (v <= g.upper)
    assert (grid["within_limits"] == within).all()
    assert grid["allowed"].all() and (grid["feasible"] == within).all()


def test_contour_grid_errors(demo, fitted):
    from tradeoff.maps.tables import contour_grid

    with pytest.raises(StudyError, match="factor 'binder' is categorical"):
        contour_grid(demo, fitted, "protein", "binder", {"glycerol": 7, "mix_temp": 50})
    with pytest.raises(StudyError, match="no setting given for factor 'mix_temp'"):
        contour_grid(demo, fitted, "protein", "glycerol", {"binder": "rice syrup"})
    with pytest.raises(StudyError, match="two different factors"):
        contour_grid(demo, fitted, "protein", "protein", {})


def test_what_if_intervals_match_statsmodels(demo, fitted):
    from tradeoff.maps.tables import what_if

    settings = {"protein": 23.0, "glycerol": 9.0, "binder": "rice syrup", "mix_temp": 45.0}
    answer = what_if(demo, fitted, settings, draws=4000)
    row = answer.table.set_index("response").loc["hardness_12w"]
    point = pd.DataFrame({"protein": [-0.4], "glycerol": [2 / 3], "binder": [-1.0],
                          "mix_temp": [-0.5]})
    ref = _ols(demo, "hardness_12w").get_prediction(point).summary_frame(alpha=0.05)
    assert row["predicted"] == pytest.approx(ref["mean"].iloc[0], rel=1e-9)
    assert row["ci_low"] == pytest.approx(ref["mean_ci_lower"].iloc[0], rel=1e-9)
    assert row["pi_high"] == pytest.approx(ref["obs_ci_upper"].iloc[0], rel=1e-9)
    assert row["upper_limit"] == 35 and np.isnan(row["lower_limit"])
    assert 0 <= answer.chance_all <= row["chance_in_limits"] <= 1
    assert answer.outside == () and answer.allowed
    again = what_if(demo, fitted, settings, draws=4000)
    assert again.chance_all == answer.chance_all  # same seed, same answer
    far = what_if(demo, fitted, {**settings, "protein": 33.0}, draws=1000)
    assert far.outside == ("protein",)
    with pytest.raises(StudyError, match=r"no setting given for factor\(s\) \['mix_temp'\]"):
        what_if(demo, fitted, {k: v for k, v in settings.items() if k != "mix_temp"})


def test_residual_table_quantiles_and_flags(demo, fitted):
    from scipy import stats

    from tradeoff.maps.tables import residual_table

    table = residual_table(fitted.models["hardness_fresh"])
    assert len(table) == 20 and list(table["order"]) == list(range(1, 21))
    # quantiles follow the ranks of the deleted studentized residual (the plotted value)
    ordered = table.sort_values("studentized_deleted")
    expected = stats.norm.ppf((np.arange(1, 21) - 0.5) / 20)
    assert np.allclose(ordered["quantile"], expected)
    ols = _ols(demo, "hardness_fresh")
    infl = ols.get_influence()
    assert np.allclose(table["studentized"], infl.resid_studentized_internal)
    assert list(table.loc[table["flagged"], "run"]) == ["R12"]
    marks = runs_table(demo, fitted).set_index("run")["marks"]
    assert marks["R12"].startswith("unusual hardness_fresh (studentized residual -3.7")
