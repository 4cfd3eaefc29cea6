"""The cumulative-logit (proportional-odds) model of category scores against
statsmodels OrderedModel (logit link), to 1e-3."""
from __future__ import annotations

import itertools

import numpy as np
import pytest

from tradeoff.derive.load import load_study
from tradeoff.model.panel_category import CumulativeLogit, fit_category


def _orderedmodel(X, y):
    from statsmodels.miscmodels.ordinal_model import OrderedModel

    res = OrderedModel(y, X, distr="logit").fit(method="bfgs", disp=False,
                                                 maxiter=5000, gtol=1e-10)
    p = X.shape[1]
    th = res.params[p:]
    thresholds = np.cumsum(np.concatenate([th[:1], np.exp(th[1:])]))
    return res, res.params[:p], thresholds


def _scores(seed=3, n=240):
    rng = np.random.default_rng(seed)
    X = rng.choice([-1.0, 1.0], size=(n, 2))
    X = np.column_stack([X, X[:, 0] * X[:, 1]])
    latent = X @ np.array([0.9, -0.5, 0.3]) + rng.logistic(size=n)
    y = np.digitize(latent, [-1.5, -0.3, 0.6, 1.8]) + 1  # a 1..5 category scale
    return X, y


def test_effects_and_thresholds_equal_orderedmodel():
    # Reference library: statsmodels OrderedModel, distr="logit" (proportional odds,
    # McCullagh 1980); its thresholds are a first value then log increments.
    X, y = _scores()
    ours = CumulativeLogit().fit(X, y)
    res, beta, thresholds = _orderedmodel(X, y.astype(float))
    assert ours.coef_ == pytest.approx(beta, abs=1e-3)
    assert ours.thresholds_ == pytest.approx(thresholds, abs=1e-3)
    assert ours.loglik_ == pytest.approx(res.llf, abs=1e-6)
    assert ours.se_[:3] == pytest.approx(res.bse[:3], rel=1e-3)
    probs = res.model.predict(res.params, exog=X[:5])
    assert ours.probabilities(X[:5]) == pytest.approx(probs, abs=1e-4)


def test_expected_category_and_top_box_add_up():
    X, y = _scores(seed=4)
    m = CumulativeLogit().fit(X, y)
    P = m.probabilities(X[:7])
    assert P.sum(axis=1) == pytest.approx(np.ones(7))
    assert m.expected(X[:7]) == pytest.approx(P @ np.arange(1, 6))
    assert m.top_box(X[:7], 2) == pytest.approx(P[:, 3] + P[:, 4])
    assert m.top_box(X[:7], 1, bottom=True) == pytest.approx(P[:, 0])


def test_study_category_attribute_with_assessors_fixed(tmp_path):
    # A generated 2x2 panel study with a 1..5 category attribute; OrderedModel on
    # the same coded columns plus sum-to-zero assessor columns.
    rng = np.random.default_rng(6)
    runs = list(itertools.product([0, 1], repeat=2))
    (tmp_path / "runs.csv").write_text("run,a,b\n" + "".join(
        f"R{i},{a},{b}\n" for i, (a, b) in enumerate(runs)))
    rows, X, y = [], [], []
    judges = [f"J{j}" for j in range(9)]
    shift = rng.normal(0, 0.6, 9)
    for j, judge in enumerate(judges):
        for i, (a, b) in enumerate(runs):
            for s in ("1", "2"):
                lat = 1.0 * (2 * a - 1) - 0.6 * (2 * b - 1) + shift[j] + rng.logistic()
                score = int(np.digitize(lat, [-1.5, -0.4, 0.5, 1.6]) + 1)
                rows.append(f"R{i},{judge},{s},{score}\n")
                assess = np.zeros(8)
                if j == 0:
                    assess[:] = -1
                else:
                    assess[j - 1] = 1
                X.append(np.concatenate([[2 * a - 1, 2 * b - 1], assess]))
                y.append(score)
    (tmp_path / "panel.csv").write_text("run,assessor,session,bite\n" + "".join(rows))
    (tmp_path / "s.toml").write_text(
        '[study]\ndata = "runs.csv"\nmodel = "main"\n[panel]\ndata = "panel.csv"\n'
        'layout = "wide"\n[[panel.attributes]]\nname = "bite"\nscale = [1, 5]\n'
        'kind = "category"\n[[factors]]\nname = "a"\nlow = 0\nhigh = 1\n'
        '[[factors]]\nname = "b"\nlow = 0\nhigh = 1\n'
        '[[responses]]\nname = "r"\nderive = "panel_mean"\nattribute = "bite"\n')
    model, labels = fit_category(load_study(tmp_path / "s.toml"), "bite", assessor="fixed")
    assert labels[:2] == ["a", "b"]
    _, beta, thresholds = _orderedmodel(np.array(X), np.array(y, float))
    assert model.coef_ == pytest.approx(beta, abs=1e-3)
    assert model.thresholds_ == pytest.approx(thresholds, abs=1e-3)
