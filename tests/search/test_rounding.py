"""Recipes a lab can make: settings rounded to each factor's step, every figure
recomputed at the rounded recipe (search/rounding.py, the `step` study-file key).

References: ordinary least squares and its prediction interval from statsmodels;
the chance of one new measurement within limits from scipy's Student t (a new
observation is mean + t_df * sqrt(se_mean^2 + s^2), Montgomery, Design and
Analysis of Experiments, sec. 10.5 (from memory)); desirabilities from the
published formulas (tests/reference_desirability.py). Studies are generated
here from seeded noise (property checks, not demo data).
"""
from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from scipy import stats

from reference_desirability import study_D
from tradeoff import StudyError, fit_study, load_study, optimize
from tradeoff.derive.load import study_from_dict
from tradeoff.study.spec import default_step
from tradeoff.study.writer import study_to_dict

STUDY = """\
[study]
name = "rounded recipes (generated)"
data = "runs.csv"
model = "quadratic"

[[factors]]
name = "sugar"
unit = "%"
low = 4
high = 10
{sugar}

[[factors]]
name = "temp"
unit = "degC"
low = 150
high = 190
{temp}

[[responses]]
name = "crisp"
goal = "target"
lower = 4
target = 6.2
upper = 8
"""


def _runs(seed: int = 3) -> str:
    rng = np.random.default_rng(seed)
    a, b = np.meshgrid([-1, -0.5, 0, 0.5, 1], [-1, -0.5, 0, 0.5, 1])
    a, b = a.ravel(), b.ravel()
    y = 6 + 1.1 * a + 0.7 * b - 0.9 * a * a - 0.6 * b * b + 0.3 * a * b \
        + rng.normal(0, 0.15, a.size)
    df = pd.DataFrame({"run": range(1, a.size + 1), "sugar": 7 + 3 * a,
                       "temp": 170 + 20 * b, "crisp": y.round(4)})
    return df.to_csv(index=False)


def _load(write_study, sugar="", temp=""):
    return load_study(write_study(STUDY.format(sugar=sugar, temp=temp), _runs()))


def test_default_step_cuts_the_range_into_20_to_200_steps():
    # common practice: a setting weighed or dialled to a round power of ten
    assert default_step(10) == pytest.approx(0.1)   # 20..30 % protein
    assert default_step(20) == pytest.approx(1.0)   # 40..60 degC
    assert default_step(6) == pytest.approx(0.1)
    assert default_step(0.5) == pytest.approx(0.01)
    for span in np.geomspace(1e-3, 1e4, 97):
        steps = span / default_step(span)
        assert 20 - 1e-9 <= steps < 200 + 1e-9
        assert math.log10(default_step(span)) == pytest.approx(
            round(math.log10(default_step(span))))


