"""Numerical robustness: tiny and huge magnitudes, nearly aliased runs, flat and single responses.

References: least squares by numpy.linalg.lstsq (an independent solver);
variance inflation factors by statsmodels' ``variance_inflation_factor``;
desirability by the published formula (Derringer & Suich 1980). That coded
units make a fit independent of the factors' units, and that rescaling a
response rescales its coefficients and leaves R2 alone, is common practice.
"""
from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np
import pytest

from tradeoff import cli
from tradeoff.errors import ModelError
from tradeoff.model.fit import ResponseModel
from tradeoff.model.study_fit import fit_response, fit_study
from tradeoff.search.search import optimize
from tradeoff.derive.load import study_from_dict

CORNERS = np.array(list(itertools.product([-1, 1], repeat=3)), float)
POINTS = np.vstack([CORNERS, np.zeros((3, 3))])
# y = 10 + 2a - 3b + ab + 0.5c plus fixed noise (seeded, drawn once)
NOISE = np.random.default_rng(7).normal(0, 0.3, len(POINTS))
Y = 10 + 2 * POINTS[:, 0] - 3 * POINTS[:, 1] + POINTS[:, 0] * POINTS[:, 1] \
    + 0.5 * POINTS[:, 2] + NOISE


def _study(factor_scale=1.0, response_scale=1.0, y=Y, responses=None, model="interactions"):
    low, high = 1.0 * factor_scale, 3.0 * factor_scale
    natural = low + (POINTS + 1) / 2 * (high - low)
    lines = ["run,a,b,c,y"] + [f"{i + 1}," + ",".join(repr(float(v)) for v in natural[i])
                               + f",{float(y[i] * response_scale)!r}"
                               for i in range(len(POINTS))]
    responses = responses or [{"name": "y", "goal": "maximize",
                               "lower": 5.0 * response_scale,
                               "upper": 20.0 * response_scale}]
    spec = {"study": {"name": "scaled", "data": "runs.csv", "model": model},
            "factors": [{"name": n, "low": low, "high": high} for n in "abc"],
            "responses": responses}
    return study_from_dict(spec, source=Path("scaled.toml"),
                           data_bytes=("\n".join(lines) + "\n").encode())


def _lstsq_interactions(y):
    F = np.column_stack([np.ones(len(POINTS)), POINTS,
                         *[POINTS[:, i] * POINTS[:, j]
                           for i, j in itertools.combinations(range(3), 2)]])
    return np.linalg.lstsq(F, y, rcond=None)[0]


@pytest.mark.parametrize("factor_scale", [1e-9, 1.0, 1e9])
@pytest.mark.parametrize("response_scale", [1e-9, 1.0, 1e9])
def test_fit_at_any_magnitude_matches_lstsq(factor_scale, response_scale):
    study = _study(factor_scale, response_scale)
    model = fit_response(study, "y")
    reference = _lstsq_interactions(Y * response_scale)
    assert np.allclose(model.coef_, reference, rtol=1e-9, atol=1e-12 * response_scale)
    base = fit_response(_study(), "y")
    assert model.r2_ == pytest.approx(base.r2_, rel=1e-9)
    assert np.allclose(model.p_values_, base.p_values_, rtol=1e-6)
    assert not [w for w in model.warnings_ if "nearly aliased" in w]


@pytest.mark.parametrize("factor_scale, response_scale",
                         [(1e-9, 1e9), (1e9, 1e-9), (1e-9, 1e-9), (1e9, 1e9)])
def test_best_settings_at_any_magnitude(factor_scale, response_scale):
    base = optimize(_study(), top=1, seed=0, draws=2000).best
    scaled = optimize(_study(factor_scale, response_scale), top=1, seed=0, draws=2000).best
    # the same problem in coded units: the same coded answer and D
    assert scaled.coded == pytest.approx(base.coded, abs=1e-6)
    assert scaled.desirability == pytest.approx(base.desirability, abs=1e-9)
    for name, value in base.settings.items():
        low = 1.0 * factor_scale
        expected = low + (base.coded[name] + 1) / 2 * 2.0 * factor_scale
        assert scaled.settings[name] == pytest.approx(expected, rel=1e-9)
    # independent check: the fitted interaction model is bilinear in a and b,
    # so its maximum over the box is at a corner; D is the published ramp
    coef = _lstsq_interactions(Y)
    best = max((coef @ np.r_[1, x, x[0] * x[1], x[0] * x[2], x[1] * x[2]], tuple(x))
               for x in CORNERS)
    assert tuple(base.coded[n] for n in "abc") == pytest.approx(best[1], abs=1e-6)
    assert base.desirability == pytest.approx(min(1, (best[0] - 5) / 15), rel=1e-9)


