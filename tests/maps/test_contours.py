"""Contour lines and the limits map, checked against the fitted model's own predictions.

The study is the published tire tread compound of Derringer & Suich (1980),
Journal of Quality Technology 12(4), 214-219 (tests/data/tire_tread_1980.*; the
table and its goals were recalled from memory, then checked: a quadratic fit
reproduces the published optimum): a central composite design fitted with full
quadratic models.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from reference_desirability import study_D
from tradeoff import StudyError, load_study
from tradeoff.model.study_fit import fit_study
from tradeoff.maps.contours import contour_lines, held_settings, limits_map, round_levels
from tradeoff.maps.tables import contour_grid

DATA = Path(__file__).resolve().parents[1] / "data"


@pytest.fixture(scope="module")
def tire():
    study = load_study(DATA / "tire_tread_1980.toml")
    return study, fit_study(study)


def _predict(study, fit, name, x, y, px, py, fixed):
    """The model's own prediction at natural points (the independent check)."""
    held = held_settings(study, x, y, fixed)
    X = np.zeros((len(px), len(study.factors)))
    for j, f in enumerate(study.factors):
        value = px if f.name == x else py if f.name == y else held[f.name]
        X[:, j] = (np.asarray(value, float) - f.centre) / f.half_range
    return fit.models[name].predict(X)


def test_round_levels_are_round_and_inside():
    # steps of 1, 2, 2.5 or 5 times a power of ten (common practice for axis ticks)
    assert list(round_levels(0.3, 1.7)) == pytest.approx([0.4, 0.6, 0.8, 1.0, 1.2, 1.4, 1.6])
    assert list(round_levels(-3, 120)) == [0, 20, 40, 60, 80, 100]
    levels = round_levels(0.4512, 0.6831)
    assert (levels > 0.4512).all() and (levels < 0.6831).all()
    assert np.allclose(np.diff(levels), 0.05)
    assert round_levels(5, 5).size == 0


@pytest.mark.parametrize("response", ["y1", "y2", "y3", "y4"])
def test_every_vertex_lies_on_its_level(tire, response):
    study, fit = tire
    n = 61
    lines = contour_lines(study, response, "x1", "x2", fixed={"x3": 0.5}, fit=fit, n=n)
    assert list(lines.columns) == ["level", "line", "x", "y"]
    assert len(lines) and lines["line"].nunique() >= 3
    pred = _predict(study, fit, response, "x1", "x2", lines["x"], lines["y"], {"x3": 0.5})
    # Linear interpolation along a grid edge errs by at most h^2/8 * |f''|
    # (the error bound of linear interpolation); for a quadratic in coded
    # units f'' = 2 b_jj along factor j and h = 2 / (n - 1).
    coef = fit.models[response].report()["coefficients"]
    curv = 2 * max(abs(coef.get("x1^2", 0.0)), abs(coef.get("x2^2", 0.0)))
    h = 2 / (n - 1)
    tol = h ** 2 / 8 * curv + 1e-9 * max(1.0, np.abs(pred).max())
    assert np.abs(pred - lines["level"]).max() <= tol


def test_default_levels_span_the_predicted_range(tire):
    study, fit = tire
    lines = contour_lines(study, "y1", "x1", "x2", fit=fit)
    grid = contour_grid(study, fit, "x1", "x2", {"x3": 0.0}, n=61)
    lo, hi = grid["y1"].min(), grid["y1"].max()
    levels = np.unique(lines["level"])
    assert 4 <= len(levels) <= 8
    assert (levels > lo).all() and (levels < hi).all()


def test_explicit_levels_and_d(tire):
    study, fit = tire
    lines = contour_lines(study, "y2", "x1", "x3", levels=[1100, 1200], fit=fit)
    assert set(lines["level"]) <= {1100.0, 1200.0}
    assert set(lines["level"]) == {1100.0, 1200.0}
    d = contour_lines(study, "D", "x1", "x2", levels=[0.2, 0.4], fit=fit)
    # both D lines are drawn (D at x3 = 0 spans about 0 .. 0.5 over the square)
    assert set(d["level"]) == {0.2, 0.4}
    # Each vertex lies on an edge of the 61 x 61 grid, between two grid points
    # whose D (written out from the published formulas, Derringer & Suich 1980 and
    # Derringer 1994: tests/reference_desirability.py) straddles its level. (D
    # has kinks and a steep rise where a limit starts to bite, so the straddle is
    # checked rather than a bound on the interpolation error.)
    axis = np.linspace(-1, 1, 61)
    ends = []
    for x, y in zip(d["x"], d["y"]):
        on_x = np.isclose(axis, x, rtol=0, atol=1e-9).any()
        moving = y if on_x else x
        i = np.clip(np.searchsorted(axis, moving) - 1, 0, 59)
        a, b = axis[i], axis[i + 1]
        ends += [(x, a, 0.0), (x, b, 0.0)] if on_x else [(a, y, 0.0), (b, y, 0.0)]
    D = study_D(study, fit, np.array(ends)).reshape(-1, 2)
    level = d["level"].to_numpy()
    assert np.all((D.min(axis=1) <= level + 1e-12) & (level <= D.max(axis=1) + 1e-12))
    # and between its grid points, close to the level almost everywhere
    X = np.column_stack([d["x"], d["y"], np.zeros(len(d))])
    assert np.median(np.abs(study_D(study, fit, X) - level)) < 0.005


