"""Cross-validated model comparison against statsmodels and a manual loop."""
from __future__ import annotations

import numpy as np
import pytest

from conftest import DEMO, PEAKED_STUDY, peaked_runs
from tradeoff.errors import ModelError
from tradeoff.model.compare import (compare_models, compare_response, cv_predictions,
                                    cv_scores)
from tradeoff.model.fit import ResponseModel
from tradeoff.model.smooth import SmoothModel


def _load(write_study, model="interactions", runs=None):
    from tradeoff import load_study

    return load_study(write_study(PEAKED_STUDY.format(model=model),
                                  peaked_runs() if runs is None else runs))


def test_polynomial_leave_one_out_equals_statsmodels_press(write_study):
    # PRESS residuals e_i / (1 - h_i) from statsmodels' OLSInfluence are the
    # leave-one-out errors of a least-squares fit (Montgomery, Introduction to
    # Linear Regression Analysis, PRESS statistic).
    import statsmodels.api as sm
    from statsmodels.stats.outliers_influence import OLSInfluence

    study = _load(write_study)
    X = study.coded().to_numpy()
    y = study.runs["liking"].to_numpy(float)
    pred, method = cv_predictions(
        lambda: ResponseModel(terms="quadratic", factor_names=["sugar", "acid"]), X, y)
    assert method == "leave-one-out"
    a, b = X[:, 0], X[:, 1]
    M = np.column_stack([np.ones_like(a), a, b, a * b, a ** 2, b ** 2])
    press = OLSInfluence(sm.OLS(y, M).fit()).resid_press
    np.testing.assert_allclose(y - pred, press, rtol=1e-8, atol=1e-10)
    r2, rmse = cv_scores(y, pred)
    assert r2 == pytest.approx(1 - np.sum(press ** 2) / np.sum((y - y.mean()) ** 2))
    assert rmse == pytest.approx(np.sqrt(np.mean(press ** 2)))


def test_smooth_cross_validation_is_a_refit_without_each_run(write_study):
    # A manual loop: fit without run i (from the same starting kernel), predict run i.
    study = _load(write_study)
    X = study.coded().to_numpy()[:12]
    y = study.runs["liking"].to_numpy(float)[:12]
    start = SmoothModel(factor_names=["sugar", "acid"], restarts=1).fit(X, y).kernel_

    def make():
        return SmoothModel(factor_names=["sugar", "acid"], restarts=0, kernel=start)

    pred, _ = cv_predictions(make, X, y)
    loop = [make().fit(np.delete(X, i, 0), np.delete(y, i)).predict(X[i:i + 1])[0]
            for i in range(len(y))]
    np.testing.assert_allclose(pred, loop, rtol=1e-10)


def test_on_a_peaked_response_the_smooth_model_beats_the_quadratic(write_study):
    study = _load(write_study)
    c = compare_response(study, "liking", restarts=2)
    scores = {r["model"]: r["loo_r2"] for r in c.rows}
    assert set(scores) == {"main", "interactions", "quadratic", "smooth"}
    assert scores["smooth"] > scores["quadratic"] + 0.1
    assert c.best == "smooth"
    assert c.to_list()[0]["model"] == "smooth"


def test_ten_folds_above_fifty_runs_are_seeded(write_study):
    rng = np.random.default_rng(0)
    rows = ["run,sugar,acid,liking"]
    for i in range(60):
        a, b = rng.uniform(-1, 1, 2)
        rows.append(f"{i + 1},{4 + 2 * a:.4f},{0.3 + 0.2 * b:.4f},"
                    f"{5 + a - b + rng.normal(0, 0.1):.4f}")
    study = _load(write_study, runs="\n".join(rows) + "\n")
    one = compare_response(study, "liking", seed=3, models=("main", "interactions"))
    two = compare_response(study, "liking", seed=3, models=("main", "interactions"))
    assert one.method == "10-fold"
    assert one.rows == two.rows


def test_a_constant_response_is_skipped_with_a_note(write_study):
    runs = "run,sugar,acid,liking\n" + "".join(
        f"{i},{2 + i % 3 * 2},{0.1 + i % 2 * 0.4},5\n" for i in range(1, 10))
    study = _load(write_study, runs=runs)
    comparisons, skipped = compare_models(study)
    assert comparisons == {}
    assert "is 5 in every run" in skipped["liking"]
    with pytest.raises(ModelError, match="nothing to compare"):
        compare_response(study, "liking")


def test_demo_ranks_every_model_of_every_response():
    from tradeoff import load_study

    study = load_study(DEMO)
    comparisons, skipped = compare_models(study, responses=["liking"], restarts=1)
    c = comparisons["liking"]
    rows = c.rows
    # the demo is a two-level factorial with centre points: the quadratic's three
    # squares are one column in these runs (each is 1 at every run but the centre
    # points; common practice), so it is listed last and never named best
    assert rows[-1]["model"] == "quadratic" and rows[-1]["confounded"]
    r2 = [r["loo_r2"] for r in rows[:-1]]
    assert r2 == sorted(r2, reverse=True)
    assert c.best == rows[0]["model"] != "quadratic"
    assert {r["model"] for r in rows} == {"main", "interactions", "quadratic", "smooth"}


def test_the_model_in_use_scores_what_its_fit_reports():
    # One leave-one-out R2 everywhere: the comparison's figure of each model equals
    # the predicted R2 of that model's own fit (PRESS for a polynomial, Montgomery,
    # Introduction to Linear Regression Analysis; refits without each run for a
    # smooth model), for a plain study and a blend (Scheffe terms).
    from tradeoff import load_study
    from tradeoff.model.study_fit import fit_response

    for path, name in ((DEMO, "hardness_12w"),
                       (DEMO.parent / "flour_blend.toml", "specific_volume")):
        study = load_study(path)
        c = compare_response(study, name, models=("main", "smooth"))
        scores = {r["model"]: r["loo_r2"] for r in c.rows}
        for model in ("main", "smooth"):
            fitted = fit_response(study, name, terms=model)
            assert scores[model] == pytest.approx(fitted.pred_r2_, rel=1e-9), (path, model)


def test_smooth_leave_one_out_refits_every_hyperparameter(write_study):
    # The figure a smooth fit reports is the manual loop of test_smooth_cross_
    # validation_is_a_refit_without_each_run: each run left out, refitted from the
    # whole-data kernel, predicted.
    study = _load(write_study)
    X = study.coded().to_numpy()[:14]
    y = study.runs["liking"].to_numpy(float)[:14]
    whole = SmoothModel(factor_names=["sugar", "acid"], restarts=1).fit(X, y)
    loop = np.array([SmoothModel(factor_names=["sugar", "acid"], restarts=0,
                                 kernel=whole.kernel_, refit_loo=False)
                     .fit(np.delete(X, i, 0), np.delete(y, i)).predict(X[i:i + 1])[0]
                     for i in range(len(y))])
    np.testing.assert_allclose(whole.loo_refit_, loop, rtol=1e-10)
    assert whole.loo_r2_ == pytest.approx(1 - np.sum((y - loop) ** 2)
                                          / np.sum((y - y.mean()) ** 2), rel=1e-10)
