"""Recommended settings: the best balance, alternatives, maps, what-if."""
from __future__ import annotations

import pandas as pd
import streamlit as st

from tradeoff import TradeoffError
from tradeoff.report.exports import CAUTION, solutions_table
from tradeoff_ui import cached, charts, text

ss = st.session_state

# -- read state ---------------------------------------------------------------
st.title("Recommended settings")
st.info(CAUTION, icon=":material/info:")
try:
    study = cached.current_study()
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
           "the runs showed.")
shown = table.rename(columns={n: f"{n} ({u})" if u else n for n, u in units.items()})
if "chance_all_production" in table:
    st.caption("'Chance in production' also lets each factor stray from its setting by its "
               "production spread: " + ", ".join(
                   f"{text.plain(k)} SD {v:g}" for k, v in result.production_sd.items())
               + ". 'D given up' is how much lower D is than at the best balance.")
st.dataframe(shown, hide_index=True, key="r_solutions",
             column_config={"D": st.column_config.NumberColumn(format="%.3f"),
                            "chance_all": st.column_config.NumberColumn(
                                "chance all within limits", format="percent"),
                            "chance_all_production": st.column_config.NumberColumn(
                                "chance in production", format="percent"),
                            "d_given_up": st.column_config.NumberColumn(
                                "D given up", format="%.3f"),
                            **{(f"{n} ({u})" if u else n): st.column_config.NumberColumn(
                                format="%.4g") for n, u in units.items()
                               if n in numeric}})

labels = [s.label for s in result.solutions]
chosen_label = st.selectbox("Look closer at", labels,
                            index=min(ss["chosen"], len(labels) - 1), key="r_chosen")
ss["chosen"] = labels.index(chosen_label)
chosen = result.solutions[ss["chosen"]]

rows = []
for name, o in chosen.responses.items():
    r = study.response(name)
    rows.append({"response": r.display(), "goal": o.goal, "predicted": o.predicted,
                 "mean from": o.ci[0], "mean to": o.ci[1],
                 "one batch from": o.pi[0], "one batch to": o.pi[1],
                 "desirability": o.desirability, "chance within limits": o.chance_in_limits})
    if o.transmitted_sd is not None:
        rows[-1].update({"spread SD in production": o.transmitted_sd,
                         "mean shift": o.mean_shift})
st.markdown(f"**{text.plain(chosen.label)}**: D = {chosen.desirability:.3f}"
            + ("" if chosen.chance_all is None else
               f", chance that every response lands within its limits: "
               f"**{chosen.chance_all:.1%}**")
            + ("" if chosen.chance_all_production is None else
               f"; in production: **{chosen.chance_all_production:.1%}**"))
st.caption(f"'mean from/to' is the {study.confidence:.0%} confidence interval of the "
           "average of many batches; 'one batch from/to' is the prediction interval for a "
           "single new batch (wider, because one batch scatters).")
st.dataframe(pd.DataFrame(rows), hide_index=True, key="r_predictions",
             column_config={"chance within limits": st.column_config.NumberColumn(
                 format="percent"), "desirability": st.column_config.NumberColumn(
                 format="%.3f")})
for w in (*chosen.warnings, *result.warnings):
    st.warning(text.plain(w))
for name, reason in fitted.skipped.items():
    st.warning(text.plain(f"{name} has no model and takes no part: {reason}"))
if result.assumptions:
    st.caption("How the chances were worked out: "
               + text.plain(" ".join(result.assumptions)))

# -- maps ---------------------------------------------------------------------------------
st.subheader("Maps over two factors")
if len(numeric) < 2:
    st.caption("Maps need two numeric factors.")
else:
    what_options = ["D"] + list(fitted.models)
    m1, m2, m3 = st.columns(3)
    shown_value = m1.selectbox("Show", what_options, key="r_map_value",
                               format_func=lambda n: "overall desirability D" if n == "D"
                               else study.response(n).display())
    x = m2.selectbox("Across", numeric, index=0, key="r_map_x",
                     format_func=lambda n: study.factor(n).display())
    y = m3.selectbox("Up", [n for n in numeric if n != x], index=0, key="r_map_y",
                     format_func=lambda n: study.factor(n).display())
    held = {k: v for k, v in chosen.settings.items() if k not in (x, y)}
    try:
        grid = cached.contour(study, fitted, x, y, chosen.settings)
    except TradeoffError as exc:
        st.error(text.plain(exc))
    else:
        fx, fy = study.factor(x), study.factor(y)
        title = "D" if shown_value == "D" else charts.titled(
            study.response(shown_value).label, study.response(shown_value).unit)
        marker = pd.DataFrame({"x": [chosen.settings[x]], "y": [chosen.settings[y]]})
        st.altair_chart(charts.contour_chart(grid, shown_value, title, fx.display(),
                                             fy.display(), marker, n=41), width="stretch")
        st.caption("Held at " + text.plain(", ".join(
            f"{k} = {v if isinstance(v, str) else format(v, '.4g')}"
            for k, v in held.items()))
            + f". Grey veil: some response is predicted outside its limits (or a rule "
              f"among factors is broken). Cross: {text.plain(chosen.label)}.")

# -- what-if ------------------------------------------------------------------------------
st.subheader("What if I make it like this?")
st.caption("Set the factors by hand; predictions update with their intervals.")
nonce = ss["whatif_nonce"]
if st.button(f"Start from {text.plain(chosen.label)}", key="r_whatif_reset"):
    ss["whatif"], ss["whatif_nonce"] = {}, nonce + 1
    nonce += 1
settings = {}
cols = st.columns(len(study.factors))
for col, f in zip(cols, study.factors):
    start = ss["whatif"].get(f.name, chosen.settings[f.name])
    key = f"w{ss['epoch']}.{nonce}.{f.name}"
    if f.is_categorical:
        settings[f.name] = col.selectbox(text.plain(f.display()), list(f.levels),
                                         index=list(f.levels).index(start), key=key)
    else:
        span = f.high - f.low
        settings[f.name] = col.number_input(text.plain(f.display()), value=float(start),
                                            step=float(span / 20), format="%.4g", key=key)
ss["whatif"] = settings
try:
    answer = cached.what_if(study, fitted, settings)
except TradeoffError as exc:
    st.error(text.plain(exc))
else:
    if answer.outside:
        st.warning("Outside the tested range: " + text.plain(", ".join(answer.outside))
                   + ". The model is extrapolating; predictions there are guesses.")
    if not answer.allowed:
        st.warning("These settings break a rule among factors set in the study.")
    st.markdown(f"D = {answer.desirability:.3f}; chance that every response lands "
                f"within its limits: **{answer.chance_all:.1%}**")
    shown = answer.table.assign(response=[study.response(n).display()
                                          for n in answer.table["response"]])
    st.dataframe(shown.rename(columns={
        "ci_low": "mean from", "ci_high": "mean to", "pi_low": "one batch from",
        "pi_high": "one batch to", "lower_limit": "lower limit",
        "upper_limit": "upper limit", "chance_in_limits": "chance within limits"}),
        hide_index=True, key="r_whatif_table",
        column_config={"chance within limits": st.column_config.NumberColumn(
            format="percent"), "desirability": st.column_config.NumberColumn(
            format="%.3f")})
