"""Recommended settings: the best balance, alternatives, maps, what-if."""
from __future__ import annotations

import pandas as pd
import streamlit as st

from tradeoff import TradeoffError
from tradeoff.report.exports import CAUTION, solutions_table
from tradeoff.search.chance import CHANCE_RULE, chance_text
from tradeoff_ui import cached, charts, panels, text, triangle, what_if
from tradeoff_ui.shown import num, span

ss = st.session_state

# -- read state ---------------------------------------------------------------
st.title("Recommended settings")
st.info(CAUTION, icon=":material/info:")
try:
    study = cached.current_study()
except TradeoffError as exc:
    st.error(text.plain(exc))
    st.stop()
panels.stop_without_factors(study)
try:
    fitted = cached.fit(study)
except TradeoffError as exc:
    st.error(text.plain(exc))
    st.stop()
numeric = [f.name for f in study.factors if not f.is_categorical]

# -- widgets: search options ------------------------------------------------------
c1, c2, c3 = st.columns([2, 3, 3])
ss["top"] = c1.number_input("Solutions to list (best + alternatives)", 1, 10,
                            value=int(ss["top"]), key="r_top")
aim_labels = {"balance": "best balance",
              "production": "most likely to hold in production"}
ss["aim"] = c2.radio("Put first", list(aim_labels), format_func=aim_labels.get,
                     index=list(aim_labels).index(ss["aim"]), horizontal=True, key="r_aim",
                     help="Most likely to hold in production: the settings with the highest "
                          "chance that one production batch meets every limit, allowing for "
                          "each factor's spread in production (set on the targets view), "
                          "shown beside the best balance with the D it gives up.")
rank_labels = {"desirability": "overall desirability D",
               "chance": "chance of meeting every limit",
               "production": "that chance in production"}
ss["rank_by"] = c3.radio("Order the rest by", list(rank_labels), format_func=rank_labels.get,
                         index=list(rank_labels).index(ss["rank_by"]), horizontal=True,
                         key="r_rank")

# -- call the library: the search ------------------------------------------------------
try:
    result = cached.optimize(study, fitted)
except TradeoffError as exc:
    st.error(text.plain(exc))
    st.stop()

# -- show: the solutions ------------------------------------------------------------------
if not result.feasible:
    st.error("No setting in the searched region brings every goal within its limits "
             "(D = 0 everywhere); the settings shown come closest."
             + (" Out of reach anywhere: " + text.plain(", ".join(result.unreachable))
                if result.unreachable else ""))
table = solutions_table(result)
units = {f.name: f.unit for f in study.factors}
st.subheader("Best settings and alternatives")
st.caption("D is the overall desirability (0 to 1, higher is better). 'Chance all within "
           "limits' is the estimated chance that one batch made at these settings lands "
           "within the limits of every response with a goal, allowing for the scatter "
           "the runs showed. " + CHANCE_RULE)
shown = pd.DataFrame({"solution": table["solution"], "D": table["D"].map(lambda v: num(v, 3)),
                      "chance all within limits": table["chance_all"].map(chance_text)})
if "chance_all_production" in table:
    st.caption("'Chance in production' also lets each factor stray from its setting by its "
               "production spread: " + ", ".join(
                   f"{text.plain(k)} SD {v:g}" for k, v in result.production_sd.items())
               + ". 'D given up' is how much lower D is than at the best balance.")
    shown["chance in production"] = table["chance_all_production"].map(chance_text)
if "d_given_up" in table:
    shown["D given up"] = table["d_given_up"].map(lambda v: num(v, 3))
for f in study.factors:
    title = f"{f.name} ({f.unit})" if f.unit else f.name
    shown[title] = table[f.name].map(num) if f.name in numeric else table[f.name]
if table["out_of_limits"].astype(str).str.strip().any():  # an empty column only widens
    shown["outside limits"] = table["out_of_limits"]
st.dataframe(shown, hide_index=True, key="r_solutions")

labels = [s.label for s in result.solutions]
chosen_label = st.selectbox("Look closer at", labels,
                            index=min(ss["chosen"], len(labels) - 1), key="r_chosen")
ss["chosen"] = labels.index(chosen_label)
chosen = result.solutions[ss["chosen"]]

pct = f"{study.confidence:.0%}"
rows = []
for name, o in chosen.responses.items():
    r = study.response(name)
    rows.append({"response": r.display(), "predicted": num(o.predicted),
                 f"mean ({pct})": span(*o.ci), f"one batch ({pct})": span(*o.pi),
                 "desirability": num(o.desirability, 3),
                 "chance within limits": chance_text(o.chance_in_limits)})
    if o.transmitted_sd is not None:
        rows[-1].update({"spread SD in production": num(o.transmitted_sd),
                         "mean shift": num(o.mean_shift)})
st.markdown(f"**{text.plain(chosen.label)}**: D = {chosen.desirability:.3f}"
            + ("" if chosen.chance_all is None else
               f", chance that every response lands within its limits: "
               f"**{chance_text(chosen.chance_all)}**")
            + ("" if chosen.chance_all_production is None else
               f"; in production: **{chance_text(chosen.chance_all_production)}**"))
st.caption(f"'mean' is the {pct} confidence interval of the average of many batches; "
           f"'one batch' is the prediction interval for a single new batch (wider, "
           "because one batch scatters).")
