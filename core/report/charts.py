"""The report's charts: Vega-Lite specifications rendered to inline SVG without a browser.

Each response's effects as dots with their margins, and each goal's desirability curve with the
best setting's prediction marked.
"""
from __future__ import annotations

import pandas as pd


__all__ = ["_svg", "_chart_div", "_effects_chart", "_curve_chart", "_arrhenius_chart"]

_CURVE, _MARK = "#b5651d", "#2d4a53"


def _svg(chart) -> str:
    """Render an Altair chart to inline SVG (vl-convert: no browser, no network)."""
    import vl_convert

    from ..maps.chart_data import use_records

    # The specification is built here from checked numbers: skip schema validation.
    with use_records():
        spec = chart.to_json(validate=False)
    svg = vl_convert.vegalite_to_svg(spec)
    if svg.startswith("<?xml"):
        svg = svg[svg.index("?>") + 2:]
    return svg


def _chart_div(svg: str) -> str:
    return f'<div class="chart">{svg}</div>' if svg else ""


def _effects_chart(response, model, leave_out=frozenset(), labels: dict | None = None) -> str:
    """Each term's effect as a dot with its margins, largest at the top
    (``maps.effects_picture``), then the sentence that reads it; terms in
    ``leave_out`` are not drawn; ``labels`` (factor name -> label) names the terms."""
    import altair as alt

    from ..maps.effects_picture import effects_picture, term_title
    from ..maps.estimates import effect_estimates, effects_note
    from html import escape as esc

    estimates = effect_estimates(model, leave_out=leave_out)
    if estimates.empty:
        return ""
    scale = {"log": ", log scale", "sqrt": ", square-root scale"}.get(model.transform, "")
    unit = response.unit + scale if response.unit else scale.lstrip(", ")
    title = f"Effect ({unit})" if unit else "Effect"
    shown = estimates.assign(term=[term_title(t, labels or {}) for t in estimates["term"]])
    chart = effects_picture(shown, title, width=420).properties(
        title=alt.TitleParams(f"Effects on {response.label}", anchor="start"))
    return (_chart_div(_svg(chart))
            + f'<p class="note">{esc(effects_note(shown, model.confidence))}</p>')


def _curve_chart(item, part: pd.DataFrame, marker) -> str:
    """One goal's desirability curve, with the best setting's prediction marked."""
    import altair as alt

    from ..study.spec import GOAL_WORDS

    title = f"{item.label}: {GOAL_WORDS[item.goal.kind]}"
    line = alt.Chart(part[["value", "desirability"]], title=title).mark_line(
        color=_CURVE, strokeWidth=2.5).encode(
        x=alt.X("value:Q", title=item.display(), scale=alt.Scale(zero=False)),
        y=alt.Y("desirability:Q", title="desirability d",
                scale=alt.Scale(domain=[0, 1])))
    layers = [line]
    if marker is not None and marker[0] is not None and marker[1] is not None:
        lo, hi = float(part["value"].min()), float(part["value"].max())
        x = min(max(float(marker[0]), lo), hi)
        dot = alt.Chart(pd.DataFrame({"value": [x], "desirability": [marker[1]]})
                        ).mark_point(size=90, filled=True, color=_MARK).encode(
            x=alt.X("value:Q"), y=alt.Y("desirability:Q"))
        layers.append(dot)
    return _svg(alt.layer(*layers).properties(width=230, height=150))


def _arrhenius_chart(title: str, points: pd.DataFrame) -> str:
    """ln k against 1000 / T per run, with bounds (``maps.pictures.arrhenius_picture``);
    larger panels when there are only a product or two to show."""
    from ..maps.pictures import arrhenius_picture

    few = points["run"].nunique() <= 2
    chart = arrhenius_picture(points, title=title, width=340 if few else 150,
                              height=240 if few else 110)
    return "" if chart is None else _svg(chart)
