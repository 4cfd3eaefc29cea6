"""Confirmation runs: type what was measured at the chosen recipes and see each
value against its prediction interval, as ``tradeoff confirm`` compares them."""
from __future__ import annotations

import re

import pandas as pd
import streamlit as st

from tradeoff import TradeoffError
from tradeoff.confirm.check import check_confirmations
from tradeoff.confirm.entered import (as_typed_text, entered_name, entered_study,
                                      entered_table, measured_rows, not_measured,
                                      save_entered, study_file_addition, typed_line)
from tradeoff.study.confirmations import confirmation_runs
from tradeoff_ui import cached, editing, panels, text

ss = st.session_state

# -- read state ---------------------------------------------------------------
st.title("Confirmation runs")
study = panels.study_or_stop()
name = entered_name(study)
origin = ss["origin"]
columns = ["run"] + study.factor_names + study.response_names
try:
    listed = confirmation_runs(study, read_files=True)
except TradeoffError as exc:
    st.error(text.plain(exc))
    listed = pd.DataFrame(columns=["origin"] + columns)
others = listed[listed["origin"] != name]


def _sheet_rows() -> pd.DataFrame:
    """The batch sheet's confirmation batches in its run order, results blank."""
    recipes, _ = panels.recipes_to_make(study)
    try:
        order = panels.sheet_for(study, recipes, ss["batch"]).order
    except TradeoffError:
        order = pd.DataFrame(columns=["run", "recipe"])
    return pd.DataFrame([{"run": run, **recipes[recipe]} for run, recipe
                         in zip(order["run"], order["recipe"])], columns=columns)


def _pin_rows() -> pd.DataFrame:
    """One row per pinned recipe, results blank."""
    return pd.DataFrame([{"run": "", **settings} for settings in ss["pins"].values()],
                        columns=columns)


if ss["confirm_typed"] is None:
    mine = listed[listed["origin"] == name]
    if len(mine):
        start = mine[columns].reset_index(drop=True)
    else:  # the batch sheet's batches once one was made, else the pinned recipes
        start = _sheet_rows() if ss["batch"] else _pin_rows()
    ss["confirm_typed"] = start.astype(object)

# -- widgets: the table editor -------------------------------------------------------
st.caption("One row per confirmation batch: its settings and what was measured (leave a "
           "response blank if it was not measured). Several batches at the same settings "
           "are averaged and compared with the interval for their mean. Nothing is saved "
           "until you press save.")
if len(others):
    st.caption(f"The study already lists {len(others)} confirmation run(s) in its own "
               "tables; they are checked together with the ones typed here.")
b1, b2 = st.columns(2)
more = None
if ss["batch"] and b1.button("Add the batch sheet's batches", key="cf_add_sheet",
                             help="One row per batch of the batch sheet, in its run order"):
    more = _sheet_rows()
if ss["pins"] and b2.button("Add a row for each pinned recipe", key="cf_add_pins"):
    more = _pin_rows()
if more is not None:
    ss["confirm_typed"] = pd.concat([ss["confirm_typed"], more.astype(object)],
                                    ignore_index=True)
    ss["editor_nonce"] += 1
config = {}
for f in study.factors:  # short headers, the label and unit on hover: every column in view
    if f.is_categorical:
        config[f.name] = st.column_config.SelectboxColumn(
            f.name, options=list(f.levels), help=f.display(), width="small")
    else:
        config[f.name] = st.column_config.NumberColumn(f.name, format="%.6g",
                                                       help=f.display(), width="small")
# measured values and run ids are typed as text, blank as "" rather than the
# editor's grey "None" (the checks read the numbers and name a cell that is not one)
for r in study.responses:
    config[r.name] = st.column_config.TextColumn(
        r.name, help=f"{r.label} ({r.unit})" if r.unit else r.label, width="small",
        default="")
