"""How far each one-at-a-time change moves the recommendation, as a chart.

Drawing only: the numbers come from ``tradeoff.search.sensitivity``. One row
per change (grouped by goal), a bar from 0 to the distance the best settings
move (coded units), a darker bar for a change that makes another
recommendation (farther than ``MOVES`` or to another level); dashed lines at
the "no move" and "another recommendation" thresholds.
"""
from __future__ import annotations

import pandas as pd

from .pictures import INK

__all__ = ["steadiness_picture"]

_CALM, _MOVED, _RULE = "#a9cfcb", "#1d4f5a", "#8c8577"


def steadiness_picture(changes: pd.DataFrame, *, still: float, moves: float,
                       width: int = 420):
    """Bars of ``changes['move']`` per change (``Sensitivity.changes``)."""
    import altair as alt

    data = changes[["goal", "words", "move", "levels_changed", "feasible"]].copy()
    data["kind"] = ["another recommendation" if (m > moves or lv) else
                    "a small move" for m, lv in zip(data["move"], data["levels_changed"])]
    data["change"] = [w.split("'s ", 1)[1] if "'s " in w else w for w in data["words"]]
    order = list(data["words"])
    y = alt.Y("words:N", sort=order, title=None,
              axis=alt.Axis(labelLimit=360, labelFontSize=10.5))
    bars = alt.Chart(data).mark_bar(height=8).encode(
        x=alt.X("move:Q", title="how far the best settings move (coded units)",
                scale=alt.Scale(domainMin=0, nice=True)),
        y=y,
        color=alt.Color("kind:N", title=None,
                        scale=alt.Scale(domain=["a small move", "another recommendation"],
                                        range=[_CALM, _MOVED]),
                        legend=alt.Legend(orient="top")),
        tooltip=[alt.Tooltip("words:N", title="change"),
                 alt.Tooltip("move:Q", format=".3f", title="moved (coded)"),
                 alt.Tooltip("levels_changed:N", title="levels changed")])
    rules = alt.Chart(pd.DataFrame({"at": [still, moves]})).mark_rule(
        color=_RULE, strokeDash=[4, 3]).encode(x=alt.X("at:Q"))
    return alt.layer(rules, bars).properties(
        width=width, height=max(120, 14 * len(data))).configure_axis(
        labelColor=INK, titleColor=INK)
