"""The best-settings search.

Checks: the published Derringer & Suich (1980) optimum (also NIST/SEMATECH
e-Handbook 5.5.3.2.2; table and figures from memory, then checked) reproduced
from the data; seeded random problems against an independent exhaustive grid
plus Nelder-Mead polish written from the published desirability formulas
(tests/search_problems.py, tests/reference_desirability.py); rules,
categorical factors and the D = 0 fallback against direct grid searches.
"""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from search_problems import (d_overall_reference, dense_grid_optimum, design_matrix, known_fit,
                             random_problem)
from reference_desirability import study_D, study_d
from tradeoff import load_study, optimize, overall_desirability
from tradeoff.cli import main
from tradeoff.errors import SearchError
from tradeoff.derive.load import study_from_dict

DATA = Path(__file__).resolve().parents[1] / "data"
TIRE = DATA / "tire_tread_1980.toml"
DEMO = Path(__file__).resolve().parents[2] / "demo_data" / "snack_bar.toml"


@pytest.fixture(scope="module")
def tire_result():
    return optimize(load_study(TIRE), top=3, seed=0)


def test_published_tire_tread_optimum(tire_result):
    # Derringer & Suich (1980): x = (-0.05, 0.145, -0.868), D = 0.583;
    # predictions y1 = 129.5, y2 = 1300, y3 = 465.7, y4 = 68.0 (from memory, with
    # the table: a quadratic fit of it reproduces these to the published precision).
    best = tire_result.best
    assert best.desirability == pytest.approx(0.583, abs=0.002)
    coded = [best.coded[n] for n in ("x1", "x2", "x3")]
    assert coded == pytest.approx([-0.05, 0.145, -0.868], abs=0.02)
    assert best.predictions["y1"] == pytest.approx(129.5, abs=0.5)
    assert best.predictions["y2"] == pytest.approx(1300, abs=3)
    assert best.predictions["y3"] == pytest.approx(465.7, abs=1.0)
    assert best.predictions["y4"] == pytest.approx(68.0, abs=0.1)
    assert best.settings["x1"] == pytest.approx(best.coded["x1"])  # low/high = -1/+1


def test_result_shape(tire_result):
    r = tire_result
    assert r.solutions[0] is r.best
    assert isinstance(r.best.desirability, float)
    assert set(r.best.predictions) == {"y1", "y2", "y3", "y4"}
    out = r.best.responses["y3"]
    assert out.ci[0] < out.predicted < out.ci[1]
    assert out.pi[0] < out.ci[0] and out.pi[1] > out.ci[1]
    assert 0 <= out.chance_in_limits <= 1 and 0 <= r.best.chance_all <= 1
    assert r.best.chance_all <= min(o.chance_in_limits for o in r.best.responses.values())
    table = r.table()
    assert list(table.columns[:5]) == ["solution", "rank", "x1", "x2", "x3"]
    assert {"response", "predicted", "desirability", "ci_low", "ci_high", "pi_low",
            "pi_high", "chance_in_limits"} <= set(table.columns)
    assert len(table) == 4 * len(r.solutions)
    # y2's quadratic predicts poorly from these 20 runs (PRESS-based R2 below 0.5)
    assert any("'y2' predicts poorly" in w for w in r.warnings)
    assert any("'y2' predicts poorly" in w for w in r.to_dict()["best"]["warnings"])
    assert not any("'y2' predicts poorly" in w for w in r.best.warnings)


def test_same_seed_same_answer(tire_result):
    again = optimize(load_study(TIRE), top=3, seed=0)
    assert again.to_dict() == tire_result.to_dict()


def test_overall_desirability_helper_matches_reference():
    study = load_study(TIRE)
    from tradeoff.model.study_fit import fit_study

    fit = fit_study(study)
    X = np.random.default_rng(0).uniform(-1, 1, (50, 3))
    D, d = overall_desirability(study, fit, X)
    assert d.shape == (50, 4)
    assert D == pytest.approx(d_overall_reference(X, study, fit), abs=1e-12)


UNEQUAL = """\
[study]
name = "unequal widths"

[[factors]]
name = "a"
low = 0
high = 10

[[factors]]
name = "b"
low = -1
high = 1
goal = "target"
lower = -1
target = 0.5
upper = 1
shape_below = 2
shape_above = 0.5
weight = 0.5

[[responses]]
name = "y"
goal = "target"
lower = 2
target = 8
upper = 10
shape_below = 0.5
shape_above = 3
weight = 2

[[responses]]
name = "z"
goal = "minimize"
lower = 1
upper = 4
shape = 2
"""


