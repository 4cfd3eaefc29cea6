"""A ``derive = "panel_category"`` response: its cumulative-logit fit against
statsmodels OrderedModel, its summaries and its delta-method intervals against
an independent computation (finite differences through OrderedModel's own
parameters and covariance), and the search over it."""
from __future__ import annotations

import itertools

import numpy as np
import pytest
from scipy.special import ndtri

from tradeoff.derive.load import load_study
from tradeoff.errors import TradeoffError
from tradeoff.model.study_fit import fit_study

_CUTS = [-1.6, -0.4, 0.6, 1.7]


def _write(tmp_path, *, response: str, seed: int = 11, judges: int = 10,
           kind: str = "category") -> tuple:
    """A generated 3x3 panel study with a 1..5 category attribute 'bite' (long layout).
    Returns the study file and, per score, its coded (a, b) and the score."""
    rng = np.random.default_rng(seed)
    runs = list(itertools.product([0, 5, 10], [20, 30, 40]))
    (tmp_path / "runs.csv").write_text("run,a,b\n" + "".join(
        f"R{i},{a},{b}\n" for i, (a, b) in enumerate(runs)))
    rows, X, y = [], [], []
    for j in range(judges):
        for i, (a, b) in enumerate(runs):
            xa, xb = (a - 5) / 5, (b - 30) / 10
            score = int(np.digitize(1.1 * xa - 0.7 * xb + rng.logistic(), _CUTS) + 1)
            rows.append(f"R{i},J{j},bite,{score}\n")
            X.append([xa, xb])
            y.append(score)
    (tmp_path / "panel.csv").write_text("run,assessor,attribute,score\n" + "".join(rows))
    path = tmp_path / "s.toml"
    path.write_text(
        '[study]\ndata = "runs.csv"\nmodel = "main"\n[panel]\ndata = "panel.csv"\n'
        f'[[panel.attributes]]\nname = "bite"\nscale = [1, 5]\nkind = "{kind}"\n'
        '[[factors]]\nname = "a"\nlow = 0\nhigh = 10\n'
        '[[factors]]\nname = "b"\nlow = 20\nhigh = 40\n'
        '[[responses]]\nname = "r"\nderive = "panel_category"\nattribute = "bite"\n'
        + response)
    return path, np.array(X), np.array(y, float)


def _reference(X, y):
    # Reference library: statsmodels OrderedModel, distr="logit" (proportional odds).
    from statsmodels.miscmodels.ordinal_model import OrderedModel

    return OrderedModel(y, X, distr="logit").fit(method="bfgs", disp=False, maxiter=5000,
                                                 gtol=1e-10)


def _summary_ref(res, x, w):
    """The summary at x and its delta-method SD, by central differences of
    OrderedModel's predicted probabilities over its own parameters and covariance
    (an independent route: another parametrisation, numeric derivatives)."""
    x = np.atleast_2d(x)

    def s(params):
        return res.model.predict(params, exog=x) @ w

    p0 = np.asarray(res.params, float)
    g = np.empty((len(x), len(p0)))
    for k in range(len(p0)):
        h = 1e-5
        up, dn = p0.copy(), p0.copy()
        up[k] += h
        dn[k] -= h
        g[:, k] = (s(up) - s(dn)) / (2 * h)
    cov = np.asarray(res.cov_params(), float)
    return s(p0), np.sqrt(np.einsum("ij,jk,ik->i", g, cov, g)), res.model.predict(p0, exog=x)


def test_expected_category_effects_summary_and_intervals(tmp_path):
    path, X, y = _write(tmp_path, response='model = "main"\n')
    study = load_study(path)
    model = fit_study(study).models["r"]
    res = _reference(X, y)
    assert model.logit_.coef_ == pytest.approx(res.params[:2], abs=1e-3)
    rep = model.report()
    assert rep["model"] == "category" and [e["term"] for e in rep["effects"]] == ["a", "b"]
    assert len(rep["thresholds"]) == 4
    pts = np.array([[0.0, 0.0], [1.0, -1.0], [-0.5, 0.7]])
    w = np.arange(1.0, 6.0)
    ref, sd, probs = _summary_ref(res, pts, w)
    assert model.predict(pts) == pytest.approx(ref, abs=1e-4)
    assert model.probabilities(pts).to_numpy() == pytest.approx(probs, abs=1e-4)
    mean, se, sigma, _ = model.predictive(pts)
    assert se == pytest.approx(sd, rel=2e-3)
    assert np.diag(model.mean_covariance(pts, pts)) == pytest.approx(se ** 2, rel=1e-9)
    # a new run's panel of 10 scores: the scores' variance under the model over 10,
    # averaged over the nine runs (the module's formula, written out here)
    run_pts = np.array([[(a - 5) / 5, (b - 30) / 10] for a, b in
                        itertools.product([0, 5, 10], [20, 30, 40])])
    P = res.model.predict(res.params, exog=run_pts)
    var = P @ w ** 2 - (P @ w) ** 2
    assert sigma == pytest.approx(np.sqrt(np.mean(var / 10)), rel=1e-3)
    table = model.intervals(pts, level=0.9)
    z = ndtri(0.95)
    assert (table["ci_high"] - table["predicted"]).to_numpy() == pytest.approx(z * se, rel=1e-9)
    assert (table["pi_high"] - table["predicted"]).to_numpy() == pytest.approx(
        z * np.sqrt(se ** 2 + sigma ** 2), rel=1e-9)
    # the run values are each run's mean score
    obs = study.runs["r"].to_numpy()
    assert obs[0] == pytest.approx(y[::9].mean())


