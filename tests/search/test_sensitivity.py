"""The recommendation's steadiness, checked against optima worked out in closed form.

Sources:
- Overall desirability with weights, D = prod d_i ** (w_i / sum w): Derringer
  (1994), Quality Progress 27(6), 51-58 (as in tests/reference_desirability.py).
- The closed form, worked out here: on one coded factor x, d_A = (x - L) / (1 - L)
  (A = x, maximised, lower limit L, upper 1) and d_B = (1 - x) / 2 (B = -x), so
  D's x-part is w_A log(x - L) + w_B log(1 - x), greatest where
  w_A / (x - L) = w_B / (1 - x). For L = -1: x* = (w_A - w_B) / (w_A + w_B);
  for w_A = w_B and L = -1 + a: x* = a / 2.
- Binding goals by finite differences: a goal holds the optimum in place when
  its d changes to first order there (central differences of the published
  formulas, common practice); a goal whose d is flat there (saturated, or at
  its own unconstrained peak) does not.
"""
from __future__ import annotations

import json

import numpy as np
import pytest

from reference_desirability import study_d
from search_problems import known_fit
from tradeoff.derive.load import study_from_dict
from tradeoff.errors import SearchError
from tradeoff.search.sensitivity import MOVES, STILL, sensitivity


TOL = 2e-3  # coded units

# columns 1, x1, x2, x1 x2, x1^2, x2^2 (coded)
COEF = {"a": [0, 1, 0, 0, 0, 0],  # A = x1
        "b": [0, -1, 0, 0, 0, 0],  # B = -x1
        "sat": [0, 0, 1, 0, 0, 0],  # x2 >= -1 > -2: its d is 1 everywhere
        "peak": [-0.04, 0, 0.4, 0, 0, -1]}  # -(x2 - 0.2)^2: at its own peak at x2 = 0.2


def known_study(weight_a=1.0):
    spec = {"study": {"name": "two pulls"},
            "factors": [{"name": "x1", "low": 0, "high": 10, "unit": "g"},
                        {"name": "x2", "low": 0, "high": 10}],
            "responses": [
                {"name": "a", "goal": "maximize", "lower": -1, "upper": 1,
                 "weight": weight_a},
                {"name": "b", "goal": "maximize", "lower": -1, "upper": 1},
                {"name": "sat", "goal": "maximize", "lower": -3, "upper": -2},
                {"name": "peak", "goal": "maximize", "lower": -1, "upper": 0.5}]}
    study = study_from_dict(spec, with_data=False)
    return study, known_fit(study, COEF)


@pytest.fixture(scope="module")
def steady():
    study, fit = known_study()
    return study, fit, sensitivity(study, fit=fit, seed=0)


def _row(result, goal, what, new):
    ch = result.changes
    hit = ch[(ch["goal"] == goal) & (ch["what"] == what) & np.isclose(ch["new"], new)]
    assert len(hit) == 1
    return hit.iloc[0]


def test_baseline_is_the_closed_form_optimum(steady):
    _, _, s = steady
    # equal weights: x1* = 0; x2 at peak's own maximum 0.2 (worked out above)
    assert s.baseline["coded"]["x1"] == pytest.approx(0.0, abs=TOL)
    assert s.baseline["coded"]["x2"] == pytest.approx(0.2, abs=TOL)
    assert s.baseline["settings"]["x1"] == pytest.approx(5.0, abs=5 * TOL)


@pytest.mark.parametrize("weight,x_star", [(2.0, 1 / 3), (0.5, -1 / 3)])
def test_weight_moves_the_optimum_as_in_closed_form(steady, weight, x_star):
    _, _, s = steady
    row = _row(s, "a", "weight", weight)
    # x* = (w_A - w_B) / (w_A + w_B), coded (closed form above)
    # TOL: the polish stops when log D changes by less than 1e-6, which leaves a
    # smooth peak's settings within about 1e-3 coded units
    assert row["set:x1"] == pytest.approx(5 + 5 * x_star, abs=5 * TOL)
    assert row["shift:x1"] == pytest.approx(5 * x_star, abs=5 * TOL)  # real units (g)
    assert row["move"] == pytest.approx(abs(x_star), abs=TOL)  # coded units
    assert row["pred:a"] == pytest.approx(x_star, abs=TOL)  # A = x1
    assert row["pred:b"] == pytest.approx(-x_star, abs=TOL)
    # D there by the published formula: d_A^(w/(w+3)) d_B^(1/(w+3)) d_peak^(1/(w+3))
    w = weight
    d_peak = (0 + 1) / 1.5
    D = ((1 + x_star) / 2) ** (w / (w + 3)) * ((1 - x_star) / 2) ** (1 / (w + 3)) \
        * d_peak ** (1 / (w + 3))
    assert row["D"] == pytest.approx(D, rel=1e-4)