config["run"] = st.column_config.TextColumn("run id", width="small", default="")
ss["confirm_typed"] = as_typed_text(ss["confirm_typed"], ["run", *study.response_names])
# batches from the batch sheet or the pins carry their settings: then the results
# alone are shown (every column in view), the settings one switch away
typed = ss["confirm_typed"]
filled = len(typed) > 0 and bool(typed[study.factor_names].notna().all(axis=None))
settings_shown = st.toggle(
    "Show each batch's settings", value=not filled, key=f"cf_settings_{int(filled)}",
    help="The settings are filled in from the batch sheet or the pinned recipes; show "
         "them to check or change them, or to add a batch by hand.")
edited = editing.kept_editor(
    "confirm_typed", num_rows="dynamic", hide_index=True, column_config=config,
    width="stretch",
    column_order=None if settings_shown else ["run", *study.response_names])

# -- call the library ------------------------------------------------------------------
measured = measured_rows(study, edited) > 0
check = error = None
if measured or len(others):
    try:
        changed, files = entered_study(study, edited)
        check = check_confirmations(changed, fit=cached.fit(study), files=files)
    except TradeoffError as exc:
        error = text.plain(exc)
waiting = not_measured(study, edited)
if waiting:
    st.caption(f"Nothing measured yet in {text.plain(', '.join(waiting))}: "
               "left out of the comparison and of the saved table until a result is typed.")
if error:
    st.error(error)
    where = re.search(r"\brow (\d+)\b", error)
    line = typed_line(study, edited, int(where.group(1))) if where else None
    if line is not None:  # the message counts the saved table's rows, header first
        st.caption(f"Row {where.group(1)} of the saved table is line {line[0]} of the table "
                   f"above" + (f" (run {text.plain(line[1])})." if line[1] else "."))

# -- show: the comparison ------------------------------------------------------------------
if check is not None:
    st.subheader("Measured against the prediction intervals")
    v = check.verdicts
    st.dataframe(v[["label", "checked", "inside", "verdict"]], hide_index=True,
                 width="stretch")
    # the advice in full below the table (a sentence does not fit a column)
    for advice, labels in v.groupby("advice", sort=False)["label"]:
        st.caption(text.plain(f"{', '.join(labels)}: {advice}"))
    t = check.table
    shown = t[["group", "runs", "m", "response", "measured", "predicted", "pi_low",
               "pi_high", "inside"]].rename(columns={
                   "pi_low": f"interval low ({check.confidence:.0%})",
                   "pi_high": f"interval high ({check.confidence:.0%})",
                   "m": "batches averaged"})
    st.dataframe(shown, hide_index=True, width="stretch",
                 column_config={c: st.column_config.NumberColumn(format="%.4g")
                                for c in shown.columns if shown[c].dtype.kind == "f"})
    if t["outside_region"].any():
        st.warning("Some settings lie outside the tested region: the model was "
                   "extrapolating there.")
    with st.expander("As `tradeoff confirm` prints it"):
        st.code(check.text(), language=None)
elif not error:
    st.info("Type the measured values of at least one confirmation batch to compare them "
            "with the predictions.")

# -- save ----------------------------------------------------------------------------------
st.subheader("Keep them")
try:
    data = entered_table(study, edited)
except TradeoffError as exc:
    st.error(text.plain(exc))
    st.stop()
addition = study_file_addition(study)
typed_runs = len(data.splitlines()) - 1
st.download_button(f"Confirmation table ({name})", data, file_name=name, mime="text/csv",
                   key="cf_download")
with st.expander("What saving changes"):
    st.write(f"Writes **{text.plain(name)}** beside the study file "
             f"({typed_runs} runs).")
    if addition:
        st.write("Adds these lines at the end of the study file (nothing else in it "
                 "changes):")
        st.code(addition.strip("\n"), language="toml")
    else:
        st.write("The study file already names this table: it stays as it is.")
if origin["kind"] == "path":
    if st.button("Save beside the study file", type="primary", key="cf_save",
                 disabled=bool(error)):
        try:
            written = save_entered(study, edited)
        except TradeoffError as exc:
            st.error(text.plain(exc))
        else:
            ss["confirm_typed"] = None
            st.success("Saved: " + text.plain(", ".join(p.name for p in written)))
else:
    st.caption("This study was uploaded, so nothing can be saved beside it here: download "
               "the table, keep it beside your study file and add the lines above to it.")
