"""The response trace plot: one chart per response, every factor a trace on one axis.

Drawing only: every number comes from ``tradeoff.maps.slices.slices``. Each
factor moves away from the chosen solution on a shared axis (its move in
coded units: from -1 at the low end of its range to +1 at the high end), the
others held; every trace passes through the chosen solution at 0, marked by
a ring. A steep trace is a factor the response is sensitive to there; a flat
one can be set for cost or convenience. A blend component moves with the
others keeping their ratios (Cox's direction), as in the published trace plot
for blends (Cornell 2002, Experiments with Mixtures, sec. 5.8). D gets a
trace chart of its own. A categorical factor shows one dot per level.
"""
from __future__ import annotations

import pandas as pd

from .pictures import INK, LINE_COLOURS, LINE_DASHES

__all__ = ["trace_picture", "traces_picture", "trace_note", "TRACE_AXIS"]

TRACE_AXIS = "Move from the chosen settings (coded units)"
_LIMIT = "#a8322d"


def _scales(alt, factors: list[str], squares: set = frozenset()):
    colours = alt.Scale(domain=factors, range=[LINE_COLOURS[i % len(LINE_COLOURS)]
                                               for i in range(len(factors))])
    # a factor drawn as squares keeps a solid outline in the key
    dashes = alt.Scale(domain=factors, range=[[1, 0] if f in squares else
                                              LINE_DASHES[i % len(LINE_DASHES)]
                                              for i, f in enumerate(factors)])
    return colours, dashes


def _layers(alt, part: pd.DataFrame, factors: list[str], factor_titles: dict, *,
            y_title: str | None, legend: bool, d_scale: bool):
    """The traces, the limits, the ring at the chosen solution (one response)."""
    colours, dashes = _scales(alt, factors, set(part.loc[part["level"] != "", "factor"]))
    data = part.assign(factor_title=[factor_titles.get(f, f) for f in part["factor"]],
                       shown=[lv if lv else f"{v:.4g}" for lv, v in
                              zip(part["level"], part["value"])])
    y_scale = alt.Scale(domain=[0, 1]) if d_scale else alt.Scale(zero=False)
    # padding: a square or ring at either end sits whole inside the frame
    x = alt.X("shift:Q", title=TRACE_AXIS, scale=alt.Scale(nice=False, padding=8),
              axis=alt.Axis(values=[-2, -1.5, -1, -0.5, 0, 0.5, 1, 1.5, 2]))
    y = alt.Y("predicted:Q", title=y_title, scale=y_scale)
    key = alt.Legend(title=None, orient="bottom", columns=2, labelLimit=200,
                     symbolStrokeWidth=2.5, labelExpr=_titles_expr(factor_titles)) \
        if legend else None
    tips = [alt.Tooltip("factor_title:N", title="factor"),
            alt.Tooltip("shown:N", title="setting"),
            alt.Tooltip("predicted:Q", format=".4g", title="predicted")]
    if data["pi_low"].notna().any():
        tips += [alt.Tooltip("pi_low:Q", format=".4g", title="one batch from"),
                 alt.Tooltip("pi_high:Q", format=".4g", title="one batch to")]
    numeric = data[data["level"] == ""]
    levels = data[data["level"] != ""]
    layers = []
    for column in ("lower_limit", "upper_limit"):
        v = data[column].dropna()
        if len(v):
            layers.append(alt.Chart(pd.DataFrame({"at": [float(v.iloc[0])]})).mark_rule(
                color=_LIMIT, strokeDash=[5, 3], strokeWidth=1.3).encode(
                y=alt.Y("at:Q", title=y_title, scale=y_scale),
                tooltip=[alt.Tooltip("at:Q", format=".4g",
                                     title=column.replace("_", " "))]))
    layers.append(alt.Chart(pd.DataFrame({"shift": [0.0]})).mark_rule(
        color="#c4c9ce", strokeWidth=1).encode(x=alt.X("shift:Q", title=TRACE_AXIS)))
    if len(numeric):
        layers.append(alt.Chart(numeric.sort_values(["factor", "shift"])).mark_line(
            strokeWidth=2.2).encode(
            x=x, y=y, color=alt.Color("factor:N", scale=colours, legend=key),
            strokeDash=alt.StrokeDash("factor:N", scale=dashes, legend=key),
            detail=alt.Detail("factor:N"), order=alt.Order("shift:Q"), tooltip=tips))
    if len(levels):
        # the key shows each factor as it is drawn: a line, or a square for named levels
        drawn = set(levels["factor"])
        shapes = alt.Scale(domain=factors, range=["square" if f in drawn else "stroke"
                                                  for f in factors])
        layers.append(alt.Chart(levels).mark_point(filled=True, size=75, opacity=1).encode(
            x=x, y=y, color=alt.Color("factor:N", scale=colours, legend=key),
            shape=alt.Shape("factor:N", scale=shapes, legend=key),
            tooltip=tips))
    now = data[data["current"]].head(1)
    if len(now):
        layers.append(alt.Chart(now).mark_point(shape="circle", size=210, filled=False,
                                                strokeWidth=2.2, color=INK, opacity=1).encode(
            x=alt.X("shift:Q", title=TRACE_AXIS), y=alt.Y("predicted:Q", title=y_title),
            tooltip=[alt.Tooltip("predicted:Q", format=".4g",
                                 title="at the chosen settings")]))
    return layers


