"""The blend triangle panel of the results view (studies with three or more components).

Runs like a view: read state -> widgets -> call the library (through
``cached``) -> show. No statistics here: lines, limits and positions come from
``tradeoff.maps.ternary``.
"""
from __future__ import annotations

import pandas as pd
import streamlit as st

from tradeoff import TradeoffError
from tradeoff.maps.ternary import ternary_position, three_with_room
from tradeoff.maps.ternary_pictures import ternary_axes
from tradeoff_ui import cached, charts, text

__all__ = ["blend_triangle"]

# The triangle's width in px: the whole main column at 1280 px (about 820 px wide),
# so the blends are read at a size where 1 % is a visible step
SIZE = 780


def blend_triangle(study, fitted, best, chosen) -> None:
    """Contour lines or the limits map over three components, the rest held at the
    chosen solution; the recommendation and the chosen solution marked."""
    comps = [f for f in study.factors if getattr(f, "is_component", False)]
    if len(comps) < 3:
        return
    st.subheader("Blend triangle")
    has_d = bool(fitted.models) and any(r.goal.active for r in study.responses)
    what_options = (["limits", "D"] if has_d else []) + list(fitted.models)
    what_labels = {"limits": "every limit at once", "D": "overall desirability D"}
    names = [c.name for c in comps]
    left, right = st.columns([1, 2])
    shown_value = left.selectbox("Show in the triangle", what_options, key="r_tri_value",
                                 format_func=lambda n: what_labels.get(n) or
                                 study.response(n).display())
    if len(comps) > 3:
        # as the report does: three the held components leave room for
        three = right.multiselect("Three components", names,
                                  default=three_with_room(study, {n: chosen.settings[n]
                                                                  for n in names}),
                                  max_selections=3, key="r_tri_components",
                                  format_func=lambda n: study.factor(n).display())
        if len(three) != 3:
            st.caption("Choose three components to draw the triangle.")
            return
    else:
        three = names
    settings = chosen.settings
    try:
        points = pd.DataFrame([{n: best.settings[n] for n in names},
                               {n: chosen.settings[n] for n in names}])
        where = ternary_position(study, points, three,
                                 reference={n: settings[n] for n in names})
        marks = pd.DataFrame({"what": [f"{best.label} (recommended)"],
                              "x": [where["x"][0]], "y": [where["y"][0]]})
        if chosen is not best:
            marks.loc[1] = [f"{chosen.label} (chosen)", where["x"][1], where["y"][1]]
        labels = {c.name: c.label for c in comps}
        units = {c.name: c.unit for c in comps}
        if shown_value == "limits":
            tlim = cached.ternary_limits(study, fitted, three, settings)
            d_lines = cached.ternary_lines(study, fitted, "D", three, settings) if has_d \
                else None
            axes = ternary_axes(tlim.lines.attrs, labels, units)
        else:
            lines = cached.ternary_lines(study, fitted, shown_value, three, settings)
            wash = cached.ternary_wash(study, fitted, three, settings)
            tlim = cached.ternary_limits(study, fitted, three, settings)
            axes = ternary_axes(lines.attrs, labels, units)
    except TradeoffError as exc:
        st.error(text.plain(exc))
        return
    held = [n for n in names if n not in three]
    others = [f for f in study.factors if f.name not in three]
    shown = {f.display(): (settings[f.name] if isinstance(settings[f.name], str)
                           else format(settings[f.name], ".4g")) for f in others}
    held_text = text.plain(", ".join(f"{k} = {v}" for k, v in shown.items())) or "nothing else"
    if shown_value == "limits":
        titles = {r.name: r.display() for r in study.responses}
        charts.show(charts.ternary_limits_chart, tlim, axes, titles, marks, d_lines,
                    SIZE, width="content")
        st.caption(f"Held at {held_text} ({text.plain(chosen.label)}). Each line is one "
                   "response's limit, in that response's colour and dash, with short ticks "
                   "on the side where the limit fails. The thin black outline surrounds the "
                   "blends within every component's bounds; the thick dark outline, the "
                   f"blends where every limit also holds: {tlim.share:.0%} of the allowed "
                   "blends. Faint dotted lines: D.")
    else:
        value = "D" if shown_value == "D" else "predicted"
        part = wash[wash["response"] == (wash["response"].iloc[0] if value == "D"
                                         else shown_value)]
        r = None if shown_value == "D" else study.response(shown_value)
        title = "overall desirability D" if r is None else charts.titled(r.label, r.unit)
        charts.show(charts.ternary_chart, part, lines, axes, tlim.bounds, value, title, marks,
                    SIZE, width="content")
        st.caption(f"Held at {held_text} ({text.plain(chosen.label)}). Each line joins "
                   f"blends with the same predicted {'D' if r is None else 'value'}; the "
                   "number on it is that value. The black outline surrounds the blends "
                   "within every component's bounds; outside it the lines are faint.")
    st.caption("How to read it: each corner is the blend richest in one component; a side's "
               "scale gives the amount of the component whose corner is at the scale's "
               "high end, read along the faint lines parallel to the side opposite that "
               "corner. The three amounts add up to "
               + (f"what {', '.join(held)} leave." if held else "the total."))
