"""Compare: up to three pinned recipes side by side, differences highlighted."""
from __future__ import annotations

import pandas as pd
import streamlit as st

from tradeoff import TradeoffError
from tradeoff.report.exports import CAUTION
from tradeoff.search.chance import chance_text
from tradeoff_ui import cached, panels, text
from tradeoff_ui.shown import num

ss = st.session_state

# -- read state ---------------------------------------------------------------
st.title("Compare recipes")
study = panels.study_or_stop()
pins = ss["pins"]
if not pins:
    st.info("No recipe pinned yet. On **Recommended settings**, pin a solution "
            "(\"Pin S1 to compare\") or the what-if settings; up to three stand here side "
            "by side.")
    st.page_link("views/results.py", label="Go to Recommended settings")
    st.stop()

# -- widgets: unpin ----------------------------------------------------------------------
cols = st.columns(len(pins) + 1)
for col, label in zip(cols, list(pins)):
    if col.button(f"Unpin {text.plain(label)}", key=f"c_unpin_{label}"):
        del pins[label]
        st.rerun()

# -- call the library -------------------------------------------------------------------
try:
    fitted = cached.fit(study)
    table = cached.recipes_side_by_side(study, fitted, pins)
except TradeoffError as exc:
    st.error(text.plain(exc))
    st.stop()

# -- show -------------------------------------------------------------------------------
labels = list(pins)
names = {f.name: f.label for f in study.factors}
names.update({r.name: r.label for r in study.responses})
PART = {"setting": "Setting", "predicted": f"Predicted ({study.confidence:.0%} interval)",
        "d": "d", "D": "D", "chance": "Chance in limits"}


def _cell(part: str, value) -> str:
    if isinstance(value, str):
        return value
    if part == "chance":
        return chance_text(value)
    if value is None or pd.isna(value):
        return "-"
    return num(value, 3) if part in ("d", "D") else num(value)


# one row per prediction, its interval beside it; the interval rows are folded in
keep = table[~table["part"].isin(["interval low", "interval high"])]
lows = table[table["part"] == "interval low"].set_index("item")
highs = table[table["part"] == "interval high"].set_index("item")


def _column(label: str) -> list[str]:
    out = []
    for part, item, value in zip(keep["part"], keep["item"], keep[label]):
        cell = _cell(part, value)
        if part == "predicted":
            cell += f"  ({num(lows.loc[item, label])} to {num(highs.loc[item, label])})"
        out.append(cell)
    return out


shown = pd.DataFrame({
    "what": keep["part"].map(PART).to_numpy(),
    "of": [("all goals" if i == "all goals" else names.get(i, i)) for i in keep["item"]],
    "unit": keep["unit"].to_numpy(),
    **{label: _column(label) for label in labels},
})
table = keep.reset_index(drop=True)


def _marks(row):
    i = row.name
    out = []
    for column in shown.columns:
        style = ""
        if column in labels and table.loc[i, "differs"]:
            style = "background-color: #fff3cd"
            if table.loc[i, "best"] == column:
                style = "background-color: #d9f2d9; font-weight: bold"
        out.append(style)
    return out


st.dataframe(shown.style.apply(_marks, axis=1), hide_index=True, width="stretch",
             height=35 * (len(shown) + 1) + 3)
st.caption(f"Every figure in a column is for that one recipe. Shaded rows differ between "
           f"the recipes; the highest d, D or chance is in bold green. Intervals are "
           f"{study.confidence:.0%} prediction intervals for one new batch.")
st.info(CAUTION, icon=":material/info:")
st.page_link("views/batch.py", label="Turn a pinned recipe into a batch sheet")
