"""Ternary maps: contour lines and the limits map in the triangle, checked against the
fitted model's own predictions and closed forms.

The study is the invented gluten-free flour blend demo (three flours adding up
to 100 %, bake temperature as a process factor); the checks do not depend on
its numbers, only on the model fitted to them, which each check calls
independently at the amounts a vertex stands for.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from reference_desirability import study_D
from tradeoff import StudyError, load_study
from tradeoff.model.study_fit import fit_study
from tradeoff.maps.ternary import (HEIGHT, from_plot, ternary_limits, ternary_lines,
                                     ternary_points, ternary_position, ternary_region)
from tradeoff.maps.mixture_tables import ternary_grid
from tradeoff.study.coding import to_coded
from tradeoff.search.desirability import limits

DEMO = Path(__file__).resolve().parents[2] / "demo_data" / "flour_blend.toml"
NAMES = ["rice_flour", "sorghum_flour", "tapioca_starch"]
SHARES = ["first_share", "second_share", "third_share"]
HYDRO = "xanthan"  # the demo's hydrocolloid held for the maps (any of its levels)


@pytest.fixture(scope="module")
def flour():
    study = load_study(DEMO)
    return study, fit_study(study)


def _predict(study, fit, name, amounts: pd.DataFrame, bake: float) -> np.ndarray:
    """The model's own prediction at the vertices' amounts (the independent check)."""
    table = amounts[NAMES].copy()
    table["bake_temp"] = bake
    table["hydrocolloid"] = HYDRO
    return np.asarray(fit.models[name].predict(to_coded(study.factors, table)), float)


def _interpolation_bound(study, fit, name, bake, step_share) -> float:
    """Largest error of linear interpolation along a grid edge of the map.

    For a function with constant second derivative along the edge's direction
    u (the Scheffe quadratic in the shares, bake temperature fixed) the error
    of linear interpolation over a step h is at most h^2 |u'Hu| / 8, and the
    second difference f(x+hu) - 2 f(x) + f(x-hu) is exactly h^2 u'Hu
    (closed form). The grid's edges run along (1,-1,0)-type directions.
    """
    centre = np.array([55.0, 27.5, 17.5])
    h = step_share * 100.0
    worst = 0.0
    for u in ([1, 0, -1], [0, 1, -1], [1, -1, 0]):
        u = np.asarray(u, float)
        pts = pd.DataFrame(np.vstack([centre + h * u, centre, centre - h * u]), columns=NAMES)
        f = _predict(study, fit, name, pts, bake)
        worst = max(worst, abs(f[0] - 2 * f[1] + f[2]))
    return worst / 8.0


@pytest.mark.parametrize("response", ["specific_volume", "crumb_hardness",
                                      "crust_lightness"])
def test_every_vertex_lies_on_its_level(flour, response):
    study, fit = flour
    steps = 90
    lines = ternary_lines(study, response, fit=fit, settings={"bake_temp": 190, "hydrocolloid": HYDRO},
                          steps=steps)
    assert list(lines.columns[:6]) == ["level", "line", "i", *SHARES]
    assert lines["line"].nunique() >= 3
    pred = _predict(study, fit, response, lines, 190.0)
    err = np.abs(pred - lines["level"].to_numpy())
    # grid step in shares of the total: the zoomed triangle spans 35 % per side
    bound = _interpolation_bound(study, fit, response, 190.0, 0.35 / steps)
    assert err.max() <= bound * 1.001 + 1e-9, (err.max(), bound)
    # and the bound is small against the gap between levels, so the check bites
    gap = np.diff(np.unique(lines["level"])).min()
    assert bound < 0.01 * gap


def test_d_lines_follow_d_written_out(flour):
    # D by the published formulas written out (Derringer & Suich 1980, Derringer
    # 1994: tests/reference_desirability.py) at each vertex's blend: D has kinks
    # where a limit starts to bite, so the check is that vertices sit on their
    # level almost everywhere (the median), not a bound on every one
    study, fit = flour
    lines = ternary_lines(study, "D", fit=fit, settings={"bake_temp": 205,
                                                         "hydrocolloid": HYDRO})
    assert len(lines) and lines["level"].nunique() >= 2
    table = lines[NAMES].copy()
    table["bake_temp"] = 205.0
    table["hydrocolloid"] = HYDRO
    D = study_D(study, fit, to_coded(study.factors, table))
    assert np.median(np.abs(D - lines["level"].to_numpy())) < 0.005


def test_levels_are_round_and_drawn_in_order(flour):
    study, fit = flour
    lines = ternary_lines(study, "specific_volume", fit=fit, levels=[2.5, 2.6])
    assert set(lines["level"]) == {2.5, 2.6}
    for _, part in lines.groupby("line"):
        assert list(part["i"]) == list(range(len(part)))


def test_shares_amounts_and_plot_coordinates_agree(flour):
    study, fit = flour
    lines = ternary_lines(study, "D", fit=fit, settings={"bake_temp": 205, "hydrocolloid": HYDRO})
    # shares add up to 1 (closed form: they are shares of one whole)
    np.testing.assert_allclose(lines[SHARES].sum(axis=1), 1.0, atol=1e-12)
    # the three amounts are the shares of the total (100 %, nothing held)
    np.testing.assert_allclose(lines[NAMES].to_numpy(), lines[SHARES].to_numpy() * 100,
                               atol=1e-9)
    # back from the plot: triangle coordinates -> shares (lows + room * t)
    T = from_plot(lines["x"], lines["y"])
    np.testing.assert_allclose(T.sum(axis=1), 1.0, atol=1e-12)
    S = np.array(lines.attrs["lows"]) + lines.attrs["room"] * T
    np.testing.assert_allclose(S, lines[SHARES].to_numpy(), atol=1e-9)
    np.testing.assert_allclose(S.sum(axis=1), 1.0, atol=1e-12)
    # every vertex lies in the triangle (closed form: all coordinates >= 0)
    assert (T >= -1e-9).all()
    assert lines["y"].between(-1e-9, HEIGHT + 1e-9).all()


def test_lines_reach_the_triangles_sides(flour):
    # contourpy's corner masking contours the half cells along the hypotenuse of
    # the square grid, so a line crossing the map ends on the triangle's side
    study, fit = flour
    lines = ternary_lines(study, "specific_volume", fit=fit, settings={"bake_temp": 190, "hydrocolloid": HYDRO})
    T = from_plot(lines["x"], lines["y"])
    ends = lines.groupby("line")["i"].transform(lambda i: (i == i.min()) | (i == i.max()))
    assert (T[ends.to_numpy(bool)].min(axis=1) < 1e-9).all()


def test_the_region_is_the_closed_form_polygon_of_the_bounds(flour):
    study, _ = flour
    region = ternary_region(study)
    # worked by hand (closed form): rice 40..70, sorghum 15..45, tapioca 10..45
    # (tightened from 50), adding up to 100: five corners
    corners = {(70, 15, 15), (70, 20, 10), (45, 45, 10), (40, 45, 15), (40, 15, 45)}
    got = {tuple(np.round(r, 9)) for r in region[NAMES].to_numpy()}
    assert got == corners
    assert len(region) == 6 and (region.iloc[0][NAMES] == region.iloc[-1][NAMES]).all()
    # the outline agrees with the grid's 'inside' column: a blend is inside the
    # convex polygon exactly when it is within every bound
    grid = ternary_points(ternary_grid(study, fit_study(study), steps=40, zoom=True))
    grid = grid[grid["response"] == "specific_volume"]
    P = region[["x", "y"]].to_numpy()
    edge = np.diff(P, axis=0)
    rel = grid[["x", "y"]].to_numpy()[:, None, :] - P[None, :-1, :]
    cross = edge[None, :, 0] * rel[:, :, 1] - edge[None, :, 1] * rel[:, :, 0]
    sign = np.sign(np.sum(cross, axis=1, keepdims=True))
    in_polygon = np.all(cross * sign >= -1e-9, axis=1)
    assert (in_polygon == grid["inside"].to_numpy()).all()
    assert 0 < grid["inside"].mean() < 1


@pytest.mark.parametrize("bake", [175.0, 205.0])
def test_limit_lines_separate_passing_and_failing_blends(flour, bake):
    study, fit = flour
    tlim = ternary_limits(study, fit=fit, settings={"bake_temp": bake, "hydrocolloid": HYDRO})
    assert len(tlim.lines) and len(tlim.ticks)
    for (name, limit), part in tlim.lines.groupby(["name", "limit"]):
        value = part["level"].iloc[0]
        lo, hi = limits(study.response(name).goal)
        assert value == (lo if limit == "lower" else hi)
        pred = _predict(study, fit, name, part, bake)
        bound = _interpolation_bound(study, fit, name, bake, 0.35 / 90)
        assert np.abs(pred - value).max() <= bound * 1.001 + 1e-9
    # each tick points into the failing side: the model, asked independently,
    # fails the limit at the tick's end and meets it as far on the other side
    lows, room = np.array(tlim.lines.attrs["lows"]), tlim.lines.attrs["room"]
    for row in tlim.ticks.itertuples():
        far = np.array([[row.x2, row.y2], [2 * row.x - row.x2, 2 * row.y - row.y2]])
        S = lows + room * from_plot(far[:, 0], far[:, 1])
        amounts = pd.DataFrame(S * 100, columns=NAMES)
        pred = _predict(study, fit, row.name, amounts, bake)
        lo, hi = limits(study.response(row.name).goal)
        passes = (pred >= lo) if row.limit == "lower" else (pred <= hi)
        assert list(passes) == [False, True]
    # the share of allowed blends where every limit holds, counted independently
    grid = tlim.grid[tlim.grid["inside"]]
    ok = np.ones(len(grid), bool)
    for r in study.responses:
        lo, hi = limits(r.goal)
        pred = _predict(study, fit, r.name, grid, bake)
        ok &= (pred >= lo) & (pred <= hi)
    assert tlim.share == pytest.approx(ok.mean())
    assert 0 < tlim.share < 1


def test_region_outline_follows_the_limit_and_the_bounds(flour):
    study, fit = flour
    tlim = ternary_limits(study, fit=fit, settings={"bake_temp": 175.0, "hydrocolloid": HYDRO})
    assert len(tlim.region)
    # on the outline every limit and bound holds up to the grid's error, and at
    # least one is at its edge (common practice: the window's edge is where the
    # first requirement fails)
    region = tlim.region
    pred = _predict(study, fit, "crust_lightness", region, 175.0)
    assert (pred <= 64 + 0.05).all()
    amounts = region[NAMES].to_numpy()
    lo = np.array([40, 15, 10])
    hi = np.array([70, 45, 45])
    assert (amounts >= lo - 0.5).all() and (amounts <= hi + 0.5).all()


def test_position_marks_a_blend_where_its_shares_put_it(flour):
    study, _ = flour
    pos = ternary_position(study, [{"rice_flour": 40, "sorghum_flour": 15,
                                    "tapioca_starch": 45}])
    # closed form: rice and sorghum at their lows -> the tapioca corner (1, 0)
    assert pos[["x", "y"]].to_numpy()[0] == pytest.approx([1.0, 0.0])
    pos = ternary_position(study, [{"rice_flour": 75, "sorghum_flour": 15,
                                    "tapioca_starch": 10}])
    assert pos[["x", "y"]].to_numpy()[0] == pytest.approx([0.5, HEIGHT])


def test_refusals(flour):
    study, fit = flour
    with pytest.raises(StudyError, match="no model for response 'crumb'"):
        ternary_lines(study, "crumb", fit=fit)
    with pytest.raises(StudyError, match="'rice' is not a component"):
        ternary_lines(study, "D", ["rice", "sorghum_flour", "tapioca_starch"], fit=fit)
    snack = load_study(DEMO.parent / "snack_bar.toml")
    with pytest.raises(StudyError, match="no \\[\\[components\\]\\]"):
        ternary_region(snack)


def _page(path, monkeypatch):
    """The report page with the slow two-factor maps and model sections left out
    (they have their own tests): the blend section is what is checked here."""
    from tradeoff.report.data import report_data
    from tradeoff.report.html import _Page

    for name in ("maps", "models"):
        monkeypatch.setattr(_Page, name, lambda self: "")
    study = load_study(path)
    return _Page(study, report_data(study, top=2)).render()


def test_the_report_of_a_blend_has_the_triangle(monkeypatch):
    page = _page(DEMO, monkeypatch)
    assert '<section id="blend"><h2>Blend triangle</h2>' in page
    section = page.split('<section id="blend">')[1].split("</section>")[0]
    # two inline drawings (limits, D) with the component scales in amounts
    assert section.count("<svg") == 2
    assert "Rice flour, %" in section and "S1 (recommended)" in section
    assert "crust_lightness" in section and "% of them" in section


def test_the_report_of_a_study_without_blend_has_no_triangle(monkeypatch):
    page = _page(DEMO.parent / "snack_bar.toml", monkeypatch)
    assert 'id="blend"' not in page and "Blend triangle" not in page


def test_the_triangle_maps_three_components_that_have_room():
    """A recommendation with one component at its high can leave the study's first
    three no room above their lows; the triangle then maps the three with the most
    room, which is checked here by the room written out: total minus the held
    amounts minus the three's lows (common practice: a ternary map is a slice of
    the blend simplex with the other components fixed)."""
    from tradeoff.derive.load import study_from_dict
    from tradeoff.maps.ternary import three_with_room

    spec = {"study": {"name": "four flours", "model": "main"},
            "mixture": {"total": 50.0, "model": "linear"},
            "components": [{"name": "a", "low": 0.5, "high": 42.5},
                           {"name": "b", "low": 4.0, "high": 46.0},
                           {"name": "c", "low": 1.5, "high": 43.5},
                           {"name": "d", "low": 2.0, "high": 44.0}],
            "responses": [{"name": "y", "goal": "maximize", "lower": 0, "upper": 1}]}
    study = study_from_dict(spec, with_data=False)
    lows = {"a": 0.5, "b": 4.0, "c": 1.5, "d": 2.0}

    def room(three, ref):
        return 50.0 - sum(ref[n] for n in ref if n not in three) - sum(lows[n] for n in three)

    at_high = {"a": 0.5, "b": 4.0, "c": 1.5, "d": 44.0}
    assert room(["a", "b", "c"], at_high) == pytest.approx(0.0)
    three = three_with_room(study, at_high)
    assert len(set(three)) == 3 and room(three, at_high) > 1.0
    ternary_region(study, three, reference=at_high)  # draws where the first three cannot
    centre = {"a": 12.5, "b": 12.5, "c": 12.5, "d": 12.5}
    assert three_with_room(study, centre) == ["a", "b", "c"]  # the first three when they fit
