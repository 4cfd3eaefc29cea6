"""Study and runs: open a study, see its factors, responses and runs."""
from __future__ import annotations

import hashlib

import streamlit as st

from tradeoff import TradeoffError
from tradeoff.study.demo import demo_study_path
from tradeoff.inputs import DATA_SUFFIXES, table_columns
from tradeoff_ui import cached, state, text

ss = st.session_state

# -- widgets: opening -------------------------------------------------------
st.title("Study and runs")
with st.expander("Open another study", expanded=False):
    st.write("Upload a study file (.toml) together with its data file, or a data "
             "file (.csv or .xlsx) on its own and name its factor and response "
             "columns below.")
    uploads = st.file_uploader("Study and data files", accept_multiple_files=True,
                               type=["toml", *[s.lstrip(".") for s in DATA_SUFFIXES]],
                               key="upload_widget")
    demo = st.button("Open the invented demo study", key="demo_button")

if demo:
    try:
        origin = {"kind": "path", "path": str(demo_study_path())}
        state.open_origin(origin, "demo: snack bar", cached.base_study(origin))
        ss["open_error"], ss["draft"] = None, None
    except TradeoffError as exc:
        ss["open_error"] = str(exc)

if not uploads and ss["upload_digest"] is not None:
    # the user removed the files: forget them and the error they caused
    ss["upload_digest"], ss["open_error"], ss["draft"] = None, None, None
if uploads:
    files = {u.name: u.getvalue() for u in uploads}
    digest = hashlib.sha256(b"".join(n.encode() + b"\0" + hashlib.sha256(b).digest()
                                     for n, b in sorted(files.items()))).hexdigest()
    if digest != ss["upload_digest"]:
        ss["upload_digest"], ss["open_error"], ss["draft"] = digest, None, None
        try:
            if any(n.lower().endswith(".toml") for n in files):
                origin = {"kind": "files", "files": files}
                state.open_origin(origin, ", ".join(sorted(files)),
                                  cached.base_study(origin))
            elif len(files) == 1:
                (name, data), = files.items()
                ss["draft"] = {"name": name, "data": data,
                               "columns": table_columns(name, data)}
            else:
                ss["open_error"] = ("several data files and no study file: upload one "
                                    "data file, or a study file (.toml) with its data")
        except TradeoffError as exc:
            ss["open_error"] = str(exc)

if ss["draft"] is not None:
    draft = ss["draft"]
    columns = draft["columns"]
    st.subheader(f"Name the columns of {text.plain(draft['name'])}")
    st.dataframe(columns, hide_index=True)
    with st.form("draft_form"):
        chosen_f = st.multiselect("Factor columns (what you set)",
                                  list(columns["column"]),
                                  default=list(columns.loc[columns.role == "factor", "column"]))
        chosen_r = st.multiselect("Response columns (what you measured)",
                                  list(columns["column"]),
                                  default=list(columns.loc[columns.role == "response",
                                                           "column"]))
        use = st.form_submit_button("Open this table as a study")
    if use:
        try:
            origin = {"kind": "draft", "name": draft["name"], "data": draft["data"],
                      "factors": list(chosen_f), "responses": list(chosen_r)}
            state.open_origin(origin, draft["name"], cached.base_study(origin))
            ss["draft"] = None
            st.rerun()
        except TradeoffError as exc:
            ss["open_error"] = str(exc)

if ss["open_error"]:
    st.error(f"Could not open the files: {text.plain(ss['open_error'])}. The study below is "
             "still the one in use.")

# -- call the library ---------------------------------------------------------
try:
    study = cached.current_study()
    table = cached.runs_table(study)
except TradeoffError as exc:
    st.error(text.plain(exc))
    st.stop()

# -- show ---------------------------------------------------------------------
st.header(text.plain(study.name))
if study.description:
    st.caption(text.plain(study.description))
for note in study.notes:
    st.warning(text.plain(note))

left, right = st.columns(2)
with left:
    st.subheader("Factors (what you set)")
    st.dataframe([{"factor": f.name, "label": f.label, "unit": f.unit,
                   "coded -1": f.levels[0] if f.is_categorical else f"{f.low:g}",
                   "coded +1": f.levels[1] if f.is_categorical else f"{f.high:g}"}
                  for f in study.factors], hide_index=True)
with right:
    st.subheader("Responses (what you measured)")
    st.dataframe([{"response": r.name, "label": r.label, "unit": r.unit,
                   "goal": r.goal.kind,
                   "measured runs": int(study.runs[r.name].notna().sum())
                   if r.name in study.runs else 0}
                  for r in study.responses], hide_index=True)

st.subheader(f"The {len(table)} runs")
marked = int((table["marks"] != "").sum())
st.write("Each factor appears twice: as set, and in coded units (-1 at its low "
         "setting, +1 at its high, 0 at the centre). "
         + (f"**{marked} run(s) carry a mark** (last column)." if marked else
            "No run is outside the tested box or has a blank result."))
st.dataframe(
    table, height=min(38 * (len(table) + 1), 600),
    column_config={**{f"{f.name} coded": st.column_config.NumberColumn(format="%+.2f")
                      for f in study.factors},
                   "outside": st.column_config.CheckboxColumn("outside the box"),
                   "marks": st.column_config.TextColumn("marks", width="large")})
