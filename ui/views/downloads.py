"""Take it with you: the study with your targets, the results, the report."""
from __future__ import annotations

from pathlib import Path

import streamlit as st

from tradeoff import TradeoffError
from tradeoff.report.exports import results_csv_bytes, study_toml_bytes
from tradeoff_ui import cached, new_guide, new_save, text

ss = st.session_state

# -- read state ----------------------------------------------------------------
st.title("Take it with you")
try:
    study = cached.current_study()
    # a study without factors has no models or search; its report gives the
    # products' derived values
    fitted = cached.fit(study) if study.factors else None
    # without goals there is nothing to search; the study file still downloads
    result = (cached.optimize(study, fitted)
              if study.factors and new_guide.has_goals(study) else None)
except TradeoffError as exc:
    st.error(text.plain(exc))
    st.stop()

origin = ss["origin"]
study_bytes = data_bytes = None
if origin["kind"] == "files":
    study_bytes = next(b for n, b in origin["files"].items() if n.lower().endswith(".toml"))
    # the data file the study names, not another upload (a confirmation table)
    data_bytes = next((b for n, b in origin["files"].items()
                       if study.data_path is not None and Path(n).name == study.data_path.name),
                      None)
stem = Path(study.source.name if study.source else "study").stem

# -- call the library: build the files ----------------------------------------
try:
    toml_bytes = study_toml_bytes(study)
    csv_bytes = results_csv_bytes(result) if result is not None else None
    xlsx_bytes = cached.report(study, fitted, result, "xlsx", study_bytes, data_bytes)
except TradeoffError as exc:
    st.error(text.plain(exc))
    st.stop()

# -- show -------------------------------------------------------------------------
st.subheader("The study with your targets")
st.write("A study file with the goals, limits, weights and model terms as you set them "
         "here. Save it next to your data file to open the same analysis later with "
         "`tradeoff app your_study.toml`.")
st.download_button("Study file (.toml)", toml_bytes, file_name=f"{stem}_targets.toml",
                   mime="application/toml", key="d_toml")
with st.expander("See the study file"):
    st.code(toml_bytes.decode("utf-8"), language="toml")
new_save.save_panel(study, origin)

st.subheader("The results")
st.write("The table has one row per solution and response: the settings, each prediction "
         "with its intervals, desirabilities and chances. The workbook adds the runs, each "
         "response's model, the goals used, the warnings and where the numbers came from "
         "(file fingerprints, seed, version), one sheet each.")
c1, c2 = st.columns(2)
if csv_bytes is not None:
    c1.download_button("Results table (.csv)", csv_bytes, file_name=f"{stem}_results.csv",
                       mime="text/csv", key="d_csv")
elif not study.factors:
    c1.caption("No results table: the study varies no factor, so nothing was searched; "
               "the workbook lists each product's derived values.")
else:
    with c1:
        new_guide.no_goals_note()
c2.download_button("Results workbook (.xlsx)", xlsx_bytes,
                   file_name=f"{stem}_results.xlsx", key="d_xlsx",
                   mime="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet")

st.subheader("The report")
st.write("One page to hand to colleagues (opens in any web browser, prints well): "
         "the recommendation and alternatives, the targets, each response's model, "
         "the warnings and cautions, and the exact study with file fingerprints.")
if st.button("Prepare the report", key="d_prepare") or ss["report_ready"]:
    ss["report_ready"] = True
    try:
        page = cached.report(study, fitted, result, "html", study_bytes, data_bytes)
    except TradeoffError as exc:
        st.error(text.plain(exc))
    else:
        st.download_button("Report (.html)", page, file_name=f"{stem}_report.html",
                           mime="text/html", key="d_report")