@pytest.mark.parametrize("shift", [0.2, -0.2])
def test_a_lower_limit_moves_the_optimum_as_in_closed_form(steady, shift):
    _, _, s = steady
    # A's span is 2, so 10 % of it is 0.2; equal weights: x* = a / 2 (closed form above)
    row = _row(s, "a", "lower", -1 + shift)
    assert row["set:x1"] == pytest.approx(5 + 5 * shift / 2, abs=5 * TOL)
    assert row["move"] == pytest.approx(abs(shift) / 2, abs=TOL)


def test_binding_goals_match_finite_differences(steady):
    study, fit, s = steady
    x = np.array([[s.baseline["coded"]["x1"], s.baseline["coded"]["x2"]]])
    h = 1e-4
    moving = set()
    for j in range(2):
        e = np.zeros((1, 2))
        e[0, j] = h
        names, up = study_d(study, fit, x + e)
        _, down = study_d(study, fit, x - e)
        grad = (up - down)[0] / (2 * h)
        moving |= {n for n, g in zip(names, grad) if abs(g) > 1e-3}
    assert moving == {"a", "b"}  # worked out: the two pulls; sat flat, peak at its top
    assert set(s.binding) == moving
    # the goals that do not hold it: none of their changes moves the settings
    for goal in ("sat", "peak"):
        assert (s.changes[s.changes["goal"] == goal]["move"] < STILL).all()


def test_sentence_and_json(steady):
    _, _, s = steady
    # a's weight halved or doubled and b's likewise move it by a third (closed form)
    assert s.sentence.startswith("The recommendation is sensitive: 4 of 24 changes")
    assert "limits of a and b;" in s.sentence
    data = json.loads(json.dumps(s.to_dict()))
    assert set(data) >= {"baseline", "changes", "binding", "sentence"}
    assert len(data["changes"]) == 4 * 6  # 4 goals, 2 weights + 2 limits x 2 ways
    first = data["changes"][0]
    assert set(first) >= {"goal", "what", "old", "new", "move", "D", "settings", "shift",
                          "prediction_shift"}
    big = [c for c in data["changes"] if c["move"] > MOVES]
    assert {c["goal"] for c in big} == {"a", "b"}
    text = s.text()
    assert "holding it in place" in text and "a, b" in text


def test_weight_doubled_the_same_as_a_study_written_with_it(steady):
    # the warm-started change equals a fresh search of the changed study (independent)
    _, _, s = steady
    study2, fit2 = known_study(weight_a=2.0)
    s2 = sensitivity(study2, fit=fit2, seed=0)
    row = _row(s, "a", "weight", 2.0)
    assert s2.baseline["coded"]["x1"] == pytest.approx(row["set:x1"] / 5 - 1, abs=2 * TOL)


def test_infeasible_study_is_refused():
    study, fit = known_study()
    spec = dict(study.spec)
    spec["responses"] = [dict(r) for r in spec["responses"]]
    spec["responses"][2].update(lower=5, upper=6)  # x2 <= 1: never reaches 5
    bad = study_from_dict(spec, with_data=False)
    fit.study = bad
    with pytest.raises(SearchError, match="no setting meets every goal's limits"):
        sensitivity(bad, fit=fit)


def test_cli_demo_text_and_json(capsys):
    from tradeoff.cli import main

    assert main(["optimize", "demo_data/snack_bar.toml", "--top", "2",
                 "--weights-sensitivity"]) == 0
    out = capsys.readouterr().out
    assert "How steady the recommendation is" in out
    # the goal by its label, as the study file gives it (demo_data/snack_bar.toml)
    assert "the weight of Overall liking (9-point hedonic) is doubled" in out
    assert main(["optimize", "demo_data/snack_bar.toml", "--top", "2", "--json",
                 "--weights-sensitivity"]) == 0
    data = json.loads(capsys.readouterr().out)
    sens = data["sensitivity"]
    assert sens["binding"] and sens["sentence"]
    # the baseline is the search's recommendation before rounding to lab steps
    # (glycerol's 0.1 % step is 0.05 coded units)
    for name, v in sens["baseline"]["coded"].items():
        assert v == pytest.approx(data["solutions"][0]["coded"][name], abs=STILL)
