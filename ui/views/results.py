"""Recommended settings: the best balance, alternatives, maps, what-if."""
from __future__ import annotations

import pandas as pd
import streamlit as st

from tradeoff import TradeoffError
from tradeoff.report.exports import CAUTION, solutions_table
from tradeoff.maps.pictures import limits_note
from tradeoff.maps.trace_picture import trace_note
from tradeoff.search.chance import CHANCE_RULE, NOT_STATED, chance_text
from tradeoff.search.result import fewer_solutions_text
from tradeoff_ui import (cached, charts, frontier_panel, new_guide, panels, state, text,
                         triangle, what_if)
from tradeoff_ui.shown import blank_none, num, span

ss = st.session_state

# -- read state ---------------------------------------------------------------
st.title("Recommended settings")
cautions = st.empty()  # the page's one caution box, filled once its cautions are known
cautions.info(CAUTION, icon=":material/info:")
study = panels.study_or_stop()
new_guide.stop_without_goals(study)
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
st.caption("D is the overall desirability (0 to 1, higher is better). 'All limits met' "
           "is the estimated chance that one batch made at these settings lands "
           "within the limits of every response with a goal, allowing for the scatter "
           "the runs showed. " + CHANCE_RULE)
_held_back = [s.chance_withheld for s in result.solutions]
shown = pd.DataFrame({"solution": table["solution"], "D": table["D"].map(lambda v: num(v, 3)),
                      "all limits met": [
                          NOT_STATED if w else chance_text(c)
                          for w, c in zip(_held_back, table["chance_all"])]})
if "chance_all_production" in table:
    spread_words = ", ".join(
        text.plain(f"{study.factor(k).label} SD {v:g} {study.factor(k).unit}".strip())
        for k, v in result.production_sd.items())
    st.caption(("'Chance in production' also lets each factor stray from its setting by "
                f"its production spread: {spread_words}." if spread_words else
                "'Chance in production': no factor has a production spread yet (set one "
                "on the targets view), so it allows for the run-to-run scatter only.")
               + " 'D given up' is how much lower D is than at the best balance.")
    shown["chance in production"] = [NOT_STATED if w else chance_text(c) for w, c in
                                     zip(_held_back, table["chance_all_production"])]
if "d_given_up" in table:
    shown["D given up"] = table["d_given_up"].map(lambda v: num(v, 3))
for f in study.factors:
    # headed by the label; the unit goes with each number (the headers would not fit)
    shown[f.label] = (table[f.name].map(lambda v, u=f.unit: f"{num(v)} {u}".strip())
                      if f.name in numeric else table[f.name])
labels_of = {x.name: x.label for x in (*study.factors, *study.responses)}
if any(s.out_of_limits for s in result.solutions):  # a column of blanks only takes room
    shown["outside limits"] = [", ".join(labels_of.get(n, n) for n in s.out_of_limits)
                               for s in result.solutions]
st.dataframe(shown, hide_index=True, key="r_solutions")
if result.steps:  # the recipes are rounded (tradeoff.search.rounding)
    st.caption("Settings are rounded to steps a lab can weigh or set (" + text.plain(", ".join(
        f"{study.factor(k).label} {v:g} {study.factor(k).unit}".strip()
        for k, v in result.steps.items())) + "; set another with a step line under the "
        "factor in the study file). Every figure here is for the rounded recipe.")
_fewer = fewer_solutions_text(result, int(ss["top"]))
if _fewer:
    st.caption(text.plain(_fewer[:1].upper() + _fewer[1:] + "."))

labels = [s.label for s in result.solutions]
chosen_label = st.selectbox("Look closer at", labels,
                            index=min(ss["chosen"], len(labels) - 1), key="r_chosen")
ss["chosen"] = labels.index(chosen_label)
chosen = result.solutions[ss["chosen"]]
chosen = frontier_panel.frontier_panel(study, fitted, result, chosen)  # a picked point
# a solution or a picked frontier point, pinned to compare (views/compare.py)
if st.button(f"Pin {text.plain(chosen.label)} to compare", key="r_pin"):
    st.toast(text.plain(state.pin_recipe(chosen.label, chosen.settings)))

pct = f"{study.confidence:.0%}"
production = chosen.chance_all_production is not None
rows = []
for name, o in chosen.responses.items():
    r = study.response(name)
    far = o.extrapolated == "far" and o.goal != "none"
    rows.append({"response": r.display(), "predicted": num(o.predicted),
                 f"mean ({pct})": span(*o.ci), f"one batch ({pct})": span(*o.pi),
                 "d": num(o.desirability, 3),
                 "chance in limits": NOT_STATED if far else
                 chance_text(o.chance_in_limits)})
    if production:
        rows[-1]["chance in production"] = NOT_STATED if far else chance_text(
            o.chance_in_production if o.chance_in_production is not None
            else o.chance_in_limits)
    if o.transmitted_sd is not None:
        rows[-1].update({"spread SD in production": num(o.transmitted_sd),
                         "mean shift": num(o.mean_shift)})
