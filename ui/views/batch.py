"""Batch sheet: a recipe in grams for a chosen batch size, the process settings and
the order of the confirmation batches, to download and print."""
from __future__ import annotations

from pathlib import Path

import streamlit as st

from tradeoff import TradeoffError
from tradeoff.study.safe_cells import csv_bytes, workbook_bytes
from tradeoff_ui import panels, text

ss = st.session_state

# -- read state ---------------------------------------------------------------
st.title("Batch sheet")
study = panels.study_or_stop()
recipes, note = panels.recipes_to_make(study)
if note:
    st.caption(note)
epoch = ss.get("epoch", 0)

# -- widgets --------------------------------------------------------------------
# the choices live in ss["batch"] (kept across views and reloads), the widgets
# start from them
kept = ss["batch"]
numeric = [f.name for f in study.factors if not f.is_categorical]
chosen = st.multiselect("Recipes to make", list(recipes),
                        default=[r for r in recipes if r not in kept.get("left_out", [])],
                        key=f"b_recipes_{epoch}")
c1, c2, c3, c4 = st.columns(4)
steps = [0.01, 0.1, 0.5, 1.0, 5.0, 10.0]
batch_g = c1.number_input("Batch size (g)", min_value=1.0,
                          value=float(kept.get("size_g", 1000.0)), step=100.0,
                          format="%g",
                          key=f"b_size_{epoch}")
step_g = c2.selectbox("Scale reads to (g)", steps,
                      index=steps.index(kept["step_g"]) if kept.get("step_g") in steps else 3,
                      key=f"b_step_{epoch}")
batches = int(c3.number_input("Confirmation batches of each", 1, 10,
                              value=min(10, max(1, int(kept.get("batches", 2)))),
                              key=f"b_n_{epoch}"))
seed = int(c4.number_input("Seed of the run order", 0, 2**31 - 1,
                           value=int(kept.get("seed", study.seed)), key=f"b_seed_{epoch}"))
percent, rest = (), "rest of the recipe"
if study.mixture is None:
    guess = [f.name for f in study.factors if not f.is_categorical and f.unit == "%"]
    p1, p2 = st.columns([3, 2])
    percent = tuple(p1.multiselect(
        "Factors that are percent of the batch", numeric,
        default=[n for n in kept.get("percent", guess) if n in numeric],
        format_func=lambda n: study.factor(n).display(), key=f"b_pct_{epoch}",
        help="Their settings are read as percent of the whole batch; the rest of the "
             "batch makes up the balance. The others are process settings."))
    rest = p2.text_input("Name of the rest of the batch",
                         value=kept.get("rest", "rest of the recipe"),
                         key=f"b_rest_{epoch}") or "rest of the recipe"
ss["batch"] = {"left_out": [r for r in recipes if r not in chosen], "size_g": float(batch_g),
               "step_g": float(step_g), "batches": batches, "seed": seed,
               "percent": list(percent), "rest": rest}

# -- call the library -------------------------------------------------------------------
try:
    sheet = panels.sheet_for(study, recipes, ss["batch"])
except TradeoffError as exc:
    st.error(text.plain(exc))
    st.stop()

# -- show -----------------------------------------------------------------------------
if len(sheet.ingredients):
    st.subheader("Weigh")
    st.dataframe(sheet.ingredients.rename(columns={
        "share_percent": "share (%)", "exact_g": "exact (g)", "grams": "weigh (g)"}),
        hide_index=True, width="stretch",
        column_config={"share (%)": st.column_config.NumberColumn(format="%.4g"),
                       "exact (g)": st.column_config.NumberColumn(format="%.4g"),
                       "weigh (g)": st.column_config.NumberColumn(format="%g")})
    st.caption(f"Each recipe's amounts add up to exactly {sheet.batch_g:g} g: they are "
               f"rounded to {sheet.step_g:g} g, and the grams left over by rounding go to "
               "the amounts that lost most (largest remainder), so none is more than one "
               "scale step from its exact share.")
else:
    st.info("No ingredient amounts: the study has no blend components, and no factor was "
            "named as percent of the batch.")
if len(sheet.process):
    st.subheader("Set")
    shown = sheet.process.assign(setting=sheet.process["setting"].map(
        lambda v: v if isinstance(v, str) else f"{v:.6g}"))
    st.dataframe(shown, hide_index=True, width="stretch")
st.subheader("Make in this order")
st.dataframe(sheet.order.rename(columns={"run_order": "order"}), hide_index=True,
             width="stretch")
st.caption("A random order, so a drift over the day does not line up with one recipe. "
           "The Confirmation runs view lists these batches, in this order, for their results.")

stem = Path(study.source.name if study.source else "study").stem
d1, d2, d3 = st.columns(3)
d1.download_button("Batch sheet (.csv)", csv_bytes(sheet.table()),
                   file_name=f"{stem}_batch_sheet.csv", mime="text/csv", key="b_csv")
d2.download_button("Batch sheet (.xlsx)", workbook_bytes(sheet.sheets()),
                   file_name=f"{stem}_batch_sheet.xlsx", key="b_xlsx",
                   mime="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet")
d3.download_button("Printable page (.html)",
                   sheet.html(f"Batch sheet: {study.name}").encode("utf-8"),
                   file_name=f"{stem}_batch_sheet.html", mime="text/html", key="b_html")
st.info(" ".join(sheet.cautions), icon=":material/info:")