class _Line:
    """A known straight line in coded units: y = c0 + c1 a + c2 b."""

    def __init__(self, *coef):
        self.coef = np.array(coef, dtype=float)

    def predict(self, X):
        X = np.atleast_2d(X)
        return self.coef[0] + X @ self.coef[1:]


def test_search_scorer_with_unequal_target_widths_and_shapes():
    # A target whose widths differ on each side (8 - 2 = 6 below, 10 - 8 = 2
    # above) with different shapes, and a factor target (1.5 below, 0.5 above):
    # swapping the widths or the shapes changes d, so the scorer must match the
    # Derringer & Suich (1980) formulas written out independently
    # (tests/reference_desirability.py), weights as Derringer (1994).
    import tomllib

    study = study_from_dict(tomllib.loads(UNEQUAL), with_data=False)
    models = {"y": _Line(6.0, 4.0, 1.0), "z": _Line(2.5, 1.0, -0.5)}
    X = np.random.default_rng(4).uniform(-1, 1, (400, 2))
    D, d = overall_desirability(study, models, X)
    names, ref = study_d(study, models, X)
    assert names == ["y", "z", "b"]
    assert np.allclose(d, ref, rtol=1e-12, atol=1e-15)
    assert np.allclose(D, study_D(study, models, X), rtol=1e-12, atol=1e-15)
    # by hand at a = 0.25, b = 0.75: y = 6 + 1 + 0.75 = 7.75, below its target:
    # ((7.75 - 2) / 6)^0.5; z = 2.5 + 0.25 - 0.375 = 2.375: ((4 - 2.375) / 3)^2;
    # b = 0.75, above its target: ((1 - 0.75) / 0.5)^0.5
    D1, d1 = overall_desirability(study, models, np.array([[0.25, 0.75]]))
    hand = [(5.75 / 6) ** 0.5, (1.625 / 3) ** 2, 0.5 ** 0.5]
    assert d1[0] == pytest.approx(hand, rel=1e-12)
    assert D1[0] == pytest.approx((hand[0] ** 2 * hand[1] * hand[2] ** 0.5) ** (1 / 3.5),
                                  rel=1e-12)


@pytest.mark.parametrize("seed, k, m, kind", [
    (101, 2, 3, "quadratic"), (102, 3, 4, "interactions"), (103, 2, 6, "quadratic"),
    (104, 4, 2, "quadratic"), (105, 3, 5, "quadratic"), (106, 6, 3, "interactions"),
    (107, 8, 2, "quadratic"),
])
def test_random_problems_match_dense_grid(seed, k, m, kind):
    # many more problems (2 to 8 factors, 2 to 6 responses) in benchmarks/bench_search.py
    study, fit = random_problem(seed, k=k, m=m, kind=kind)
    result = optimize(study, fit=fit, top=3, seed=0, draws=500)
    x = np.array([result.best.coded[f.name] for f in study.factors])
    # the reported D is the D of the reported settings (independent formula)
    assert result.best.desirability == pytest.approx(
        d_overall_reference(x[None, :], study, fit)[0], abs=1e-9)
    grid_D, _ = dense_grid_optimum(study, fit, points_per_axis={6: 7, 8: 5}.get(k))
    assert result.best.desirability >= grid_D - 1e-3
    # alternatives are distinct and not better than the best
    Ds = [s.desirability for s in result.solutions]
    assert Ds == sorted(Ds, reverse=True)


def _two_factor(extra=None, categorical=False):
    study, fit = random_problem(103, k=2, m=6, kind="quadratic")
    spec = dict(study.spec)
    if categorical:
        spec["factors"] = [spec["factors"][0], {"name": "x2", "levels": ["a", "b"]}]
    if extra:
        spec.update(extra)
    study = study_from_dict(spec, with_data=False)
    fit.study = study
    return study, fit


def _grid(n=401):
    axis = np.linspace(-1, 1, n)
    return np.array(np.meshgrid(axis, axis, indexing="ij")).reshape(2, -1).T