# a factor's own goal is a row too: its limits count in the chance of all at once
for name, d in chosen.factor_desirability.items():
    f = study.factor(name)
    rows.append({"response": f"{f.display()}, factor goal", "predicted":
                 num(chosen.settings[name]), f"mean ({pct})": "", f"one batch ({pct})": "",
                 "d": num(d, 3),
                 "chance in limits": chance_text(1.0 if d > 0 else 0.0)})
    if production:
        rows[-1]["chance in production"] = chance_text(
            chosen.factor_chance_production.get(name, 1.0 if d > 0 else 0.0))
_all = (NOT_STATED if chosen.chance_withheld else
        None if chosen.chance_all is None else chance_text(chosen.chance_all))
_prod = (None if chosen.chance_all_production is None else
         NOT_STATED if chosen.chance_withheld else chance_text(chosen.chance_all_production))
st.markdown(f"**{text.plain(chosen.label)}**: D = {chosen.desirability:.3f}"
            + ("" if _all is None else
               f", chance that every response lands within its limits: **{_all}**")
            + ("" if _prod is None else f"; in production: **{_prod}**"))
# a prediction past the storage study: said first, beside the figures it concerns
_reach_notes = [study.reach[n].sentence(o.predicted, f"{study.response(n).display()}")
                for n, o in chosen.responses.items()
                if o.extrapolated and o.goal != "none"]
for note in _reach_notes:
    st.warning(text.plain(note[:1].upper() + note[1:]), icon=":material/schedule:")
st.caption(f"d is each goal's desirability. 'mean' is the {pct} confidence interval of "
           "the average of many batches; "
           f"'one batch' is the prediction interval for a single new batch (wider, "
           "because one batch scatters)."
           + (" A factor with a goal of its own is a row too: in production it strays "
              "from its setting and may leave its limits, which lowers the chance of "
              "all at once." if production and chosen.factor_desirability else ""))
st.dataframe(blank_none(pd.DataFrame(rows).fillna("")), hide_index=True,
             key="r_predictions")
_own = {study.reach[n].sentence(o.predicted) for n, o in chosen.responses.items()
        if o.extrapolated and o.goal != "none"}
panels.show_notices(
    [w for w in (*chosen.warnings, *result.warnings) if w not in _own]
    + list(result.not_informed_notes())  # a level choice the runs cannot judge
    + [f"{name} has no model and takes no part: {reason}"
       for name, reason in fitted.skipped.items()],
    cautions=cautions, shown=(CAUTION,))
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
    # the map is held at the chosen solution's other settings: mark the chosen one,
    # and the recommendation only when it shares those settings (it lies on this map)
    marks = pd.DataFrame({"what": [f"{chosen.label} (chosen)" if chosen is not best
                                   else f"{best.label} (recommended)"],
                          "x": [chosen.settings[x]], "y": [chosen.settings[y]]})
    if chosen is not best and all(
            best.settings[k] == v if isinstance(v, str) else
            abs(best.settings[k] - v) <= 1e-6 * max(1.0, abs(v))
            for k, v in held.items()):
        marks.loc[1] = [f"{best.label} (recommended)", best.settings[x], best.settings[y]]
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
            f"{study.factor(k).label} = "
            + (v if isinstance(v, str) else f"{v:.4g} {study.factor(k).unit}".strip())
            for k, v in held.items()))
        if shown_value == "limits":
            titles = {r.name: r.display() for r in study.responses}
            charts.show(charts.limits_chart, lmap, titles, fx.display(), fy.display(),
                        marks, d_lines, {r.name: (r.label, r.unit) for r in study.responses},
                        width="content")
            st.caption(f"Held at {held_text}. {limits_note(lmap)}")
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

# -- traces -------------------------------------------------------------------------------
st.subheader("How each response follows each factor")
st.caption(text.plain(trace_note(study, chosen.label)))
try:
    along = cached.slices(study, fitted, chosen.settings)
except TradeoffError as exc:
    st.error(text.plain(exc))
else:
    factor_titles = {f.name: f.label for f in study.factors}
    titles = {name: "Overall desirability D" if name == "D" else study.response(name).display()
              for name in dict.fromkeys(along["response"])}
    charts.show(charts.traces_chart, along, titles, factor_titles, width="content")

# -- what-if ------------------------------------------------------------------------------
what_if.what_if_panel(study, fitted, chosen, pct)
if st.button("Pin these what-if settings to compare", key="r_pin_whatif"):
    _n = sum(k.startswith("what-if") for k in ss["pins"]) + 1
    st.toast(text.plain(state.pin_recipe(f"what-if {_n}", ss["whatif"])))

# -- make next ----------------------------------------------------------------------------
panels.make_next(study, fitted, result.best)
