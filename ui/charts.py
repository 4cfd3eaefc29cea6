"""Altair charts of the library's tidy tables. Drawing only: no computing here.

One colour scheme throughout: viridis (perceptually uniform, readable with
the common colour-vision deficiencies). Two-colour distinctions use its two
ends; every axis names its quantity and unit.
"""
from __future__ import annotations

import importlib
import threading
from contextlib import nullcontext

import altair as alt
import pandas as pd
import streamlit as st
from streamlit.dataframe_util import convert_anything_to_arrow_bytes

from tradeoff.maps.chart_data import use_records

__all__ = ["show", "residual_chart", "SCHEME", "effects_chart", "half_normal_chart", "traces_chart",
           "interaction_chart", "residual_charts", "desirability_chart", "contour_chart", "limits_chart",
           "trace_chart", "titled", "fit_width", "BAR_STEP", "arrhenius_chart",
           "length_scale_chart", "loo_chart"]

SCHEME = "viridis"
DARK, LIGHT, MID = "#440154", "#fde725", "#21918c"  # viridis ends and middle
# One colour, one meaning across charts: DARK is "lowers" (effects) and the chosen
# setting's marker; an unusual run is FLAG everywhere; plain points are POINT.
FLAG, POINT = "#d9480f", "#555555"
SIGN_COLOURS = alt.Scale(domain=["raises", "lowers"], range=[MID, DARK])


# The limits map's plotting area (px): fits beside the sidebar on a 1280 px screen.
LIMITS_SIZE = (600, 420)
# Height of one bar in bar charts: 3 bars need at least 60 px of plotting area.
BAR_STEP = 22
_ALTAIR_GLOBALS = threading.Lock()


def show(make, *args, where=None, **options):
    """Put the chart ``make(*args)`` on the page, in ``where`` (a column; default the page).

    ``make`` is a chart function (module level, returning an Altair chart). Its Vega-Lite
    specification is cached by the arguments: a page reruns on every click,
    and most of its charts draw the same tables as before, so they cost a
    lookup instead of being built again (building a layered chart takes tens
    of milliseconds). The specification is written without Altair's schema
    check (Streamlit's own chart call repeats that check on every rerun);
    our charts are built by code from checked tables.
    """
    spec = _spec(make.__module__, make.__qualname__, *args)
    # the chart's selection event when ``on_select`` is passed (the frontier's click)
    return (st if where is None else where).vega_lite_chart(spec, **options)


@st.cache_data(max_entries=512, show_spinner=False)
def _spec(module: str, name: str, *args) -> dict:
    # the chart function travels by name: cheap to hash, and the same across reruns
    chart = getattr(importlib.import_module(module), name)(*args)
    # Altair's default theme sets a fixed view size; Streamlit's own chart call
    # turns it off the same way, so the charts keep the size they had.
    # The theme and the data step are Altair globals, shared by every session's
    # thread: one writer at a time.
    with _ALTAIR_GLOBALS:
        theme = alt.theme.enable("none") if alt.theme.active == "default" else nullcontext()
        with theme, use_records():
            spec = chart.to_dict(validate=False)
    # Streamlit sends chart data as Arrow bytes and converts any other table on
    # every rerun; converting once here, inside the cache, spares that.
    for key, values in spec.get("datasets", {}).items():
        spec["datasets"][key] = convert_anything_to_arrow_bytes(pd.DataFrame(values))
    return spec


def titled(label: str, unit: str = "") -> str:
    """An axis title with its unit in brackets."""
    from tradeoff.study.spec import with_unit

    return with_unit(label, unit)


def fit_width(chart):
    """Stretch a single view to its column while its height stays the plotting area.

    Streamlit's default ("fit") squeezes axes, titles and legends into the
    given height, which collapses short charts; "fit-x" only fits the width.
    """
    return chart.properties(autosize=alt.AutoSizeParams(type="fit-x", contains="padding"))


def effects_chart(estimates: pd.DataFrame, x_title: str) -> alt.LayerChart:
    """Each term's effect as a dot with its margins, largest at the top, a zero line
    (``tradeoff.maps.effects_picture``).

    ``estimates``: ``tradeoff.maps.estimates.effect_estimates``.
    """
    from tradeoff.maps.effects_picture import effects_picture

    return fit_width(effects_picture(estimates, x_title))