def test_settings_sit_on_their_steps_and_every_figure_is_the_rounded_recipes(write_study):
    study = _load(write_study, sugar="step = 0.25", temp="step = 5")
    fit = fit_study(study)
    result = optimize(study, fit=fit, top=3, seed=1)
    for s in result.solutions:
        assert s.settings["sugar"] / 0.25 == pytest.approx(round(s.settings["sugar"] / 0.25),
                                                           abs=1e-9)
        assert s.settings["temp"] % 5 == pytest.approx(0, abs=1e-9)
        # the unrounded optimum is within one step of the recipe shown
        assert abs(s.found_settings["sugar"] - s.settings["sugar"]) <= 0.25 + 1e-9
        assert abs(s.found_settings["temp"] - s.settings["temp"]) <= 5 + 1e-9
    best = result.best
    x = np.array([best.settings["sugar"], best.settings["temp"]])
    coded = np.array([(x[0] - 7) / 3, (x[1] - 170) / 20])
    assert [best.coded["sugar"], best.coded["temp"]] == pytest.approx(coded.tolist())
    # the prediction and its interval: statsmodels OLS at the rounded recipe
    runs = study.runs
    A = np.column_stack([(runs["sugar"] - 7) / 3, (runs["temp"] - 170) / 20])

    def design(Z):
        Z = np.atleast_2d(Z)
        return np.column_stack([np.ones(len(Z)), Z[:, 0], Z[:, 1], Z[:, 0] * Z[:, 1],
                                Z[:, 0] ** 2, Z[:, 1] ** 2])

    ols = sm.OLS(runs["crisp"].to_numpy(float), design(A)).fit()
    pred = ols.get_prediction(design(coded)).summary_frame(alpha=0.05)
    outcome = best.responses["crisp"]
    assert outcome.predicted == pytest.approx(pred["mean"].iloc[0], rel=1e-9)
    assert outcome.pi == pytest.approx((pred["obs_ci_lower"].iloc[0],
                                        pred["obs_ci_upper"].iloc[0]), rel=1e-9)
    # D at the recipe: the published formulas (Derringer & Suich 1980)
    assert best.desirability == pytest.approx(study_D(study, fit, coded[None, :])[0],
                                              abs=1e-12)
    # the chance at the recipe: one new batch ~ mean + t_df * sqrt(se^2 + s^2)
    se, s2, df = pred["mean_se"].iloc[0], ols.scale, ols.df_resid
    scale = math.sqrt(se ** 2 + s2)
    exact = (stats.t.cdf((8 - pred["mean"].iloc[0]) / scale, df)
             - stats.t.cdf((4 - pred["mean"].iloc[0]) / scale, df))
    assert best.chance_all == pytest.approx(exact, abs=4 * math.sqrt(
        exact * (1 - exact) / 20000) + 1e-4)


def test_chance_recomputed_at_the_rounded_recipe_not_at_the_optimum_found(write_study):
    # a coarse step moves the recipe visibly off the optimum; the chance and D
    # follow the recipe
    study = _load(write_study, sugar="step = 2", temp="step = 20")
    fit = fit_study(study)
    best = optimize(study, fit=fit, top=1, seed=1).best
    coded = np.array([[(best.settings["sugar"] - 7) / 3, (best.settings["temp"] - 170) / 20]])
    found = np.array([[(best.found_settings["sugar"] - 7) / 3,
                       (best.found_settings["temp"] - 170) / 20]])
    assert best.desirability == pytest.approx(study_D(study, fit, coded)[0], abs=1e-12)
    assert best.found_desirability == pytest.approx(study_D(study, fit, found)[0], abs=1e-9)
    assert best.desirability <= best.found_desirability + 1e-12
    model = fit.models["crisp"]
    assert best.predictions["crisp"] == pytest.approx(float(model.predict(coded)[0]))


def test_of_the_neighbouring_recipes_the_best_balance_is_chosen(write_study):
    # independent enumeration: every combination of the steps either side
    study = _load(write_study, sugar="step = 0.5", temp="step = 5")
    fit = fit_study(study)
    best = optimize(study, fit=fit, top=1, seed=1).best
    s0, t0 = best.found_settings["sugar"], best.found_settings["temp"]
    # the multiples either side (the range's ends 4, 10, 150, 190 are multiples too)
    corners = [(s, t) for s in {math.floor(s0 / 0.5) * 0.5, math.ceil(s0 / 0.5) * 0.5}
               for t in {math.floor(t0 / 5) * 5, math.ceil(t0 / 5) * 5}
               if 4 <= s <= 10 and 150 <= t <= 190]
    X = np.array([[(s - 7) / 3, (t - 170) / 20] for s, t in corners])
    assert best.desirability == pytest.approx(study_D(study, fit, X).max(), abs=1e-12)


def test_json_and_text_say_the_recipe_is_rounded(write_study):
    study = _load(write_study, temp="step = 5")
    result = optimize(study, top=1, seed=1)
    out = result.to_dict()
    assert out["steps"] == {"sugar": pytest.approx(0.1), "temp": 5.0}
    assert set(out["best"]["found"]) == {"settings", "desirability"}
    assert "rounded recipe" in result.text()
    assert "temp 5 degC" in result.text()


