"""The workbench: wires the pages together, nothing else.

Started by ``tradeoff app [STUDY]``, which runs
``python -m streamlit run <this file> -- <study>``.
"""
from __future__ import annotations

import altair as alt
import streamlit as st

from tradeoff import TradeoffError
from tradeoff_ui import new_keep, state, text

# An emoji icon is drawn by the page itself; a ":material/..." page icon would be
# fetched from a font server on the internet, and nothing may leave this computer.
st.set_page_config(page_title="tradeoff workbench", page_icon="⚖️", layout="wide")
# Contour grids hold a few thousand points; they are small, draw them whole.
alt.data_transformers.disable_max_rows()

try:
    state.init()
except TradeoffError as exc:
    st.error(f"Could not open the study: {text.plain(exc)}")
    st.stop()

pages = [
    st.Page("views/study.py", title="Study and runs", icon=":material/table_view:",
            default=True),
    st.Page("views/new_study.py", title="New study", icon=":material/note_add:"),
    st.Page("views/plan.py", title="Plan the runs", icon=":material/grid_on:"),
    st.Page("views/models.py", title="What drives each response",
            icon=":material/insights:"),
    st.Page("views/panel.py", title="The panel", icon=":material/groups:"),
    st.Page("views/targets.py", title="Targets and weights", icon=":material/tune:"),
    st.Page("views/results.py", title="Recommended settings", icon=":material/flag:"),
    st.Page("views/compare.py", title="Compare recipes", icon=":material/compare:"),
    st.Page("views/batch.py", title="Batch sheet", icon=":material/scale:"),
    st.Page("views/data.py", title="Add or correct runs", icon=":material/edit_note:"),
    st.Page("views/confirm.py", title="Confirmation runs", icon=":material/fact_check:"),
    st.Page("views/downloads.py", title="Take it with you", icon=":material/download:"),
]
# filled after the page ran: a page that opens another study renames it at once
open_study = st.sidebar.empty()
try:
    st.navigation(pages).run()
finally:
    open_study.caption(f"Open study: **{text.plain(st.session_state['origin_label'])}**")
    new_keep.keep()
