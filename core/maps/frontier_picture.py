"""The trade-off frontier as a chart, shared by the report and the workbench.

Drawing only: every number comes from ``tradeoff.search.frontier``. One goal
runs along each axis in its own units. The frontier's points sit on a thin
path, broken where one piece of the frontier (one set of categorical levels,
say one binder) hands over to another; each point is a square filled by its
overall desirability D (light = low, deep teal = high), or by the third goal
when three are traded. The knee carries an open ring and its label; the D
optimum a cross and its label. The optimum usually lies inside the frontier
(better on the other goals), so its cross can sit off the path.
"""
from __future__ import annotations

import pandas as pd

from .pictures import INK

__all__ = ["frontier_frame", "frontier_picture", "frontier_note"]

_PATH = "#8c8577"
_KNEE = "#b5651d"
_OPT = "#a8322d"
_FILL = ["#f3ead8", "#6fa8a0", "#1d4f5a"]


def frontier_frame(front, study) -> pd.DataFrame:
    """The frontier's tidy table (``Frontier.table``) with a ``piece`` column.

    ``piece`` joins the point's categorical levels (empty without categorical
    factors); ``label`` is the point's number as text.
    """
    table = front.table()
    cats = [f.name for f in study.factors if f.is_categorical]
    table["piece"] = (table[cats].astype(str).agg(", ".join, axis=1) if cats
                      else "")
    table["label"] = [f"#{i}" for i in table["point"]]
    return table


def frontier_picture(table: pd.DataFrame, optimum: dict, goals, titles: dict, *,
                     width: int = 430, height: int = 320, select=None):
    """The frontier between ``goals[0]`` (x) and ``goals[1]`` (y).

    Parameters
    ----------
    table : DataFrame
        ``frontier_frame``'s table.
    optimum : dict
        The frontier's ``d_optimum`` (``predicted`` and ``settings``).
    goals : sequence of str
        Two or three goal names; a third fills the squares.
    titles : dict
        Goal name -> axis title (label and unit).
    select : altair selection parameter, optional
        Added to the points (the workbench's click).
    """
    import altair as alt

    a, b = goals[0], goals[1]
    fill_by = goals[2] if len(goals) > 2 else "D"
    fill_title = titles.get(fill_by, fill_by) if fill_by != "D" else "overall desirability D"
    x = alt.X(f"{a}:Q", title=titles.get(a, a), scale=alt.Scale(zero=False))
    y = alt.Y(f"{b}:Q", title=titles.get(b, b), scale=alt.Scale(zero=False))
    data = table.rename(columns={}).copy()
    path = alt.Chart(data).mark_line(color=_PATH, strokeWidth=1.2).encode(
        x=x, y=y, detail=alt.Detail("piece:N"), order=alt.Order("point:Q"))
    tips = [alt.Tooltip("label:N", title="point"), alt.Tooltip(f"{a}:Q", format=".4g"),
            alt.Tooltip(f"{b}:Q", format=".4g"), alt.Tooltip("D:Q", format=".3f"),
            alt.Tooltip("chance_all:Q", format=".0%", title="chance all in limits")]
    if fill_by != "D":
        tips.append(alt.Tooltip(f"{fill_by}:Q", format=".4g"))
    if (data["piece"] != "").any():
        tips.append(alt.Tooltip("piece:N", title="levels"))
    squares = alt.Chart(data).mark_square(size=70, stroke=INK, strokeWidth=0.6).encode(
        x=x, y=y, fill=alt.Fill(f"{fill_by}:Q", title=fill_title,
                                scale=alt.Scale(range=_FILL)),
        tooltip=tips)
    if select is not None:
        squares = squares.add_params(select).encode(
            strokeWidth=alt.condition(select, alt.StrokeWidthValue(2.5),
                                      alt.StrokeWidthValue(0.6)))
    layers = [path, squares]
    knee = data[data["knee"]]
    if len(knee):
        layers.append(alt.Chart(knee).mark_point(shape="circle", size=420, filled=False,
                                                 color=_KNEE, strokeWidth=2).encode(x=x, y=y))
        layers.append(alt.Chart(knee).mark_text(align="right", dx=-14, dy=16, color=_KNEE,
                                                fontWeight="bold").encode(
            x=x, y=y, text=alt.Text("label:N")).transform_calculate(label="'knee'"))
    spot = {a: _value(optimum, a), b: _value(optimum, b)}
    if None not in spot.values():
        opt = pd.DataFrame([spot | {"label": f"best D ({optimum['D']:.2f})"}])
        layers.append(alt.Chart(opt).mark_point(shape="cross", size=260, filled=True,
                                                color=_OPT).encode(x=x, y=y))
        layers.append(alt.Chart(opt).mark_text(align="left", dx=11, dy=12, color=_OPT,
                                               fontWeight="bold").encode(
            x=x, y=y, text=alt.Text("label:N")))
    return alt.layer(*layers).properties(width=width, height=height)


def _value(point: dict, goal: str):
    if goal in point.get("predicted", {}):
        return point["predicted"][goal]
    return point.get("settings", {}).get(goal)


def frontier_note(front) -> str:
    """How to read the chart, in one paragraph (uses the frontier's own words)."""
    a, b = front.between[:2]
    out = (f"Each square is a setting where {a} can only gain if {b} loses (every other "
           "goal within its limits); its fill is "
           + (f"{front.between[2]}" if len(front.between) > 2 else "its overall "
              "desirability D") + ". The ring marks the knee, where the frontier bends "
           "most; the cross, the settings of greatest D")
    if not front.d_optimum["on_frontier"]:
        out += (", which lies inside the frontier: the frontier's settings do better on "
                f"{a} and {b} but worse on the other goals")
    return out + "."
