"""Recipes side by side: every figure of a column is that recipe's own."""
from __future__ import annotations

import numpy as np
import pytest

from tradeoff import StudyError, load_study
from tradeoff.maps.recipe_compare import compare_recipes
from tradeoff.maps.tables import what_if
from tradeoff.model.study_fit import fit_study
from tradeoff.search.search import optimize
from tradeoff.study.demo import demo_study_path
from reference_desirability import d_of, goal_tables, overall


@pytest.fixture(scope="module")
def demo():
    study = load_study(demo_study_path())
    fit = fit_study(study)
    return study, fit, optimize(study, top=3, seed=study.seed, fit=fit)


def test_columns_are_their_own_recipes(demo):
    study, fit, result = demo
    recipes = {s.label: dict(s.settings) for s in result.solutions[:3]}
    table = compare_recipes(study, fit, recipes)
    assert len(recipes) >= 2
    assert list(table.columns[3:3 + len(recipes)]) == list(recipes)
    for label, settings in recipes.items():
        col = table.set_index(["part", "item"])[label]
        for f in study.factors:
            assert col[("setting", f.name)] == settings[f.name]
        # predictions and intervals: the fitted model at that recipe, alone
        pred = fit.predict(settings).set_index("response")
        for name in pred.index:
            assert col[("predicted", name)] == pytest.approx(pred.loc[name, "predicted"])
            assert col[("interval low", name)] == pytest.approx(pred.loc[name, "pi_low"])
        # each d and D from the goals as written in the study file, through the
        # published formulas (Derringer & Suich 1980; Derringer 1994) written out in
        # tests/reference_desirability.py, applied to the column's own figures
        ds, ws = [], []
        for kind, name, goal in goal_tables(study, fit):
            y = col[("predicted", name)] if kind == "response" else settings[name]
            d = float(d_of([y], goal)[0])
            assert col[("d", name)] == pytest.approx(d, abs=1e-12)
            ds.append(np.array([d]))
            ws.append(float(goal.get("weight", 1.0)))
        assert col[("D", "all goals")] == pytest.approx(float(overall(ds, ws)[0]), rel=1e-9)


def test_differences_and_the_best_are_marked(demo):
    study, fit, result = demo
    a = dict(result.solutions[0].settings)
    b = {**a, "mix_temp": a["mix_temp"] - 5}
    table = compare_recipes(study, fit, {"A": a, "B": a, "C": b}).set_index(["part", "item"])
    assert not table.loc[("setting", "protein"), "differs"]
    assert table.loc[("setting", "mix_temp"), "differs"]
    row = table.loc[("D", "all goals")]
    if row["differs"]:
        # A and B are the same recipe: a tie at the top names no single best
        assert row["best"] in ("C", "")
        assert (row["best"] == "C") == (row["C"] > row["A"])


def test_too_many_or_none(demo):
    study, fit, result = demo
    s = dict(result.solutions[0].settings)
    with pytest.raises(StudyError, match="at most 3"):
        compare_recipes(study, fit, {k: s for k in "ABCD"})
    with pytest.raises(StudyError, match="pin at least one"):
        compare_recipes(study, fit, {})