def test_linear_rule_is_respected_and_optimal():
    # x in natural units 0..10; rule x1 + x2 <= 9 cuts off part of the square.
    study, fit = _two_factor({"constraints": [{"rule": "x1 + x2 <= 9"}]})
    result = optimize(study, fit=fit, top=2, seed=0, draws=500)
    s = result.best.settings
    assert s["x1"] + s["x2"] <= 9 + 1e-6
    G = _grid()
    ok = (5 + 5 * G[:, 0]) + (5 + 5 * G[:, 1]) <= 9
    grid_best = d_overall_reference(G[ok], study, fit).max()
    assert result.best.desirability >= grid_best - 1e-3
    free = optimize(_two_factor()[0], fit=fit, top=1, seed=0, draws=500)
    assert result.best.desirability <= free.best.desirability + 1e-9


def test_categorical_factor_searched_over_levels():
    study, fit = _two_factor(categorical=True)
    result = optimize(study, fit=fit, top=4, seed=0, draws=500)
    assert result.best.settings["x2"] in ("a", "b")
    assert result.best.coded["x2"] in (-1, 1)
    axis = np.linspace(-1, 1, 4001)
    best = max(d_overall_reference(np.column_stack([axis, np.full_like(axis, v)]),
                                   study, fit).max() for v in (-1.0, 1.0))
    assert result.best.desirability >= best - 1e-4
    assert result.best.desirability <= best + 1e-4


def test_zero_desirability_everywhere_returns_closest_settings():
    # y1 must exceed a value its polynomial never reaches in the region: the
    # closest settings are where y1 is largest (found here on a fine grid).
    study, fit = _two_factor()
    G = _grid()
    y1 = fit.models["y1"].predict(G)
    spec = dict(study.spec)
    spec["responses"] = [dict(spec["responses"][0], goal="maximize",
                              lower=float(y1.max()) + 5, upper=float(y1.max()) + 10)]
    spec["responses"][0].pop("target", None)
    study = study_from_dict(spec, with_data=False)
    result = optimize(study, fit=fit, top=2, seed=0, draws=500)
    assert not result.feasible
    assert result.unreachable == ("y1",)
    assert result.best.desirability == 0.0 and result.best.out_of_limits == ("y1",)
    assert result.best.predictions["y1"] >= y1.max() - 1e-3
    assert "D = 0 everywhere" in result.text()


def test_rank_by_chance_orders_by_chance():
    study, fit = random_problem(105, k=3, m=5, kind="quadratic")
    result = optimize(study, fit=fit, top=4, seed=0, draws=2000, rank_by="chance")
    chances = [s.chance_all for s in result.solutions]
    assert chances == sorted(chances, reverse=True)
    assert [s.rank for s in result.solutions] == list(range(1, len(chances) + 1))


def test_demo_study_alternative_per_binder():
    # every level combination with D > 0 gets its own peak among the answers; the
    # rice-syrup peak is checked against a 41^3 grid with the binder fixed
    study = load_study(DEMO)
    from tradeoff.model.study_fit import fit_study

    fit = fit_study(study)
    result = optimize(study, fit=fit, top=3, seed=0)
    by_binder = {}
    for sol in result.solutions:
        by_binder.setdefault(sol.settings["binder"], sol.desirability)
    assert set(by_binder) == {"rice syrup", "date paste"}
    axis = np.linspace(-1, 1, 41)
    g = np.array(np.meshgrid(axis, axis, axis, indexing="ij")).reshape(3, -1).T
    for level, code in (("rice syrup", -1.0), ("date paste", 1.0)):
        X = np.column_stack([g[:, 0], g[:, 1], np.full(len(g), code), g[:, 2]])
        # D written out from the published formulas (tests/reference_desirability.py),
        # the protein goal included
        assert by_binder[level] >= study_D(study, fit, X).max() - 1e-3


def test_demo_study_edge_warning():
    result = optimize(load_study(DEMO), top=2, seed=0)
    assert result.best.settings["binder"] in ("rice syrup", "date paste")
    edges = [w for w in result.best.warnings if "edge of the searched region" in w]
    at_edge = [n for n, v in result.best.coded.items()
               if n != "binder" and abs(abs(v) - 1) < 1e-3]
    assert at_edge and len(edges) == len(at_edge)


