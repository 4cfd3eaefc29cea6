"""Settings that hold in production (optimize(aim="production"), --for production).

Checks against independent computations on the published tire study
(Derringer & Suich 1980, Journal of Quality Technology 12(4), 214-219; the
table recalled from memory, then checked: a quadratic fit reproduces the
published optimum):
the answer's production chance is at least that of the best-balance settings
and at least the best of a grid over the whole region scored by the same
Monte Carlo chance (common random numbers, same seed), and the stand-in chance
used by the search matches the Student t closed form for one response.
"""
from __future__ import annotations

import itertools
import json
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from tradeoff.cli import main
from tradeoff.derive.load import load_study
from tradeoff.model.study_fit import fit_study
from tradeoff.search.hold import HoldScore
from tradeoff.search.production import production_chance
from tradeoff.search.search import optimize

DATA = Path(__file__).resolve().parents[1] / "data"


def _tire(tmp_path, sd=0.3) -> Path:
    text = (DATA / "tire_tread_1980.toml").read_text(encoding="utf-8")
    for name in ("x1", "x2", "x3"):
        text = text.replace(f'name = "{name}"\n', f'name = "{name}"\nproduction_sd = {sd}\n')
    (tmp_path / "tire_tread_1980.csv").write_bytes((DATA / "tire_tread_1980.csv").read_bytes())
    path = tmp_path / "tire.toml"
    path.write_text(text, encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def held(tmp_path_factory):
    study = load_study(_tire(tmp_path_factory.mktemp("hold")))
    fit = fit_study(study)
    return study, fit, optimize(study, fit=fit, top=3, seed=0, aim="production", draws=8000)


def test_held_settings_are_at_least_as_likely_to_hold_as_the_best_balance(held):
    study, fit, result = held
    first = result.best
    balance = next(s for s in result.solutions if s.d_given_up == 0)
    assert first.chance_all_production >= balance.chance_all_production
    assert first.d_given_up == pytest.approx(balance.desirability - first.desirability)
    assert result.aim == "production"


def test_held_settings_beat_a_grid_over_the_region(held):
    # independent check: every point of a 7 x 7 x 7 grid scored by the same chance
    study, fit, result = held
    axis = np.linspace(-1, 1, 7)
    grid = np.array(list(itertools.product(axis, axis, axis)))
    on_grid = production_chance(study, dict(fit.models), grid, draws=8000, seed=0).all
    x = np.array([[result.best.coded[f] for f in ("x1", "x2", "x3")]])
    mine = production_chance(study, dict(fit.models), x, draws=8000, seed=0).all[0]
    assert mine >= on_grid.max() - 0.01


def test_stand_in_matches_the_student_t_closed_form(tmp_path):
    # one response, no spread: P(lo <= mean + t_df * sqrt(se^2 + sigma^2) <= hi)
    path = _tire(tmp_path, sd=0)
    study = load_study(path)
    fit = fit_study(study)
    model = fit.models["y3"]
    only = {"y3": model}
    score = HoldScore(study, only)
    X = np.array([[0.2, -0.1, 0.5], [0.0, 0.0, 0.0]])
    mean, se, sigma, df = model.predictive(X)
    scale = np.sqrt(se ** 2 + sigma ** 2)
    goal = study.response("y3").goal
    exact = stats.t.cdf((goal.upper - mean) / scale, df) - \
        stats.t.cdf((goal.lower - mean) / scale, df)
    assert score(X) == pytest.approx(exact, rel=1e-9)


def test_command_line_prints_held_settings_beside_the_best_balance(tmp_path, capsys):
    assert main(["optimize", str(_tire(tmp_path)), "--for", "production", "--top", "2",
                 "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["aim"] == "production"
    first, rest = out["solutions"][0], out["solutions"][1:]
    assert any(s["d_given_up"] == 0 for s in rest)
    assert first["chance_all_production"] >= max(s["chance_all_production"] for s in rest)
    assert main(["optimize", str(_tire(tmp_path)), "--for", "production", "--top", "2"]) == 0
    text = capsys.readouterr().out
    assert "Most likely to hold in production" in text and "Best balance" in text
    assert "gives up" in text


def test_pick_passes_over_failed_goals_and_sends_ties_to_d():
    # the rule as documented (common practice for Monte Carlo comparisons: differences
    # within two standard errors are not told apart)
    from tradeoff.search.hold import _pick

    # a setting with D = 0 fails some goal outright: never picked while another has D > 0
    assert _pick(np.array([0.9994, 0.9986, 0.9154]), np.array([0.0, 0.741, 0.587]),
                 1, 20000) == 1
    # clearly more likely to hold: picked although it gives up D
    assert _pick(np.array([0.95, 0.80]), np.array([0.5, 0.6]), 1, 20000) == 0
    # within the resolution of 20 000 draws: a tie, which goes to the higher D
    assert _pick(np.array([0.951, 0.950]), np.array([0.5, 0.6]), 1, 20000) == 1
