"""Add or correct runs: the data file in a table editor, checked as the command
line checks it, the changes listed, and written only when the user saves."""
from __future__ import annotations

from pathlib import Path

import streamlit as st

from tradeoff import TradeoffError
from tradeoff.derive.edited_runs import (check_edited, edited_bytes, run_changes,
                                         runs_as_laid_out, save_edited)
from tradeoff_ui import cached, editing, text

ss = st.session_state

# -- read state ---------------------------------------------------------------
st.title("Add or correct runs")
try:
    study = cached.base_study(ss["origin"])
    laid_out = runs_as_laid_out(study)
except TradeoffError as exc:
    st.error(text.plain(exc))
    st.stop()
if ss["data_typed"] is None or list(ss["data_typed"].columns) != list(laid_out.columns):
    ss["data_typed"] = laid_out.copy()
name = study.data_path.name

# -- widgets -------------------------------------------------------------------------
st.caption(f"The runs of {text.plain(name)} as the file lays them out: correct a cell, add "
           "a run in the empty last line, or delete a row (tick it, then the bin). "
           "Confirmation runs belong on the Confirmation runs view. Nothing is written "
           "until you press save.")
used = [c for c in ["run", *study.factor_names, *study.response_names]
        if c in laid_out.columns]
every = len(used) < len(laid_out.columns) and st.toggle(
    "Show every column of the file", key="dv_every",
    help="Off: the run id, the factors and the responses. The other columns are kept as "
         "they are when you save.")
edited = editing.kept_editor(
    "data_typed", column_order=None if every else used, num_rows="dynamic",
    width="stretch",
    height=38 + 35 * (len(ss["data_typed"]) + 1) + 3,
    column_config={"_index": st.column_config.NumberColumn("row", disabled=True,
                                                           width=40),
                   **{c: st.column_config.TextColumn(c, width=70)
                      for c in laid_out.columns}})

# -- call the library: the same checks as the command line ------------------------------
changes = run_changes(laid_out, edited)
ss["data_changed"] = not changes.empty  # kept across a reload only when edited
error = None
try:
    checked = check_edited(study, edited)
except TradeoffError as exc:
    error = text.plain(exc)

# -- show ----------------------------------------------------------------------------
if error:
    st.error(error)
    st.caption("Row numbers are those of the file, where the header is row 1.")
elif len(changes):
    st.success(f"The edited runs pass every check: {len(checked.runs)} runs.")
st.subheader("What saving changes")
if changes.empty:
    st.write("Nothing yet: the table is as the file has it.")
else:
    st.dataframe(changes, hide_index=True, width="stretch")
c1, c2, c3 = st.columns(3)
origin = ss["origin"]
can_save = (origin["kind"] == "path" and Path(study.data_path).suffix.lower() == ".csv")
if can_save and c1.button(f"Save {text.plain(name)}", type="primary", key="dv_save",
                          disabled=bool(error) or changes.empty):
    try:
        save_edited(study, edited)
    except TradeoffError as exc:
        st.error(text.plain(exc))
    else:
        # the models and searches read the new runs: a new revision of the study
        ss["origin"] = {**origin, "revision": origin.get("revision", 0) + 1}
        ss["data_typed"], ss["data_changed"] = None, False
        st.success(f"Saved {text.plain(name)}.")
        st.rerun()
c2.download_button("Corrected table (.csv)", edited_bytes(edited),
                   file_name=f"{Path(name).stem}_corrected.csv", mime="text/csv",
                   key="dv_download", disabled=changes.empty)
if c3.button("Discard my edits", key="dv_discard", disabled=changes.empty):
    ss["data_typed"], ss["data_changed"] = None, False
    st.rerun()
if not can_save:
    st.caption("This table was uploaded or is a workbook, so it is not written here: "
               "download the corrected table and keep it as the study's data file.")