def test_a_search_range_off_the_steps_keeps_the_recipe_inside_it(write_study):
    study = _load(write_study, sugar="search = [5.03, 6.07]\nstep = 0.5")
    result = optimize(study, top=2, seed=1)
    for s in result.solutions:
        assert 5.03 - 1e-12 <= s.settings["sugar"] <= 6.07 + 1e-12
        # a multiple of the step, or an end of the range (it can be set: it was given)
        assert s.settings["sugar"] in (5.03, 5.5, 6.0, 6.07)


def test_a_rule_is_kept_after_rounding(write_study):
    text = STUDY.format(sugar="step = 1", temp="step = 10") + \
        '\n[[constraints]]\nrule = "sugar + 0.1*temp <= 25.37"\n'
    study = load_study(write_study(text, _runs()))
    for s in optimize(study, top=3, seed=1).solutions:
        assert s.settings["sugar"] + 0.1 * s.settings["temp"] <= 25.37 + 1e-9


def test_a_blend_on_its_steps_still_adds_up_to_the_total():
    # Cornell (2002): a blend's components add up to the total in every recipe
    spec = {"study": {"name": "blend (generated)"},
            "components": [{"name": "a", "low": 10, "high": 70, "step": 0.5},
                           {"name": "b", "low": 10, "high": 60},
                           {"name": "c", "low": 20, "high": 80}],
            "mixture": {"total": 100, "model": "quadratic"},
            "responses": [{"name": "y", "goal": "maximize", "lower": 0, "upper": 12}]}
    rng = np.random.default_rng(4)
    A = np.array([10, 10, 20]) + rng.dirichlet([1.5, 1.5, 1.5], 40) * 60
    A = A[A[:, 1] <= 60][:16]
    p = A / 100
    y = 8 * p[:, 0] + 5 * p[:, 1] + 3 * p[:, 2] + 9 * p[:, 0] * p[:, 1] \
        + rng.normal(0, 0.1, len(A))
    data = pd.DataFrame({"run": range(1, len(A) + 1), "a": A[:, 0], "b": A[:, 1],
                         "c": A[:, 2], "y": y}).to_csv(index=False).encode()
    spec["study"]["data"] = "runs.csv"
    study = study_from_dict(spec, source="blend.toml", data_bytes=data)
    for s in optimize(study, top=3, seed=2).solutions:
        amounts = [s.settings[n] for n in ("a", "b", "c")]
        assert sum(amounts) == pytest.approx(100, abs=1e-9)
        assert amounts[0] * 2 == pytest.approx(round(amounts[0] * 2), abs=1e-9)
        assert amounts[1] == pytest.approx(round(amounts[1]), abs=1e-9)  # default 1
        assert 10 - 1e-9 <= amounts[0] <= 70 + 1e-9


@pytest.mark.parametrize("extra, message", [
    ("step = 0", "step must be above 0"),
    ("step = 6", r"step \(6\) is not smaller than the range 4..10"),
    ("step = \"fine\"", "step must be a number"),
])
def test_a_bad_step_is_refused_in_one_line(write_study, extra, message):
    with pytest.raises(StudyError, match=message):
        _load(write_study, sugar=extra)


def test_a_step_on_a_categorical_factor_is_refused(write_study):
    text = STUDY.format(sugar="", temp="") + \
        '\n[[factors]]\nname = "oven"\nlevels = ["gas", "electric"]\nstep = 1\n'
    with pytest.raises(StudyError, match="step is for numeric factors"):
        load_study(write_study(text, _runs()))


def test_the_step_travels_when_a_study_is_written_back(write_study):
    study = _load(write_study, sugar="step = 0.25")
    assert study_to_dict(study)["factors"][0]["step"] == 0.25
    assert "step" not in study_to_dict(study)["factors"][1]
    assert study.factor("temp").lab_step == 1.0


def test_an_interval_shows_both_ends_to_the_same_decimals():
    # common practice: the two ends of an interval are read against each other
    from tradeoff.search.result import pair_text

    assert pair_text(20.0912, 26) == "20.09 .. 26.00"
    assert pair_text(0.567, 0.5914) == "0.5670 .. 0.5914"
    assert pair_text(None, 5) == ".. 5.000"
    assert pair_text(float("nan"), None) == ""