def half_normal_chart(points: pd.DataFrame, unit: str, label_top: int = 5) -> alt.LayerChart:
    """|effect| against half-normal quantiles; the biggest effects labelled."""
    data = points.copy()
    data["label"] = ""
    top = data["abs_effect"].nlargest(label_top).index
    data.loc[top, "label"] = data.loc[top, "term"]
    base = alt.Chart(data).encode(
        x=alt.X("abs_effect:Q", title=titled("Size of effect", unit)),
        y=alt.Y("quantile:Q", title="Half-normal quantile"))
    dots = base.mark_circle(size=70, color=POINT).encode(
        tooltip=[alt.Tooltip("term"), alt.Tooltip("effect:Q", format=".4g")])
    # names of the largest effects go to the left of their dots: on the right they
    # would run out of the chart
    far = data["abs_effect"] > 0.6 * data["abs_effect"].max()
    text_left = alt.Chart(data[~far]).mark_text(align="left", dx=6).encode(
        x=alt.X("abs_effect:Q"), y=alt.Y("quantile:Q"), text=alt.Text("label:N"))
    text_right = alt.Chart(data[far]).mark_text(align="right", dx=-6).encode(
        x=alt.X("abs_effect:Q"), y=alt.Y("quantile:Q"), text=alt.Text("label:N"))
    return fit_width(alt.layer(dots, text_left, text_right).properties(height=320))


def interaction_chart(cells: pd.DataFrame, model: pd.DataFrame, a_title: str,
                      b_title: str, y_title: str):
    """The model's lines with intervals at the ends of factor a, one per end of b,
    over the measured cell means (open circles); see
    ``tradeoff.maps.pictures.interaction_picture``."""
    from tradeoff.maps.pictures import interaction_picture

    return fit_width(interaction_picture(cells, model, a_title, b_title, y_title,
                                         height=260))


def residual_charts(table: pd.DataFrame, unit: str) -> tuple:
    """Three panels (each stretched to its own column): residual against fitted
    value, normal quantile plot of the deleted studentized residual, residual in
    run order. Dark points: runs flagged (deleted studentized residual beyond
    +-3), the very value the quantile panel plots, so colour and caption agree.

    ``table``: columns run, order, fitted, residual, studentized_deleted,
    quantile, flagged (``tradeoff.maps.tables.residual_table``).
    """
    base = alt.Chart(table).encode(
        color=alt.Color("flagged:N", scale=alt.Scale(domain=[False, True],
                                                     range=[MID, FLAG]), legend=None),
        tooltip=[alt.Tooltip("run"), alt.Tooltip("fitted:Q", format=".4g"),
                 alt.Tooltip("residual:Q", format=".4g"),
                 alt.Tooltip("studentized_deleted:Q", format=".2f",
                             title="deleted studentized")])
    zero = alt.Chart(pd.DataFrame({"y": [0.0]})).mark_rule(color="#888").encode(y=alt.Y("y:Q"))
    vs_fit = alt.layer(zero, base.mark_circle(size=60).encode(
        x=alt.X("fitted:Q", title=titled("Fitted value", unit), scale=alt.Scale(zero=False)),
        y=alt.Y("residual:Q", title=titled("Residual", unit)))).properties(
        height=230, title="Against fitted value")
    limit = alt.Chart(pd.DataFrame({"y": [-3.0, 3.0]})).mark_rule(
        color=DARK, strokeDash=[4, 3]).encode(y=alt.Y("y:Q"))
    normal = alt.layer(limit, base.mark_circle(size=60).encode(
        x=alt.X("quantile:Q", title="Normal quantile"),
        y=alt.Y("studentized_deleted:Q", title="Deleted studentized residual"))).properties(
        height=230, title="Normal quantile plot")
    trace = alt.Chart(table).mark_line(color="#999").encode(
        x=alt.X("order:O", title="Run (file order)", axis=alt.Axis(labelOverlap=True)),
        y=alt.Y("residual:Q", title=titled("Residual", unit)))
    order = alt.layer(zero, trace, base.mark_circle(size=60).encode(
        x=alt.X("order:O"), y=alt.Y("residual:Q"))).properties(height=230, title="In run order")
    return fit_width(vs_fit), fit_width(normal), fit_width(order)


