"""Altair drawings of a blend's model: effects along Cox directions and Cox traces.

Shared by the workbench and the report; the tables come from
``tradeoff.maps.mixture_tables`` (``blend_effects``, ``mixture_trace``).
Channels are named with Altair's classes (tests/test_chart_channels.py).
"""
from __future__ import annotations

import pandas as pd

__all__ = ["blend_effects_picture", "cox_trace_picture", "TRACE_COLOURS"]

INK = "#333333"
# one hue and one dash per component; the bands of the traces are grey
TRACE_COLOURS = ["#3b528b", "#21918c", "#5ec962", "#b8860b", "#8c564b", "#7f7f7f"]
DASHES = [[1, 0], [6, 3], [2, 2], [8, 2, 2, 2]]


def blend_effects_picture(table: pd.DataFrame, x_title: str, *, width: int | None = None):
    """A dot per change with its interval as a bar, a line at zero, largest first.

    ``table``: columns ``what`` (the row's words), ``effect``, ``ci_low``,
    ``ci_high`` (NaN: no interval drawn).
    """
    import altair as alt

    order = list(table["what"])
    base = alt.Chart(table).encode(
        y=alt.Y("what:N", sort=order, title=None,
                axis=alt.Axis(labelLimit=320, labelOverlap=False)))
    zero = alt.Chart(pd.DataFrame({"x": [0.0]})).mark_rule(color="#999999").encode(
        x=alt.X("x:Q"))
    bars = base.transform_filter("isValid(datum.ci_low)").mark_rule(
        color=INK, strokeWidth=2).encode(x=alt.X("ci_low:Q"), x2=alt.X2("ci_high:Q"))
    dots = base.mark_circle(size=90, color=INK, opacity=1).encode(
        x=alt.X("effect:Q", title=x_title),
        tooltip=[alt.Tooltip("what:N", title="change"),
                 alt.Tooltip("effect:Q", format=".4g", title="effect"),
                 alt.Tooltip("ci_low:Q", format=".4g", title="interval from"),
                 alt.Tooltip("ci_high:Q", format=".4g", title="interval to")])
    chart = alt.layer(zero, bars, dots).properties(height=max(3, len(table)) * 30)
    return chart if width is None else chart.properties(width=width)


def cox_trace_picture(trace: pd.DataFrame, y_title: str, x_title: str, *,
                      width: int | None = None):
    """One line per component along its Cox direction; a dot at the reference blend.

    ``trace``: columns ``component`` (its label), ``change`` (amount moved from
    the reference blend, study units), ``amount``, ``predicted``, ``ci_low``,
    ``ci_high``.
    """
    import altair as alt

    names = list(dict.fromkeys(trace["component"]))
    legend = alt.Legend(orient="bottom", direction="horizontal", symbolStrokeWidth=2.5,
                        symbolSize=400)
    colour = alt.Color("component:N", title="Component moved", legend=legend,
                       scale=alt.Scale(domain=names, range=TRACE_COLOURS[:len(names)]))
    dash = alt.StrokeDash("component:N", title="Component moved", legend=legend,
                          scale=alt.Scale(domain=names, range=(
                              DASHES + [[1, 0]] * len(names))[:len(names)]))
    band = alt.Chart(trace).mark_area(opacity=0.10).encode(
        x=alt.X("change:Q"), y=alt.Y("ci_low:Q"), y2=alt.Y2("ci_high:Q"),
        detail=alt.Detail("component:N"), color=alt.ColorValue("#8a8a8a"))
    lines = alt.Chart(trace).mark_line(strokeWidth=2.5).encode(
        x=alt.X("change:Q", title=x_title),
        y=alt.Y("predicted:Q", title=y_title, scale=alt.Scale(zero=False)),
        color=colour, strokeDash=dash,
        tooltip=[alt.Tooltip("component:N"), alt.Tooltip("amount:Q", format=".4g"),
                 alt.Tooltip("predicted:Q", format=".4g")])
    at = pd.DataFrame({"change": [0.0], "predicted": [float(
        trace.loc[trace["change"].abs().idxmin(), "predicted"])]})
    dot = alt.Chart(at).mark_point(shape="circle", size=110, filled=True, color=INK).encode(
        x=alt.X("change:Q"), y=alt.Y("predicted:Q"),
        tooltip=[alt.Tooltip("predicted:Q", format=".4g", title="at the reference blend")])
    # grey bands: the one legend (colour and dash together) names the lines
    chart = alt.layer(band, lines, dot).properties(height=300)
    return chart if width is None else chart.properties(width=width)