PLANE = """\
[study]
name = "plane"
data = "runs.csv"
model = "main"

[[factors]]
name = "a"
low = -1
high = 1

[[factors]]
name = "b"
low = 10
high = 30

[[responses]]
name = "y"
"""


def test_a_plane_gives_straight_lines(write_study):
    # y = 10 + 2 a + 3 (b - 20) / 10 exactly (a closed form), so the level-L
    # line is b = 20 + 10 (L - 10 - 2 a) / 3
    runs = "run,a,b,y\n1,-1,10,5\n2,1,10,9\n3,-1,30,11\n4,1,30,15\n5,0,20,10\n"
    study = load_study(write_study(PLANE, runs))
    lines = contour_lines(study, "y", "a", "b", levels=[8, 12])
    assert set(lines["level"]) == {8.0, 12.0}
    assert np.allclose(lines["y"], 20 + 10 * (lines["level"] - 10 - 2 * lines["x"]) / 3,
                       atol=1e-9)


def test_contour_errors(tire):
    study, fit = tire
    with pytest.raises(StudyError, match="no model for response 'nope'"):
        contour_lines(study, "nope", "x1", "x2", fit=fit)
    with pytest.raises(StudyError, match="two different factors"):
        contour_lines(study, "y1", "x1", "x1", fit=fit)
    with pytest.raises(StudyError, match="unknown factor"):
        contour_lines(study, "y1", "x1", "x2", fixed={"x9": 1}, fit=fit)


def test_limit_lines_follow_their_limit(tire):
    study, fit = tire
    lmap = limits_map(study, "x1", "x2", fixed={"x3": 0.0}, fit=fit)
    assert set(lmap.lines["name"]) <= {"y1", "y2", "y3", "y4"}
    assert len(lmap.lines)
    # the limits of the published goals (Derringer & Suich 1980, from memory)
    expected = {("y1", "lower"): 120, ("y2", "lower"): 1000, ("y3", "lower"): 400,
                ("y3", "upper"): 600, ("y4", "lower"): 60, ("y4", "upper"): 75}
    for (name, limit), part in lmap.lines.groupby(["name", "limit"]):
        assert (part["level"] == expected[(name, limit)]).all()
        pred = _predict(study, fit, name, "x1", "x2", part["x"], part["y"], {"x3": 0.0})
        coef = fit.models[name].report()["coefficients"]
        tol = (2 / 60) ** 2 / 8 * 2 * max(abs(coef["x1^2"]), abs(coef["x2^2"])) + 1e-6
        assert np.abs(pred - expected[(name, limit)]).max() <= tol


def test_ticks_point_to_the_failing_side(tire):
    study, fit = tire
    lmap = limits_map(study, "x1", "x2", fixed={"x3": 0.0}, fit=fit)
    assert len(lmap.ticks)
    limit_of = lmap.lines.groupby(["name", "limit"])["level"].first().to_dict()
    for (name, limit), part in lmap.ticks.groupby(["name", "limit"]):
        end = _predict(study, fit, name, "x1", "x2", part["x2"], part["y2"], {"x3": 0.0})
        value = limit_of[(name, limit)]
        fails = end < value if limit == "lower" else end > value
        assert fails.all()


def test_region_share_matches_the_grid(tire):
    study, fit = tire
    lmap = limits_map(study, "x1", "x2", fixed={"x3": 0.0}, fit=fit)
    grid = contour_grid(study, fit, "x1", "x2", {"x3": 0.0}, n=61)
    # no factor goals and no rules in this study: the region is where every
    # response is predicted within its limits
    assert lmap.share == pytest.approx(grid["within_limits"].mean())
    assert 0 < lmap.share < 1 and len(lmap.region)
    # the outline runs along limit lines: on it, the tightest limit is just met
    tight = []
    for r in study.responses:
        lo = {"y1": 120, "y2": 1000, "y3": 400, "y4": 60}[r.name]
        hi = {"y1": np.inf, "y2": np.inf, "y3": 600, "y4": 75}[r.name]
        p = _predict(study, fit, r.name, "x1", "x2", lmap.region["x"], lmap.region["y"],
                     {"x3": 0.0})
        slack = (p - lo) / abs(lo)
        if np.isfinite(hi):
            slack = np.minimum(slack, (hi - p) / abs(hi))
        tight.append(slack)
    assert np.abs(np.min(tight, axis=0)).max() < 0.01


def test_rules_get_their_own_line(write_study):
    study_text = PLANE.replace('[[responses]]', '[[constraints]]\nrule = "a + 0.1*b <= 2.5"\n'
                               'label = "dose cap"\n\n[[responses]]').replace(
        'name = "y"', 'name = "y"\ngoal = "maximize"\nlower = 8\nupper = 14')
    runs = "run,a,b,y\n1,-1,10,5\n2,1,10,9\n3,-1,30,11\n4,1,30,15\n5,0,20,10\n"
    lmap = limits_map(load_study(write_study(study_text, runs)), "a", "b")
    rule = lmap.lines[lmap.lines["kind"] == "rule"]
    assert len(rule) and set(rule["name"]) == {"dose cap"}
    # on the rule's line a + 0.1 b = 2.5 (the rule's closed form)
    assert np.allclose(rule["x"] + 0.1 * rule["y"], 2.5, atol=1e-9)
    # the y >= 8 line: 10 + 2 a + 0.3 (b - 20) = 8 (closed form)
    low = lmap.lines[lmap.lines["name"] == "y"]
    assert np.allclose(10 + 2 * low["x"] + 0.3 * (low["y"] - 20), 8, atol=1e-9)
    assert 0 < lmap.share < 1
