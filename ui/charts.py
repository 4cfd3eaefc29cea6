"""Altair charts of the library's tidy tables. Drawing only: no computing here.

One colour scheme throughout: viridis (perceptually uniform, readable with
the common colour-vision deficiencies). Two-colour distinctions use its two
ends; every axis names its quantity and unit.
"""
from __future__ import annotations

import altair as alt
import pandas as pd

__all__ = ["SCHEME", "effects_chart", "half_normal_chart", "interaction_chart",
           "residual_charts", "desirability_chart", "contour_chart", "titled"]

SCHEME = "viridis"
DARK, LIGHT, MID = "#440154", "#fde725", "#21918c"  # viridis ends and middle
SIGN_COLOURS = alt.Scale(domain=["raises", "lowers"], range=[MID, DARK])


def titled(label: str, unit: str = "") -> str:
    """An axis title with its unit in brackets."""
    return f"{label} ({unit})" if unit else label


def effects_chart(effects: pd.DataFrame, lines: pd.DataFrame, unit: str) -> alt.LayerChart:
    """Bars of |effect| ranked by size, coloured by sign, with reference lines.

    ``effects``: columns term, effect. ``lines``: columns label, value.
    """
    data = effects.assign(size=effects["effect"].abs(),
                          sign=["raises" if e >= 0 else "lowers" for e in effects["effect"]])
    order = list(data.sort_values("size", ascending=False)["term"])
    bars = alt.Chart(data).mark_bar().encode(
        x=alt.X("size:Q", title=titled("Size of effect, low to high", unit)),
        y=alt.Y("term:N", sort=order, title="Model term",
                axis=alt.Axis(labelOverlap=False, labelLimit=220)),
        color=alt.Color("sign:N", scale=SIGN_COLOURS, title="Going low to high"),
        tooltip=["term", alt.Tooltip("effect:Q", format=".4g")])
    layers = [bars]
    if len(lines):
        rules = alt.Chart(lines).mark_rule(strokeDash=[6, 3], color="#333").encode(
            x="value:Q", tooltip=["label", alt.Tooltip("value:Q", format=".4g")])
        text = alt.Chart(lines).mark_text(align="left", dx=3, dy=-6, color="#333").encode(
            x="value:Q", y=alt.value(0), text="label:N")
        layers += [rules, text]
    return alt.layer(*layers).properties(height=max(120, 24 * len(data)))


def half_normal_chart(points: pd.DataFrame, unit: str, label_top: int = 5) -> alt.LayerChart:
    """|effect| against half-normal quantiles; the biggest effects labelled."""
    data = points.copy()
    data["label"] = ""
    top = data["abs_effect"].nlargest(label_top).index
    data.loc[top, "label"] = data.loc[top, "term"]
    base = alt.Chart(data).encode(
        x=alt.X("abs_effect:Q", title=titled("Size of effect", unit)),
        y=alt.Y("quantile:Q", title="Half-normal quantile"))
    dots = base.mark_circle(size=70, color=DARK).encode(
        tooltip=["term", alt.Tooltip("effect:Q", format=".4g")])
    text = base.mark_text(align="left", dx=6).encode(text="label:N")
    return alt.layer(dots, text).properties(height=320)


def interaction_chart(cells: pd.DataFrame, a_title: str, b_title: str,
                      y_title: str) -> alt.Chart:
    """Mean response at the two ends of factor a, one line per end of factor b."""
    def shown(v):
        return v if isinstance(v, str) else f"{v:g}"

    data = cells.assign(a=[shown(v) for v in cells["a_level"]],
                        b=[shown(v) for v in cells["b_level"]])
    order = list(dict.fromkeys(data.sort_values("a_coded")["a"]))
    b_order = list(dict.fromkeys(data.sort_values("b_coded")["b"]))
    return alt.Chart(data).mark_line(point=True, strokeWidth=3).encode(
        x=alt.X("a:N", sort=order, title=a_title, axis=alt.Axis(labelAngle=0)),
        y=alt.Y("mean:Q", title=y_title, scale=alt.Scale(zero=False)),
        color=alt.Color("b:N", title=b_title, sort=b_order,
                        scale=alt.Scale(domain=b_order, range=[MID, DARK])),
        tooltip=["a", "b", alt.Tooltip("mean:Q", format=".4g"), "runs"],
    ).properties(height=280)


