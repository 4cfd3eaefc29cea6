"""The report's charts: Vega-Lite specifications rendered to inline SVG without a browser.

Each response's effects as bars, and each goal's desirability curve with the
best setting's prediction marked.
"""
from __future__ import annotations

import pandas as pd

from .data import _get, _is_clear

__all__ = ["_svg", "_chart_div", "_effects_chart", "_curve_chart", "_arrhenius_chart"]

_CLEAR, _NOISE, _CURVE, _MARK = "#2d4a53", "#cbbfa9", "#b5651d", "#2d4a53"


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


def _effects_chart(response, rep: dict, alpha: float, leave_out=frozenset()) -> str:
    """Horizontal bars: each term's effect (coefficient for squared terms); terms in
    ``leave_out`` are not drawn."""
    import altair as alt

    rows = []
    blocks = set((rep.get("blocks") or {}).get("terms", ()))
    for term in rep["terms"]:
        if term == "intercept" or term in blocks or term in leave_out:
            continue  # block shifts are not factor effects
        effect = _get(rep["effects"], term)
        size = effect if effect is not None else _get(rep["coefficients"], term)
        if size is None:
            continue
        clear = _is_clear(rep, term, alpha)
        rows.append({"term": term + ("" if effect is not None else " (coef.)"),
                     "size": size, "judged": {True: "clear", False: "within noise"}.get(
                         clear, "not judged")})
    # the last level of a factor of three or more levels: minus the sum of the others
    for d in rep.get("derived_coefficients") or []:
        size = d.get("effect", d.get("estimate"))
        if size is None:
            continue
        judged = ("not judged" if d.get("p") is None else
                  "clear" if d["p"] < alpha else "within noise")
        rows.append({"term": d["term"], "size": size, "judged": judged})
    if not rows:
        return ""
    frame = pd.DataFrame(rows)
    frame["order"] = -frame["size"].abs()
    height = max(60, 18 * len(frame))
    levels = any("[" in t and not t.startswith("block[") for t in frame["term"])
    chart = alt.Chart(frame, title=f"Effects on {response.label}").mark_bar().encode(
        y=alt.Y("term:N", sort=alt.SortField("order"), title=None,
                axis=alt.Axis(labelLimit=260)),
        x=alt.X("size:Q", title=("effect (low to high; a level: its deviation from the "
                                 "average over levels)" if levels else
                                 "effect (low to high setting)")
                + (f", {response.unit}" if response.unit else "")),
        color=alt.Color("judged:N", title=None,
                        scale=alt.Scale(domain=["clear", "within noise", "not judged"],
                                        range=[_CLEAR, _NOISE, "#9aa3ad"])),
    ).properties(width=420, height=height)
    return _svg(chart)


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