def test_setting_outside_the_data_is_flagged(tmp_path):
    # search x1 over -3..-2 only: the tested x1 span -1.633..1.633 (axial runs)
    text = TIRE.read_text(encoding="utf-8").replace(
        'name = "x1"\nlabel = "hydrated silica level"\nlow = -1\nhigh = 1\n',
        'name = "x1"\nlabel = "hydrated silica level"\nlow = -1\nhigh = 1\n'
        'search = [-3, -2]\n')
    assert "search = [-3, -2]" in text
    (tmp_path / "t.toml").write_text(text.replace('"tire_tread_1980.csv"',
                                                  f'"{DATA / "tire_tread_1980.csv"}"'),
                                     encoding="utf-8")
    result = optimize(load_study(tmp_path / "t.toml"), top=1, seed=0)
    assert -3 - 1e-9 <= result.best.settings["x1"] <= -2 + 1e-9
    assert any("'x1' =" in w and "outside the tested settings (-1.633..1.633)" in w
               for w in result.best.warnings)


def test_errors():
    study, fit = random_problem(101, k=2, m=2, kind="quadratic")
    with pytest.raises(SearchError, match="rank_by = 'luck'"):
        optimize(study, fit=fit, rank_by="luck")
    with pytest.raises(SearchError, match="top must be"):
        optimize(study, fit=fit, top=0)
    spec = dict(study.spec)
    spec["responses"] = [{"name": r["name"]} for r in spec["responses"]]
    with pytest.raises(SearchError, match="no response or factor has a goal"):
        optimize(study_from_dict(spec, with_data=False), fit=fit)
    spec = dict(study.spec, constraints=[{"rule": "x1 + x2 >= 30"}])
    with pytest.raises(SearchError, match="no setting inside the search ranges meets"):
        optimize(study_from_dict(spec, with_data=False), fit=fit)


def test_factor_goal_takes_part():
    # a goal on a factor: minimise x1 with a weight, D must include it
    study, fit = _two_factor()
    spec = dict(study.spec)
    spec["factors"] = [dict(spec["factors"][0], goal="minimize", lower=0.0, upper=10.0),
                       spec["factors"][1]]
    study2 = study_from_dict(spec, with_data=False)
    result = optimize(study2, fit=fit, top=1, seed=0, draws=500)
    x = result.best.settings["x1"]
    assert result.best.factor_desirability["x1"] == pytest.approx((10 - x) / 10)
    # by hand: D = (prod d_i^w_i * d_x1)^(1 / (sum w_i + 1)) with d_x1 = (10 - x1)/10
    G = _grid()
    W = sum(r.get("weight", 1.0) for r in spec["responses"])
    responses_part = d_overall_reference(G, study, fit) ** W
    d_x1 = (10 - (5 + 5 * G[:, 0])) / 10
    D = (responses_part * d_x1) ** (1 / (W + 1))
    assert result.best.desirability >= D.max() - 1e-3


def test_cli_json_shape(capsys):
    assert main(["optimize", str(TIRE), "--json", "--top", "2", "--seed", "0"]) == 0
    out = json.loads(capsys.readouterr().out)
    best = out["best"]
    assert {"settings", "coded", "desirability", "responses", "chance_all",
            "warnings"} <= set(best)
    assert set(best["responses"]["y1"]) >= {"predicted", "desirability", "ci", "pi",
                                            "chance_in_limits"}
    assert len(best["responses"]["y1"]["ci"]) == 2
    assert out["solutions"][0] == best
    assert best["desirability"] == pytest.approx(0.583, abs=0.002)  # published, from memory
    assert main(["optimize", str(TIRE)]) == 0
    assert "Best settings" in capsys.readouterr().out


def test_cli_error_exit(tmp_path, capsys):
    assert main(["optimize", str(tmp_path / "missing.toml")]) == 2
    assert capsys.readouterr().err.startswith("error: ")