def _titles_expr(titles: dict) -> str:
    import json

    return f"{json.dumps(titles)}[datum.label] || datum.label"


def trace_picture(table: pd.DataFrame, response: str, title: str, factor_titles: dict, *,
                  height: int = 210, width: int | None = None, legend: bool = True):
    """One response's (or D's) trace chart: every factor a line on the shared axis.

    ``table``: ``slices``; ``response``: a response's name or ``"D"``;
    ``title``: the chart's title; ``factor_titles``: factor name -> its label.
    """
    import altair as alt

    part = table[table["response"] == response]
    factors = list(dict.fromkeys(table["factor"]))
    layers = _layers(alt, part, factors, factor_titles, y_title=None, legend=legend,
                     d_scale=response == "D")
    chart = alt.layer(*layers).resolve_scale(color="shared").properties(
        height=height, title=alt.TitleParams(title, anchor="start", fontSize=12,
                                             fontWeight="bold", limit=0))
    return chart.properties(width=width) if width else chart


def traces_picture(table: pd.DataFrame, titles: dict, factor_titles: dict, *,
                   columns: int = 3, width: int = 230, height: int = 150):
    """Every response's trace chart and D's, side by side (static pages): one
    chart per response in a grid, one key of the factors under them all."""
    import altair as alt

    charts = [trace_picture(table, name, title, factor_titles, height=height, width=width,
                            legend=True)
              for name, title in titles.items() if (table["response"] == name).any()]
    if not charts:
        return None
    rows = [alt.hconcat(*charts[i:i + columns], spacing=18)
            for i in range(0, len(charts), columns)]
    return alt.vconcat(*rows, spacing=14).resolve_scale(color="shared",
                                                        strokeDash="shared")


def trace_note(study, label: str) -> str:
    """The sentence under the trace charts, the same in the workbench and the report."""
    blend = any(getattr(f, "is_component", False) for f in study.factors)
    levels = any(f.is_categorical for f in study.factors)
    limits = any(r.goal.active for r in study.responses)
    return (f"Each chart follows one response as one factor at a time moves away from "
            f"{label}, the others held: every factor is a line on the same axis, from "
            "its move to the low end of its range to its move to the high end (2 coded "
            "units span the whole range). All lines meet at the ring, the prediction at "
            f"{label}. A steep line is a factor to set with care; a flat one can be set "
            "for cost or convenience."
            + (" A blend component moves with the other components keeping their "
               "ratios to each other, so the blend still adds up." if blend else "")
            + (" A factor with named levels shows a square per level." if levels else "")
            + (" Dashed lines: the limits." if limits else ""))