def test_a_single_response_study_is_searched():
    study = _study()
    assert study.response_names == ["y"]
    result = optimize(study, top=3, seed=0, draws=2000)
    assert result.best.predictions["y"] == pytest.approx(
        max(_lstsq_interactions(Y) @ np.r_[1, x, x[0] * x[1], x[0] * x[2], x[1] * x[2]]
            for x in CORNERS), rel=1e-9)


def test_nearly_aliased_factors_are_warned_with_their_variance_inflation():
    from statsmodels.stats.outliers_influence import variance_inflation_factor

    X = POINTS.copy()
    X[:, 1] = X[:, 0]
    X[0, 1] += 0.2  # b follows a except in one run
    model = ResponseModel(terms="main", factor_names=list("abc")).fit(X, Y)
    exog = np.column_stack([np.ones(len(X)), X])
    vif = {n: variance_inflation_factor(exog, j + 1) for j, n in enumerate("abc")}
    assert vif["a"] > 10 and vif["b"] > 10 and vif["c"] < 10
    notes = [w for w in model.warnings_ if "nearly aliased" in w]
    assert len(notes) == 2
    for note, name in zip(notes, "ab"):
        assert note.startswith(f"term '{name}' is nearly aliased with other terms in these "
                               f"runs (variance inflation {vif[name]:.3g}, above 10)")
    # an orthogonal design has every VIF 1 and gets no such warning
    clean = ResponseModel(terms="interactions", factor_names=list("abc")).fit(POINTS, Y)
    assert not [w for w in clean.warnings_ if "nearly aliased" in w]


def test_exactly_aliased_factors_keep_one_term():
    X = POINTS.copy()
    X[:, 1] = X[:, 0]
    model = ResponseModel(terms="main", factor_names=list("abc")).fit(X, Y)
    assert model.terms_ == ["intercept", "a", "c"]
    assert any("term 'b' cannot be told apart from a" in w for w in model.warnings_)
    reference = np.linalg.lstsq(np.column_stack([np.ones(len(X)), X[:, [0, 2]]]), Y,
                                rcond=None)[0]
    assert np.allclose(model.coef_, reference, rtol=1e-9)


def test_a_response_with_no_variation_is_refused_clearly(tmp_path, capsys):
    flat = _study(y=np.full(len(POINTS), 5.0))
    with pytest.raises(ModelError, match=r"^response 'y' is 5 in every run: there is "
                                         r"nothing to model"):
        fit_response(flat, "y")
    # next to a response that varies, the flat one is skipped with its reason
    both = _study(responses=[{"name": "y", "goal": "maximize", "lower": 5.0, "upper": 20.0}])
    runs = both.runs.assign(flat=5.0)
    spec = {**both.spec, "responses": both.spec["responses"] + [{"name": "flat"}]}
    csv = runs.to_csv(index=False).encode()
    study = study_from_dict(spec, source=Path("s.toml"), data_bytes=csv)
    fit = fit_study(study)
    assert list(fit.models) == ["y"]
    assert "is 5 in every run" in fit.skipped["flat"]
    # the command line: one line, exit 2
    (tmp_path / "study.toml").write_text(
        '[study]\ndata = "runs.csv"\n[[factors]]\nname = "a"\nlow = 1\nhigh = 3\n'
        '[[responses]]\nname = "y"\n')
    (tmp_path / "runs.csv").write_text("a,y\n1,5\n3,5\n2,5\n")
    assert cli.main(["fit", str(tmp_path / "study.toml")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1
    assert err.startswith("error: no response could be modelled: response 'y' is 5 in "
                          "every run")
