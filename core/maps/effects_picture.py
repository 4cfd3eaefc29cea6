"""The effects figure: each term's estimate as a dot with its margins.

Drawing only: every number comes from ``tradeoff.maps.estimates``. One row
per term, the largest effect at the top; a line at zero; a thick bar for the
margin of the term alone and a thin line for the margin of all terms
together; the dot filled when the term stands out, open when it could be
noise. It reads in black-and-white print.
"""
from __future__ import annotations

import pandas as pd

from .estimates import VERDICTS

__all__ = ["effects_picture", "term_title", "ROW_HEIGHT"]

ROW_HEIGHT = 24  # per term: dots and bars stay apart, labels stay readable
INK, BAR, ZERO = "#23262b", "#a9c3cb", "#6b7178"
# filled for terms that stand out (darker when they do among all terms), open otherwise
_FILL = {VERDICTS[0]: INK, VERDICTS[1]: "#1b6f8a", VERDICTS[2]: "#ffffff",
         VERDICTS[3]: "#c4c9ce"}


def term_title(term: str, labels: dict) -> str:
    """A model term in the study's labels, as a reader names it: 'protein:mix_temp'
    -> 'Protein content × Mixing temperature', 'protein^2' -> 'Protein content²',
    'binder[date paste]' -> 'Binder type = date paste'. ``labels``: factor name -> label."""
    def part(p: str) -> str:
        name, bracket, level = p.partition("[")
        name, caret, power = name.partition("^")
        return (labels.get(name, name) + ({"2": "\u00b2", "3": "\u00b3"}.get(power, f"^{power}")
                                          if caret else "")
                + (f" = {level[:-1]}" if bracket else ""))

    return " \u00d7 ".join(part(p) for p in term.split(":"))


def effects_picture(estimates: pd.DataFrame, x_title: str, *, width: int | None = None):
    """Dots and bars of ``effect_estimates``, ordered by size, a zero line.

    ``x_title``: the axis title (the effect's quantity and unit).
    """
    import altair as alt

    data = estimates.assign(size=estimates["effect"].abs())
    order = list(data.sort_values("size", ascending=False, kind="stable")["term"])
    y = alt.Y("term:N", sort=order, title=None,
              axis=alt.Axis(labelOverlap=False, labelLimit=240, ticks=False, domain=False,
                            grid=True, gridColor="#eceff1"))
    present = [v for v in VERDICTS if (data["verdict"] == v).any()]
    fill = alt.Fill("verdict:N", scale=alt.Scale(domain=present,
                                                 range=[_FILL[v] for v in present]),
                    # one entry a row: the chart may sit in a narrow column
                    legend=alt.Legend(title=None, orient="bottom", direction="vertical",
                                      symbolStrokeColor=INK, symbolStrokeWidth=1.5,
                                      labelLimit=300))
    tips = [alt.Tooltip("term:N"), alt.Tooltip("effect:Q", format=".4g"),
            alt.Tooltip("alone_low:Q", format=".4g", title="alone, from"),
            alt.Tooltip("alone_high:Q", format=".4g", title="alone, to"),
            alt.Tooltip("together_low:Q", format=".4g", title="all terms, from"),
            alt.Tooltip("together_high:Q", format=".4g", title="all terms, to"),
            alt.Tooltip("verdict:N")]
    x = alt.X("effect:Q", title=x_title, scale=alt.Scale(zero=True, nice=True))
    zero = alt.Chart(pd.DataFrame({"effect": [0.0]})).mark_rule(
        color=ZERO, strokeWidth=1.2).encode(x=alt.X("effect:Q", title=x_title))
    layers = [zero]
    if data["alone_low"].notna().any():
        margins = data.dropna(subset=["alone_low"])
        layers += [
            alt.Chart(margins).mark_rule(color=INK, strokeWidth=1.2).encode(
                x=alt.X("together_low:Q", title=x_title), x2=alt.X2("together_high:Q"), y=y),
            alt.Chart(margins).mark_rule(color=BAR, strokeWidth=7, strokeCap="round").encode(
                x=alt.X("alone_low:Q", title=x_title), x2=alt.X2("alone_high:Q"), y=y)]
    layers.append(alt.Chart(data).mark_point(shape="circle", size=80, stroke=INK,
                                             strokeWidth=1.6, opacity=1).encode(
        x=x, y=y, fill=fill, tooltip=tips))
    chart = alt.layer(*layers).properties(height=max(3, len(data)) * ROW_HEIGHT)
    return chart.properties(width=width) if width else chart