def residual_chart(table: pd.DataFrame, unit: str, which: int):
    """One of ``residual_charts`` by position (0 against fitted, 1 quantiles, 2 run order)."""
    return residual_charts(table, unit)[which]


def desirability_chart(curve: pd.DataFrame, marker: pd.DataFrame, x_title: str) -> alt.LayerChart:
    """A goal's desirability curve with a marker where the best settings land.

    ``curve``: columns value, desirability. ``marker``: columns value,
    desirability (zero or one row).
    """
    line = alt.Chart(curve).mark_line(color=MID, strokeWidth=3).encode(
        x=alt.X("value:Q", title=x_title, scale=alt.Scale(zero=False)),
        y=alt.Y("desirability:Q", title="Desirability", scale=alt.Scale(domain=[0, 1.05])))
    dot = alt.Chart(marker).mark_point(shape="diamond", size=160, filled=True,
                                       color=DARK).encode(
        x=alt.X("value:Q"), y=alt.Y("desirability:Q"),
        tooltip=[alt.Tooltip("value:Q", format=".4g", title="predicted"),
                 alt.Tooltip("desirability:Q", format=".3f")])
    return fit_width(alt.layer(line, dot).properties(height=170))


def contour_chart(grid: pd.DataFrame, lines: pd.DataFrame, value: str, value_title: str,
                  x_title: str, y_title: str, marks: pd.DataFrame):
    """Labelled lines of equal ``value`` over a light wash (see
    ``tradeoff.maps.pictures.contour_picture``)."""
    from tradeoff.maps.pictures import contour_picture

    return fit_width(contour_picture(grid, lines, value, value_title, x_title, y_title,
                                     marks, height=420))


def limits_chart(lmap, titles: dict, x_title: str, y_title: str, marks: pd.DataFrame,
                 d_lines: pd.DataFrame | None = None, labels: dict | None = None):
    """Each limit as its own labelled line (labels placed apart), failing side ticked,
    the region where all hold tinted and outlined (see
    ``tradeoff.maps.pictures.limits_picture``)."""
    from tradeoff.maps.pictures import limits_picture

    # a fixed size: the labels are placed in the map's own pixels (they keep
    # clear of each other at any size, but sit closest to their lines at this one)
    # ("pad": axes and legend around that area, where Streamlit's default would
    # squeeze them into it and shrink the map under its labels)
    return limits_picture(lmap, titles, x_title, y_title, marks, d_lines=d_lines,
                          labels=labels, height=LIMITS_SIZE[1], width=LIMITS_SIZE[0]
                          ).properties(autosize=alt.AutoSizeParams(type="pad"))


def trace_chart(table: pd.DataFrame, response: str, title: str, factor_titles: dict):
    """One response's (or D's) trace chart: every factor a line on the shared coded
    axis, a ring at the chosen settings (``tradeoff.maps.trace_picture``)."""
    from tradeoff.maps.trace_picture import trace_picture

    return fit_width(trace_picture(table, response, title, factor_titles, height=220))


def traces_chart(table: pd.DataFrame, titles: dict, factor_titles: dict):
    """Every response's trace chart and D's in one drawing, two a row, one key
    (``tradeoff.maps.trace_picture.traces_picture``). One chart, not one per
    response: the browser lays out and draws a chart's frame once, so a change of
    the chosen solution redraws one chart instead of six or more."""
    from tradeoff.maps.trace_picture import traces_picture

    # two charts of 330 px with their axes fit the main column at 1280 px (818 px)
    return traces_picture(table, titles, factor_titles, columns=2, width=330, height=190)


def arrhenius_chart(points: pd.DataFrame, *, columns: int = 4) -> alt.FacetChart:
    """ln k against 1000 / T, one small panel per run, with the bounds of each rate
    (``tradeoff.maps.pictures.arrhenius_picture``)."""
    from tradeoff.maps.pictures import arrhenius_picture

    # four small panels fit a 1280-pixel-wide window beside the sidebar
    return arrhenius_picture(points, columns=columns, width=150, height=120)


