"""What-if at hand-set settings: every figure of the answer from one recipe.

The d's and D are recomputed from the published formulas written out
(Derringer & Suich (1980), Derringer (1994): tests/reference_desirability.py)
at the recipe the answer names, the predictions by the model at that recipe;
a blend off its total is the same shares scaled to the total (Cornell (2002),
Experiments with Mixtures, 3rd ed., sec. 2.1: a blend is given by its
proportions, which add up to 1).
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from reference_desirability import study_D, study_d
from tradeoff import fit_study, load_study
from tradeoff.maps.tables import what_if
from tradeoff.study.coding import to_coded

FLOUR = Path(__file__).resolve().parents[2] / "demo_data" / "flour_blend.toml"
SNACK = Path(__file__).resolve().parents[2] / "demo_data" / "snack_bar.toml"


@pytest.fixture(scope="module")
def flour():
    study = load_study(FLOUR)
    return study, fit_study(study)


def _one_recipe(study, fit, answer, draws: int) -> None:
    """Predictions, d's, D and the chance all belong to ``answer.settings``."""
    from tradeoff.search.chance import chance_in_limits

    X = to_coded(study.factors, {k: [v] for k, v in answer.settings.items()})
    table = answer.table.set_index("response")
    for name, model in fit.models.items():
        assert table.loc[name, "predicted"] == pytest.approx(float(model.predict(X)[0]),
                                                             rel=1e-12)
    names, d = study_d(study, fit, X)
    for i, name in enumerate(names):
        if name in table.index:
            assert table.loc[name, "desirability"] == pytest.approx(d[0, i], abs=1e-12)
    assert answer.desirability == pytest.approx(float(study_D(study, fit, X)[0]), abs=1e-12)
    chance = chance_in_limits(study, dict(fit.models), X, draws=draws, seed=study.seed)
    assert answer.chance_all == pytest.approx(float(chance.all[0]), abs=1e-12)


def test_a_blend_off_its_total_is_warned_and_every_figure_is_for_its_shares(flour):
    study, fit = flour
    typed = {"rice_flour": 44.0, "sorghum_flour": 16.5, "tapioca_starch": 49.5,
             "bake_temp": 191.2, "hydrocolloid": "psyllium"}
    answer = what_if(study, fit, typed, draws=3000)
    assert len(answer.notes) == 1
    assert "add up to 110 %, not the blend's total 100 %" in answer.notes[0]
    # 44 : 16.5 : 49.5 are the shares 40 : 15 : 45 of 100 (44 / 110 = 0.40 ...)
    assert {k: answer.settings[k] for k in ("rice_flour", "sorghum_flour",
                                            "tapioca_starch")} == pytest.approx(
        {"rice_flour": 40.0, "sorghum_flour": 15.0, "tapioca_starch": 45.0})
    _one_recipe(study, fit, answer, 3000)
    same = what_if(study, fit, {**typed, "rice_flour": 40.0, "sorghum_flour": 15.0,
                                "tapioca_starch": 45.0}, draws=3000)
    assert same.notes == ()
    assert same.desirability == pytest.approx(answer.desirability, abs=1e-12)


def test_a_blend_beyond_a_bound_is_outside_the_tested_range(flour):
    study, fit = flour
    answer = what_if(study, fit, {"rice_flour": 75.0, "sorghum_flour": 15.0,
                                  "tapioca_starch": 10.0, "bake_temp": 190.0,
                                  "hydrocolloid": "guar"}, draws=2000)
    assert answer.outside == ("rice_flour",)  # tested 40..70 %
    _one_recipe(study, fit, answer, 2000)


def test_what_if_without_a_blend_is_one_recipe_too():
    study = load_study(SNACK)
    fit = fit_study(study)
    settings = {f.name: (f.levels[0] if f.is_categorical else f.low + 0.3 * (f.high - f.low))
                for f in study.factors}
    answer = what_if(study, fit, settings, draws=2000)
    assert answer.notes == () and answer.settings == settings
    _one_recipe(study, fit, answer, 2000)
    assert np.isfinite(answer.desirability)