def test_cli_no_goal_and_rank_by_chance(write_study, capsys):
    from conftest import BASIC_STUDY

    no_goal = BASIC_STUDY.replace('goal = "minimize"\nlower = 15\nupper = 35\n', "")
    assert main(["optimize", str(write_study(no_goal))]) == 2
    assert "no response or factor has a goal" in capsys.readouterr().err
    assert main(["optimize", str(write_study()), "--json", "--rank-by", "chance"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["rank_by"] == "chance"
    chances = [s["chance_all"] for s in out["solutions"]]
    assert chances == sorted(chances, reverse=True)


def test_goal_on_a_flat_response_names_the_real_reason(write_study):
    # A response that never changes has no model (common practice: nothing to fit);
    # when it carries the only goal, the error must say so, not "no goal".
    runs = "run,protein,binder,hardness\n1,20,rice syrup,20\n2,30,rice syrup,20\n" \
           "3,20,date paste,20\n4,30,date paste,20\n"
    study = load_study(write_study(runs=runs))
    with pytest.raises(SearchError, match=r"every response with a goal lacks a model.*"
                                          r"'hardness'.*20 in every run"):
        optimize(study)


def test_results_carry_the_food_cautions(tire_result):
    # Rule of the project (common practice for food): every recommendation carries them.
    from tradeoff.cautions import FOOD_CAUTIONS

    assert tire_result.to_dict()["cautions"] == list(FOOD_CAUTIONS)
    assert "shelf-life study" in tire_result.text()


RANGE_EDGE_STUDY = """\
[study]
name = "best D on a range goal's limit (generated by tests/oracle, simulated data)"
data = "runs.csv"
model = "full"

[[factors]]
name = "sugar"
low = 18700.0
high = 20700.0
search = [18900.0, 20700.0]

[[factors]]
name = "fat"
low = 1.94
high = 11.94

[[responses]]
name = "hardness"
goal = "maximize"
lower = 99.91873394
upper = 100.1629734
shape = 2.0

[[responses]]
name = "volume"
goal = "range"
lower = 99.94401102
upper = 100.0973303
weight = 3.0

[[responses]]
name = "colour"
goal = "maximize"
lower = -6.122385225
upper = -3.303693453
shape = 3.06
weight = 2.0
"""
RANGE_EDGE_RUNS = """\
run,sugar,fat,hardness,volume,colour
R01,18700,1.94,100.0232738,99.95491789,-0.1744843763
R02,18700,11.94,99.91972159,100.1189402,-10.87490152
R03,20700,1.94,100.1484289,99.93748805,-6.165092431
R04,20700,11.94,99.97200507,100.175797,-10.65632295
R05,19700,6.94,100.0093283,100.0106224,-4.97308306
R06,19700,6.94,100.0298669,100.0024442,-4.904284225
"""


def test_a_peak_on_a_range_limit_is_kept(write_study):
    # Found by the whole-pipeline oracle (tests/oracle): here the best D lies where
    # 'volume' meets its range's lower limit. The polish once ended a hair outside
    # that limit (D = 0 there) and fell back on its unpolished start, 0.2 % below
    # the best. Reference: a dense grid of the published desirabilities
    # (Derringer & Suich 1980; Derringer 1994) over the searched region.
    study = load_study(write_study(RANGE_EDGE_STUDY, RANGE_EDGE_RUNS))
    from tradeoff.model.study_fit import fit_study

    fit = fit_study(study)
    result = optimize(study, top=3, seed=7, fit=fit)
    sugar = np.linspace(-0.8, 1.0, 361)
    fat = np.linspace(-1.0, 1.0, 401)
    grid = np.array(np.meshgrid(sugar, fat, indexing="ij")).reshape(2, -1).T
    best_grid = d_overall_reference(grid, study, fit).max()
    assert best_grid > 0.88
    assert result.best.found_desirability >= best_grid - 1e-6  # before rounding
    volume = result.best.predictions["volume"]
    assert 99.94401102 <= volume <= 100.0973303



FIVE_FLOURS_STUDY = """\
[study]
name = "peaks of very different D polished together (generated by tests/oracle, simulated)"
data = "runs.csv"
model = "quadratic"

[[factors]]
name = "sugar"
low = 0.0097
high = 0.1097

[[factors]]
name = "flour"
levels = ["rice", "spelt", "rye", "corn", "barley"]

[[responses]]
name = "volume"
goal = "target"
lower = 97.42447329
target = 100.2498595
upper = 101.1597561
shape_below = 1.94
shape_above = 3.0
weight = 2.92

[[responses]]
name = "colour"
goal = "minimize"
lower = -59.01777676
upper = -6.062604592
"""
FIVE_FLOURS_RUNS = """\
run,sugar,flour,volume,colour
R01,0.0097,rice,93.1231113,58.28065056
R02,0.0597,rice,98.69459078,-6.647724732
R03,0.1097,rice,102.2987918,-34.95737334
R04,0.0597,rice,98.81745766,5.550209348
R05,0.0097,spelt,97.15276234,32.02556061
R06,0.0597,spelt,104.1512866,-5.217927131
R07,0.1097,spelt,109.12622,-30.81405229
R08,0.0597,spelt,103.8692443,-9.116918836
R09,0.0097,rye,94.78913503,50.61184828
R10,0.0597,rye,99.61760564,10.00562127
R11,0.1097,rye,102.9744371,-22.22265332
R12,0.0597,rye,99.82593688,7.897245367
R13,0.0097,corn,92.18104935,50.72180279
R14,0.0597,corn,98.01536402,-15.30111836
R15,0.1097,corn,102.3893527,-49.36746445
R16,0.0597,corn,98.16236261,-13.75018526
R17,0.0097,barley,95.72780343,64.90045658
R18,0.0597,barley,99.54107164,16.44242676
R19,0.1097,barley,101.4310913,-1.348417357
R20,0.0597,barley,99.44620959,5.372000961
"""


def test_peaks_of_very_different_d_are_each_polished(write_study):
    # Found by the whole-pipeline oracle (sweep seed 913): three peaks (one per
    # flour) polished as one block-diagonal problem; the peak with D near 2e-4
    # stalled the shared steps, and the best peak kept its unpolished start, 5e-4
    # below the best. Reference: the published desirabilities (Derringer & Suich
    # 1980; Derringer 1994) on a fine grid of sugar for every flour.
    study = load_study(write_study(FIVE_FLOURS_STUDY, FIVE_FLOURS_RUNS))
    from tradeoff.model.study_fit import fit_study

    fit = fit_study(study)
    result = optimize(study, top=3, seed=7, fit=fit)
    sugar = np.linspace(-1.0, 1.0, 20001)
    best = max(d_overall_reference(np.column_stack([sugar, np.full_like(sugar, level)]),
                                   study, fit).max() for level in range(5))
    assert best > 0.84
    assert result.best.found_desirability >= best - 1e-6  # before rounding
    assert result.best.settings["flour"] == "corn"


def test_a_hair_wide_window_reaches_its_peak():
    # One factor x (0..10 g) whose own goal (maximize from 6 g, shape 2.36, weight 2)
    # opens where another closes (volume = -2 (x - 5), maximize from -2.06, weight 2):
    # both d's are below 1e-3 in the window 6 < x < 6.03. With a colour to keep low
    # (5 + (x - 5) / 5, minimize 0..10, shape 3) and a range goal met throughout,
    # D^6 = ((x - 6) / 3)^4.72 ((6.03 - x) / 6.03)^2 ((5 - (x - 5) / 5) / 10)^3; its
    # peak is where the derivative of log D is zero, found here with scipy's brentq.
    # The polish must take such tiny d's the whole way, not stop near the start.
    from scipy.optimize import brentq

    spec = {"study": {"name": "narrow window"},
            "factors": [{"name": "x", "low": 0, "high": 10, "unit": "g", "goal": "maximize",
                         "lower": 6.0, "upper": 9.0, "shape": 2.36, "weight": 2.0}],
            "responses": [{"name": "volume", "goal": "maximize", "lower": -2.06,
                           "upper": 10.0, "weight": 2.0},
                          {"name": "colour", "goal": "minimize", "lower": 0.0, "upper": 10.0,
                           "shape": 3.0},
                          {"name": "hard", "goal": "range", "lower": -1.0, "upper": 1.0}]}
    study = study_from_dict(spec, with_data=False)
    fit = known_fit(study, {"volume": [0.0, -10.0], "colour": [5.0, 1.0], "hard": [0.0, 0.1]},
                    kind="main")
    best = optimize(study, fit=fit, top=1, seed=0, draws=200).best

    def slope(x):  # d/dx of 6 log D
        return 4.72 / (x - 6) - 2 / (6.03 - x) - 3 * (1 / 5) / (5 - (x - 5) / 5)

    x_star = brentq(slope, 6 + 1e-9, 6.03 - 1e-9, xtol=1e-12)
    D_star = (((x_star - 6) / 3) ** 4.72 * ((-2 * (x_star - 5) + 2.06) / 12.06) ** 2
              * ((5 - (x_star - 5) / 5) / 10) ** 3) ** (1 / 6)
    assert best.settings["x"] == pytest.approx(x_star, abs=2e-4)
    assert best.desirability == pytest.approx(D_star, rel=1e-4)