def length_scale_chart(table: pd.DataFrame) -> alt.Chart:
    """Each factor's length scale (coded units, log axis over the searched bounds),
    shortest first, as dots.

    ``table``: columns factor, length_scale, natural, at_bound.
    """
    order = list(table["factor"])
    return alt.Chart(table).mark_circle(size=140, color=MID).encode(
        x=alt.X("length_scale:Q", title="Length scale (coded units, log scale)",
                scale=alt.Scale(type="log", domain=[0.3, 100])),
        y=alt.Y("factor:N", sort=order, title="Factor",
                axis=alt.Axis(labelOverlap=False, labelLimit=220)),
        tooltip=[alt.Tooltip("factor"), alt.Tooltip("length_scale:Q", format=".3g"),
                 alt.Tooltip("natural:Q", title="in its units", format=".3g"),
                 alt.Tooltip("at_bound")]).properties(height=60 + 40 * len(table))


def loo_chart(diag: pd.DataFrame, title: str) -> alt.LayerChart:
    """Observed against predicted-from-the-other-runs, with the line of equality.

    ``diag``: columns run, observed, loo_predicted, flagged (modelling scale).
    """
    lo = float(min(diag["observed"].min(), diag["loo_predicted"].min()))
    hi = float(max(diag["observed"].max(), diag["loo_predicted"].max()))
    line = alt.Chart(pd.DataFrame({"a": [lo, hi], "b": [lo, hi]})).mark_line(
        color="#999", strokeDash=[4, 3]).encode(x=alt.X("a:Q"), y=alt.Y("b:Q"))
    data = diag.assign(mark=["beyond 3 SD" if f else "" for f in diag["flagged"]])
    dots = alt.Chart(data).mark_circle(size=70).encode(
        x=alt.X("loo_predicted:Q", title="Predicted from the other runs",
                scale=alt.Scale(zero=False)),
        y=alt.Y("observed:Q", title=f"Measured: {title}", scale=alt.Scale(zero=False)),
        color=alt.Color("mark:N", scale=alt.Scale(domain=["", "beyond 3 SD"],
                                                  range=[MID, FLAG]), legend=None),
        tooltip=[alt.Tooltip("run"), alt.Tooltip("observed:Q", format=".4g"),
                 alt.Tooltip("loo_predicted:Q", format=".4g")])
    return alt.layer(line, dots).properties(height=300)


__all__ += ["ternary_chart", "ternary_limits_chart"]


def ternary_chart(grid: pd.DataFrame, lines: pd.DataFrame, axes: dict, bounds: pd.DataFrame,
                  value: str, value_title: str, marks: pd.DataFrame, width: int = 640):
    """Labelled lines in the blend triangle over a light wash (equal units on both
    axes, so a fixed width; see ``tradeoff.maps.ternary_pictures``)."""
    from tradeoff.maps.ternary_pictures import ternary_contour_picture

    return ternary_contour_picture(grid, lines, axes, bounds, value, value_title, marks,
                                   width=width)


def ternary_limits_chart(tlim, axes: dict, titles: dict, marks: pd.DataFrame,
                         d_lines: pd.DataFrame | None = None, width: int = 640):
    """Each limit as its own labelled line in the blend triangle, failing side ticked,
    the blends where all hold outlined (``ternary_pictures.ternary_limits_picture``)."""
    from tradeoff.maps.ternary_pictures import ternary_limits_picture

    # "pad": the triangle keeps the size its labels were placed at (see limits_chart)
    return ternary_limits_picture(tlim, axes, titles, marks, d_lines=d_lines, width=width
                                  ).properties(autosize=alt.AutoSizeParams(type="pad"))


def frontier_chart(table, optimum, goals, titles):
    """The trade-off frontier (``tradeoff.maps.frontier_picture``); a click picks a point."""
    from tradeoff.maps.frontier_picture import frontier_picture

    pick = alt.selection_point(name="pick", fields=["point"], on="click")
    return frontier_picture(table, optimum, goals, dict(titles), width=520, height=330,
                            select=pick)