st.dataframe(pd.DataFrame(rows), hide_index=True, key="r_predictions")
for w in (*chosen.warnings, *result.warnings):
    st.warning(text.plain(w))
for note in result.not_informed_notes():  # a level choice the runs cannot judge
    st.warning(text.plain(note))
for name, reason in fitted.skipped.items():
    st.warning(text.plain(f"{name} has no model and takes no part: {reason}"))
if result.assumptions:
    st.caption("How the chances were worked out: "
               + text.plain(" ".join(result.assumptions)))

# -- maps ---------------------------------------------------------------------------------
best = result.solutions[0]
# a blend's components go in the triangle below: two of them over a square would
# hold the others off the total
mappable = [n for n in numeric if not getattr(study.factor(n), "is_component", False)]
blend = any(getattr(f, "is_component", False) for f in study.factors)
if len(mappable) >= 2 or not blend:  # a blend without two process factors: the triangle
    st.subheader("Maps over two factors")
if len(mappable) < 2:
    if not blend:
        st.caption("Maps need two numeric factors.")
else:
    has_d = bool(fitted.models) and any(r.goal.active for r in study.responses)
    what_options = (["limits", "D"] if has_d else []) + list(fitted.models)
    what_labels = {"limits": "every limit at once", "D": "overall desirability D"}
    m1, m2, m3 = st.columns(3)
    shown_value = m1.selectbox("Show", what_options, key="r_map_value",
                               format_func=lambda n: what_labels.get(n) or
                               study.response(n).display())
    x = m2.selectbox("Across", mappable, index=0, key="r_map_x",
                     format_func=lambda n: study.factor(n).display())
    y = m3.selectbox("Up", [n for n in mappable if n != x], index=0, key="r_map_y",
                     format_func=lambda n: study.factor(n).display())
    held = {k: v for k, v in chosen.settings.items() if k not in (x, y)}
    fx, fy = study.factor(x), study.factor(y)
    marks = pd.DataFrame({"what": [f"{best.label} (recommended)"],
                          "x": [best.settings[x]], "y": [best.settings[y]]})
    if chosen is not best:
        marks.loc[1] = [f"{chosen.label} (chosen)", chosen.settings[x], chosen.settings[y]]
    try:
        if shown_value == "limits":
            lmap = cached.limits_map(study, fitted, x, y, held)
            d_lines = cached.contour_lines(study, fitted, "D", x, y, held) if has_d else None
        else:
            grid = cached.contour(study, fitted, x, y, chosen.settings)
            lines = cached.contour_lines(study, fitted, shown_value, x, y, held)
    except TradeoffError as exc:
        st.error(text.plain(exc))
    else:
        held_text = text.plain(", ".join(
            f"{k} = {v if isinstance(v, str) else format(v, '.4g')}" for k, v in held.items()))
        if shown_value == "limits":
            titles = {r.name: r.display() for r in study.responses}
            charts.show(charts.limits_chart, lmap, titles, fx.display(), fy.display(),
                        marks, d_lines, width="stretch")
            st.caption(f"Held at {held_text}. Each line is one response's limit, in that "
                       "response's colour and dash, with short ticks on the side where the "
                       "limit fails. The thick grey outline surrounds the settings where "
                       f"every limit (and every rule among factors) holds: "
                       f"{lmap.share:.0%} of this map. Faint dotted lines: D.")
        else:
            title = "D" if shown_value == "D" else charts.titled(
                study.response(shown_value).label, study.response(shown_value).unit)
            charts.show(charts.contour_chart, grid, lines, shown_value, title,
                        fx.display(), fy.display(), marks,
                        width="stretch")
            st.caption(f"Held at {held_text}. Each line joins settings with the same "
                       f"predicted {'D' if shown_value == 'D' else 'value'}; the number "
                       "on it is that value.")

# -- blend triangle (studies with components) --------------------------------------------
triangle.blend_triangle(study, fitted, best, chosen)

# -- slices -------------------------------------------------------------------------------
st.subheader("Along each factor")
st.caption(f"One factor moves across its searched range; every other factor stays at "
           f"{text.plain(chosen.label)}"
           + ("; a blend component moves with the other components keeping their ratios "
              "to each other, so the blend still adds up"
              if any(getattr(f, "is_component", False) for f in study.factors) else "")
           + f". Band: where one new batch is expected ({pct} prediction "
           "interval); dashed lines: the limits; the upright line marks the current setting.")
try:
    along = cached.slices(study, fitted, chosen.settings)
except TradeoffError as exc:
    st.error(text.plain(exc))
else:
    factor = st.selectbox("Factor", study.factor_names, key="r_slice_factor",
                          format_func=lambda n: study.factor(n).display())
    part = along[along["factor"] == factor]
    names = list(dict.fromkeys(part["response"]))
    cols = st.columns(3)
    for i, name in enumerate(names):
        title = ("overall desirability D" if name == "D" else
                 study.response(name).display())
        charts.show(charts.slice_chart, part[part["response"] == name], title,
                    study.factor(factor).display(),
                    where=cols[i % 3], width="stretch")

# -- what-if ------------------------------------------------------------------------------
what_if.what_if_panel(study, fitted, chosen, pct)

# -- make next ----------------------------------------------------------------------------
panels.make_next(study, fitted)
