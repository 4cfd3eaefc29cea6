"""Tables behind the workbench's pictures, checked against independent computations."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from tradeoff import StudyError, load_study
from tradeoff.maps import desirability_curves, interaction_means, runs_table

from conftest import DEMO


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