def test_top_box_is_the_percent_in_the_top_categories(tmp_path):
    path, X, y = _write(tmp_path, response='summary = "top_box"\ntop = 2\n')
    study = load_study(path)
    model = fit_study(study).models["r"]
    res = _reference(X, y)
    w = np.array([0, 0, 0, 100.0, 100.0])
    pts = np.array([[0.3, -0.2], [-1.0, 1.0]])
    ref, sd, _ = _summary_ref(res, pts, w)
    assert model.predict(pts) == pytest.approx(ref, abs=1e-3)
    assert model.predictive(pts)[1] == pytest.approx(sd, rel=2e-3)
    # the run value: percent of the run's scores at 4 or 5 (common practice: top-2 box)
    assert study.runs["r"].iloc[0] == pytest.approx(100 * np.mean(y[::9] >= 4))
    table = model.intervals(pts)
    assert ((table["pi_low"] >= 0) & (table["pi_high"] <= 100)).all()


def test_bottom_box_and_fixed_assessors(tmp_path):
    path, X, y = _write(tmp_path, response='summary = "bottom_box"\nbottom = 1\n'
                        'assessor = "fixed"\n')
    model = fit_study(load_study(path)).models["r"]
    assert model.terms_ == ["a", "b"]
    assert len(model.report()["assessors"]) == 9  # ten judges, sum to zero
    P = model.probabilities(np.zeros((1, 2))).to_numpy()
    assert model.predict(np.zeros((1, 2))) == pytest.approx(100 * P[:, 0])


def test_search_runs_over_a_category_goal(tmp_path):
    path, _, _ = _write(tmp_path, response='goal = "maximize"\nlower = 2\nupper = 4.5\n')
    from tradeoff.search.search import optimize

    study = load_study(path)
    result = optimize(study, top=2, seed=0)
    best = result.best
    model = fit_study(study).models["r"]
    # higher a and lower b raise the scores (the generating effects +1.1, -0.7)
    assert best.settings["a"] == pytest.approx(10, abs=0.5)
    assert best.settings["b"] == pytest.approx(20, abs=0.5)
    x = np.array([[(best.settings["a"] - 5) / 5, (best.settings["b"] - 30) / 10]])
    assert best.predictions["r"] == pytest.approx(float(model.predict(x)[0]), rel=1e-6)


@pytest.mark.parametrize("extra, message", [
    ('summary = "top_box"\ntop = 5\n', "top = 5 must be a whole number of categories"),
    ('summary = "middle"\n', "summary = 'middle'"),
    ('assessor = "random"\n', "assessor = 'random'"),
    ('bottom = 1\n', "bottom = ... is used with summary"),
])
def test_bad_category_options(tmp_path, extra, message):
    path, _, _ = _write(tmp_path, response=extra)
    with pytest.raises(TradeoffError, match=message):
        load_study(path)


def test_a_line_attribute_is_refused(tmp_path):
    path, _, _ = _write(tmp_path, response="", kind="line")
    with pytest.raises(TradeoffError, match="needs a category attribute"):
        load_study(path)


def test_bad_category_option_is_one_line_exit_2_files_unchanged(tmp_path, capsys):
    from tradeoff.cli.entry import main

    path, _, _ = _write(tmp_path, response='summary = "top_box"\ntop = 9\n')
    before = {p.name: p.read_bytes() for p in tmp_path.iterdir()}
    assert main(["fit", str(path)]) == 2
    err = capsys.readouterr().err.strip()
    assert err.count("\n") == 0 and "Traceback" not in err
    assert "s.toml: [[responses]] 'r': top = 9 must be a whole number" in err
    assert {p.name: p.read_bytes() for p in tmp_path.iterdir()} == before


def test_fit_prints_latent_effects_and_thresholds(tmp_path, capsys):
    from tradeoff.cli.entry import main

    path, X, y = _write(tmp_path, response='model = "main"\n')
    assert main(["fit", str(path)]) == 0
    out = capsys.readouterr().out
    res = _reference(X, y)
    assert "r: category model (cumulative logit, proportional odds) of 90 scores" in out
    line = next(s for s in out.splitlines() if s.startswith("  a "))
    assert float(line.split()[1]) == pytest.approx(res.params[0], rel=1e-3)
    assert "  1|2 " in out and "  4|5 " in out


def test_predicted_r2_leaves_each_run_out():
    """Predicted R2 of a category response: each run's mean score predicted by a
    proportional-odds fit without that run's scores (statsmodels OrderedModel, the
    reference library), 1 - PRESS / total sum of squares of the run means (the
    leave-one-out definition of Myers, Montgomery & Anderson-Cook, 2016, sec. 2.7,
    applied to run means)."""
    import tempfile
    from pathlib import Path

    with tempfile.TemporaryDirectory() as tmp:
        path, X, y = _write(Path(tmp), response='model = "main"\n')
        study = load_study(path)
        model = fit_study(study).models["r"]
        obs = study.runs["r"].to_numpy(float)
    runs = np.tile(np.arange(9), len(y) // 9)  # the scores cycle through the nine runs
    run_pts = np.array([[(a - 5) / 5, (b - 30) / 10] for a, b in
                        itertools.product([0, 5, 10], [20, 30, 40])])
    w = np.arange(1.0, 6.0)
    press = 0.0
    for r in range(9):
        res = _reference(X[runs != r], y[runs != r])
        press += (obs[r] - res.model.predict(res.params, exog=run_pts[r:r + 1])[0] @ w) ** 2
    ref = 1 - press / np.sum((obs - obs.mean()) ** 2)
    assert model.pred_r2_ == pytest.approx(ref, abs=1e-3)
    assert model.pred_r2_ < model.r2_
    assert model.report()["pred_r2"] == pytest.approx(model.pred_r2_, abs=1e-6)
