"""Batch sheets: amounts add up exactly to the batch, within one scale step of the share."""
from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from tradeoff import StudyError, load_study
from tradeoff.cautions import BLEND_CAUTION, FOOD_CAUTIONS
from tradeoff.confirm.batch_sheet import batch_sheet, largest_remainder
from tradeoff.study.demo import demo_study_path

SNACK = demo_study_path()
BLEND = SNACK.parent / "flour_blend.toml"


def test_largest_remainder_by_hand():
    # thirds of 100 g in 1 g steps: 33.33 each, floors 33+33+33 = 99, the one
    # gram left goes to the first of the equal remainders (worked by hand)
    assert largest_remainder([1, 1, 1], 100, 1).tolist() == [34, 33, 33]
    # 55.5 %, 30.25 %, 14.25 % of 500 g in 1 g steps: exact 277.5, 151.25, 71.25;
    # floors 277 + 151 + 71 = 499, the gram goes to the largest remainder (.5)
    assert largest_remainder([55.5, 30.25, 14.25], 500, 1).tolist() == [278, 151, 71]


def test_tenth_gram_steps_add_up_exactly():
    grams = largest_remainder([55.5, 30.25, 14.25], 500, 0.1)
    # 151.25 and 71.25 each lose 0.05; one tenth is left over and goes to the
    # earlier of the two equal remainders (worked by hand)
    assert grams.tolist() == [277.5, 151.3, 71.2]
    assert sum(grams) == pytest.approx(500, abs=1e-9)


@settings(max_examples=60, deadline=None, derandomize=True)
@given(st.lists(st.floats(0, 100), min_size=1, max_size=8).filter(lambda s: sum(s) > 1e-6),
       st.integers(1, 5000), st.sampled_from([0.1, 0.5, 1.0, 5.0]))
def test_sums_exact_and_within_one_step(shares, units, step):
    total = round(units * step, 10)
    grams = largest_remainder(shares, total, step)
    assert sum(grams) == pytest.approx(total, abs=step * 1e-6)
    exact = np.asarray(shares) / sum(shares) * total
    assert (np.abs(grams - exact) < step + 1e-9).all()
    # whole steps only
    assert np.allclose(np.round(grams / step), grams / step, atol=1e-6)


def test_a_batch_not_on_the_scale_is_refused():
    with pytest.raises(StudyError, match="multiple of 5"):
        largest_remainder([1, 2], 502, 5)
    with pytest.raises(StudyError, match="positive number of grams"):
        largest_remainder([1, 2], 0, 1)


def test_blend_recipe_to_grams():
    study = load_study(BLEND)
    recipe = {"rice_flour": 52.5, "sorghum_flour": 27.25, "tapioca_starch": 20.25,
              "bake_temp": 190, "hydrocolloid": "xanthan"}
    sheet = batch_sheet(study, {"best": recipe, "second": {**recipe, "rice_flour": 50,
                                                          "tapioca_starch": 22.75}},
                        batch_g=750, step_g=1, batches=2, seed=4)
    best = sheet.ingredients[sheet.ingredients.recipe == "best"]
    assert best["grams"].sum() == 750
    # 52.5 % of 750 g = 393.75 g, 27.25 % = 204.375 g, 20.25 % = 151.875 g (by
    # hand); floors 393 + 204 + 151 = 748, the 2 g left go to .875 and .75
    assert best["grams"].tolist() == [394, 204, 152]
    assert set(sheet.process.factor) == {"bake_temp", "hydrocolloid"}
    assert len(sheet.order) == 4 and sorted(sheet.order.recipe) == ["best", "best",
                                                                    "second", "second"]
    assert sheet.cautions == FOOD_CAUTIONS + (BLEND_CAUTION,)
    page = sheet.html("Batch sheet")
    assert "394" in page and FOOD_CAUTIONS[2] in page
    # same seed, same order
    again = batch_sheet(study, {"best": recipe, "second": {**recipe, "rice_flour": 50,
                                                          "tapioca_starch": 22.75}},
                        batch_g=750, step_g=1, batches=2, seed=4)
    assert again.order.equals(sheet.order)


def test_percent_factors_leave_the_rest():
    study = load_study(SNACK)
    recipe = {"protein": 25.5, "glycerol": 6.2, "binder": "date paste", "mix_temp": 45}
    sheet = batch_sheet(study, {"r": recipe}, batch_g=2000, step_g=0.5,
                        percent_factors=("protein", "glycerol"), rest="base mix")
    ing = sheet.ingredients.set_index("ingredient")
    # 25.5 % and 6.2 % of 2000 g: 510 g and 124 g; the base mix the other 1366 g
    assert ing.loc["protein", "grams"] == 510 and ing.loc["glycerol", "grams"] == 124
    assert ing.loc["base mix", "grams"] == 1366
    assert list(sheet.process.factor) == ["binder", "mix_temp"]
    with pytest.raises(StudyError, match="not a numeric factor"):
        batch_sheet(study, {"r": recipe}, batch_g=100, percent_factors=("binder",))
    with pytest.raises(StudyError, match="no setting for factor 'mix_temp'"):
        batch_sheet(study, {"r": {"protein": 25, "glycerol": 5, "binder": "date paste"}},
                    batch_g=100)


def test_batches_are_named_after_the_confirmation_runs_already_listed():
    """Each confirmation run needs its own id (the study reader refuses a repeated
    one): a new sheet's batches skip the ids the study's confirmations use."""
    from tradeoff.confirm.batch_sheet import taken_run_ids

    study = load_study(demo_study_path())
    settings = {f.name: (f.levels[0] if f.is_categorical else f.low) for f in study.factors}
    sheet = batch_sheet(study, {"A": settings}, batch_g=500.0, batches=3,
                        taken={"C1", "C3"})
    assert sorted(sheet.order["run"]) == ["C2", "C4", "C5"]
    listed = taken_run_ids(study)
    fresh = batch_sheet(study, {"A": settings}, batch_g=500.0, batches=2, taken=listed)
    assert not set(fresh.order["run"]) & listed
