"""Slices, interaction tables and run marks with factors of three or more levels,
checked against statsmodels OLS with sum-to-zero (``C(grain, Sum)``) contrasts,
the independent reference library, on generated studies (tests/study_kinds.py).
"""
from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import statsmodels.formula.api as smf
from scipy import stats

from tradeoff import load_study
from tradeoff.maps.slices import model_interaction, slices
from tradeoff.maps.tables import interaction_means, runs_table, what_if
from tradeoff.model.study_fit import fit_study

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
from study_kinds import write_study  # noqa: E402

FORMULA = "crunch ~ (s + f + C(grain, Sum))**2"   # the 'interactions' model


def _load(tmp_path, kind):
    path = write_study(tmp_path / kind, kind)
    study = load_study(path)
    runs = pd.read_csv(path.parent / "runs.csv")
    return study, fit_study(study), runs


def _coded_frame(runs: pd.DataFrame) -> pd.DataFrame:
    """Sugar 2..6 % and fat 5..15 % in coded units (-1..+1)."""
    return runs.assign(s=(runs["sugar"] - 4) / 2, f=(runs["fat"] - 10) / 5)


@pytest.mark.parametrize("kind", ["numeric_levels3", "numeric_levels5"])
def test_slice_along_a_level_factor_is_statsmodels_at_each_level(tmp_path, kind):
    study, fit, runs = _load(tmp_path, kind)
    levels = list(study.factor("grain").levels)
    held = {"sugar": 5.0, "fat": 8.0, "grain": levels[1]}
    table = slices(study, held, fit=fit, n=9)
    part = table[(table["factor"] == "grain") & (table["response"] == "crunch")]
    # one point per level, in the study's order, the held one marked
    assert list(part["level"]) == levels and part["value"].isna().all()
    assert list(part["current"]) == [lv == levels[1] for lv in levels]
    ref = smf.ols(FORMULA, data=_coded_frame(runs)).fit()
    points = pd.DataFrame({"s": 0.5, "f": -0.4, "grain": levels})
    frame = ref.get_prediction(points).summary_frame(alpha=0.05)
    assert np.allclose(part["predicted"], frame["mean"], rtol=1e-10)
    assert np.allclose(part["pi_low"], frame["obs_ci_lower"], rtol=1e-10)
    assert np.allclose(part["pi_high"], frame["obs_ci_upper"], rtol=1e-10)
    # along a numeric factor the level factor stays at the held level
    sugar = table[(table["factor"] == "sugar") & (table["response"] == "crunch")]
    points = pd.DataFrame({"s": (sugar["value"].to_numpy() - 4) / 2, "f": -0.4,
                           "grain": levels[1]})
    assert np.allclose(sugar["predicted"], ref.predict(points), rtol=1e-10)


def test_one_way_slice_is_the_level_means(tmp_path):
    # one factor of five levels alone, a main-effects model: each prediction is
    # the level's mean (one-way analysis of variance, common practice)
    study, fit, runs = _load(tmp_path, "levels5")
    table = slices(study, {"grain": "teff"}, fit=fit)
    part = table[table["response"] == "crunch"].set_index("level")
    means = runs.groupby("grain")["crunch"].mean()
    for level in study.factor("grain").levels:
        assert part.loc[level, "predicted"] == pytest.approx(means[level], rel=1e-12)


def test_interaction_with_a_level_factor_has_a_line_per_level(tmp_path):
    study, fit, runs = _load(tmp_path, "numeric_levels3")
    levels = list(study.factor("grain").levels)
    table = model_interaction(study, "crunch", "sugar", "grain", fit=fit)
    assert len(table) == 2 * len(levels)
    assert list(table["b_level"]) == levels * 2
    assert list(table["a_level"]) == [2.0] * 3 + [6.0] * 3
    assert list(table["b_coded"]) == [0.0, 1.0, 2.0] * 2
    ref = smf.ols(FORMULA, data=_coded_frame(runs)).fit()
    points = pd.DataFrame({"s": table["a_coded"], "f": 0.0, "grain": table["b_level"]})
    frame = ref.get_prediction(points).summary_frame(alpha=0.05)
    assert np.allclose(table["predicted"], frame["mean"], rtol=1e-10)
    assert np.allclose(table["ci_low"], frame["mean_ci_lower"], rtol=1e-10)
    assert np.allclose(table["ci_high"], frame["mean_ci_upper"], rtol=1e-10)
    # the measured means at each end of sugar and each level (centre runs left out)
    cells = interaction_means(study, "crunch", "sugar", "grain")
    ends = runs[runs["sugar"] != 4].groupby(["sugar", "grain"])["crunch"].agg(["mean", "size"])
    assert len(cells) == 6
    for _, c in cells.iterrows():
        assert c["mean"] == pytest.approx(ends.loc[(c["a_level"], c["b_level"]), "mean"])
        assert c["runs"] == ends.loc[(c["a_level"], c["b_level"]), "size"]


def test_interaction_averages_a_held_level_factor_over_its_levels(tmp_path):
    # sugar x fat with the three-level grain averaged: the prediction at the
    # average of the model rows over grain's levels (its sum-to-zero columns at
    # 0), its interval from statsmodels' covariance of the coefficients
    study, fit, runs = _load(tmp_path, "numeric_levels3")
    levels = list(study.factor("grain").levels)
    table = model_interaction(study, "crunch", "sugar", "fat", fit=fit)
    ref = smf.ols(FORMULA, data=_coded_frame(runs)).fit()
    names = list(ref.model.exog_names)
    b, V = ref.params.to_numpy(), ref.cov_params().to_numpy()
    t = stats.t.ppf(0.975, ref.df_resid)
    assert len(table) == 4
    for _, row in table.iterrows():
        s_, f_ = row["a_coded"], row["b_coded"]
        rows = []
        for lv in levels:  # statsmodels' model row at each level, written out
            x = np.zeros(len(names))
            x[names.index("Intercept")] = 1
            x[names.index("s")], x[names.index("f")], x[names.index("s:f")] = s_, f_, s_ * f_
            for other in levels[:-1]:  # sum-to-zero columns: +1 at it, -1 at the last
                code = 1.0 if lv == other else (-1.0 if lv == levels[-1] else 0.0)
                col = f"C(grain, Sum)[S.{other}]"
                x[names.index(col)] = code
                x[names.index(f"s:{col}")] = s_ * code
                x[names.index(f"f:{col}")] = f_ * code
            rows.append(x)
        X = np.array(rows)
        # each level's row reproduces statsmodels' own prediction there
        points = pd.DataFrame({"s": s_, "f": f_, "grain": levels})
        assert np.allclose(X @ b, ref.predict(points), rtol=1e-12)
        x = X.mean(axis=0)
        mean, se = float(x @ b), float(np.sqrt(x @ V @ x))
        assert row["predicted"] == pytest.approx(mean, rel=1e-10)
        assert row["ci_low"] == pytest.approx(mean - t * se, rel=1e-10)
        assert row["ci_high"] == pytest.approx(mean + t * se, rel=1e-10)


def test_a_level_is_never_outside_the_tested_box(tmp_path):
    study, fit, _ = _load(tmp_path, "numeric_levels5")
    table = runs_table(study, fit)
    assert not table["outside"].any()
    assert not table["marks"].str.contains("outside").any()
    answer = what_if(study, fit, {"sugar": 4.0, "fat": 10.0, "grain": "millet"}, draws=500)
    assert answer.outside == ()
    answer = what_if(study, fit, {"sugar": 7.0, "fat": 10.0, "grain": "millet"}, draws=500)
    assert answer.outside == ("sugar",)