def residual_charts(table: pd.DataFrame, unit: str) -> alt.HConcatChart:
    """Residual against fitted value, normal quantile plot, residual in run order.

    ``table``: columns run, order, fitted, residual, studentized, quantile, flagged.
    """
    base = alt.Chart(table).encode(
        color=alt.Color("flagged:N", scale=alt.Scale(domain=[False, True],
                                                     range=[MID, DARK]), legend=None),
        tooltip=["run", alt.Tooltip("fitted:Q", format=".4g"),
                 alt.Tooltip("residual:Q", format=".4g"),
                 alt.Tooltip("studentized:Q", format=".2f")])
    zero = alt.Chart(pd.DataFrame({"y": [0.0]})).mark_rule(color="#888").encode(y="y:Q")
    vs_fit = alt.layer(zero, base.mark_circle(size=60).encode(
        x=alt.X("fitted:Q", title=titled("Fitted value", unit), scale=alt.Scale(zero=False)),
        y=alt.Y("residual:Q", title=titled("Residual", unit)))).properties(
        width=250, height=230, title="Against fitted value")
    normal = base.mark_circle(size=60).encode(
        x=alt.X("quantile:Q", title="Normal quantile"),
        y=alt.Y("studentized:Q", title="Studentized residual")).properties(
        width=250, height=230, title="Normal quantile plot")
    trace = alt.Chart(table).mark_line(color="#999").encode(
        x=alt.X("order:O", title="Run (file order)"),
        y=alt.Y("residual:Q", title=titled("Residual", unit)))
    order = alt.layer(zero, trace, base.mark_circle(size=60).encode(
        x="order:O", y="residual:Q")).properties(
        width=250, height=230, title="In run order")
    return alt.hconcat(vs_fit, normal, order)


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
        x="value:Q", y="desirability:Q",
        tooltip=[alt.Tooltip("value:Q", format=".4g", title="predicted"),
                 alt.Tooltip("desirability:Q", format=".3f")])
    return alt.layer(line, dot).properties(height=170)


def contour_chart(grid: pd.DataFrame, value: str, value_title: str, x_title: str,
                  y_title: str, marker: pd.DataFrame, n: int) -> alt.LayerChart:
    """A filled contour map (banded colours) of ``value`` over the grid's x and y.

    Cells outside the region where every response meets its limits are
    veiled in grey, so the region that meets them all stands out.
    ``grid``: columns x, y, ``value``, feasible. ``marker``: columns x, y.
    """
    dx = (grid["x"].max() - grid["x"].min()) / max(n - 1, 1)
    dy = (grid["y"].max() - grid["y"].min()) / max(n - 1, 1)
    data = grid.assign(x2=grid["x"] + dx, y2=grid["y"] + dy,
                       x1=grid["x"] - dx / 2, y1=grid["y"] - dy / 2)
    data["x2"], data["y2"] = data["x1"] + dx, data["y1"] + dy
    xs = alt.X("x1:Q", title=x_title, scale=alt.Scale(zero=False, nice=False))
    ys = alt.Y("y1:Q", title=y_title, scale=alt.Scale(zero=False, nice=False))
    heat = alt.Chart(data).mark_rect().encode(
        x=xs, x2="x2:Q", y=ys, y2="y2:Q",
        color=alt.Color(f"{value}:Q", bin=alt.Bin(maxbins=12),
                        scale=alt.Scale(scheme=SCHEME), title=value_title),
        tooltip=[alt.Tooltip("x:Q", format=".4g", title=x_title),
                 alt.Tooltip("y:Q", format=".4g", title=y_title),
                 alt.Tooltip(f"{value}:Q", format=".4g", title=value_title),
                 alt.Tooltip("feasible:N", title="meets every limit")])
    veil = alt.Chart(data[~data["feasible"]]).mark_rect(color="#bbbbbb", opacity=0.55).encode(
        x=xs, x2="x2:Q", y=ys, y2="y2:Q")
    dot = alt.Chart(marker).mark_point(shape="cross", size=220, color="white",
                                       strokeWidth=3).encode(x="x:Q", y="y:Q")
    return alt.layer(heat, veil, dot).properties(height=420)
