"""The panel: each attribute's panel ANOVA, least-squares means with their
alike-sets, and the assessors to retrain (``tradeoff panel``'s numbers)."""
from __future__ import annotations

import math

import pandas as pd
import streamlit as st

from tradeoff import TradeoffError
from tradeoff.report.panel_text import retrain_lines
from tradeoff_ui import cached, text

# -- read state -------------------------------------------------------------
st.title("The panel")
try:
    study = cached.current_study()
except TradeoffError as exc:
    st.error(text.plain(exc))
    st.stop()
if study.spec.get("panel") is None:
    st.info("This study has no panel table. Add a [panel] section naming the table of "
            "assessors' scores to see the panel's own analysis here.")
    st.stop()
try:
    result = cached.panel(study)
except TradeoffError as exc:
    st.error(text.plain(exc))
    st.stop()
attributes = result["attributes"]

# -- widgets --------------------------------------------------------------------
name = st.selectbox("Attribute", list(attributes), key="p_attribute")
res = attributes[name]


def _p(p):
    if p is None or not math.isfinite(p):
        return ""
    return "< 0.001" if p < 0.001 else f"{p:.3f}"


def _n(x, fmt="{:.3g}"):
    return "" if x is None or not math.isfinite(x) else fmt.format(x)


# -- show ----------------------------------------------------------------------
lo, hi = res["scale"]
kind = "category scale" if res["kind"] == "category" else "line scale"
sessions = f", {len(res['sessions'])} sessions" if res["sessions"] else ""
st.caption(text.plain(f"{kind} {lo:g} to {hi:g}; {res['n_scores']} scores, "
                      f"{res['n_runs']} runs, {res['n_assessors']} assessors{sessions}; "
                      f"from {result['source']}"))
run = res["anova"]["run"]
differ = run["p"] is not None and math.isfinite(run["p"]) and run["p"] < res["alpha"]
cols = st.columns(3)
cols[0].metric("Runs differ?", "yes" if differ else "not shown")
cols[1].metric("F for runs", _n(run["f"]),
               help=f"on {run['df']} and {run['df_denominator']} df, tested against the "
                    f"{run['tested_against']} (assessors random)")
cols[2].metric("p", _p(run["p"]))

st.subheader("Analysis of variance")
rows = []
for key, row in res["anova"].items():
    rows.append({"source": key, "df": row["df"], "mean square": _n(row["ms"]),
                 "F": _n(row.get("f", float("nan"))), "p": _p(row.get("p", float("nan"))),
                 "tested against": row.get("tested_against", "")})
st.dataframe(pd.DataFrame(rows), hide_index=True)

left, right = st.columns([1, 1])
with left:
    st.subheader("Least-squares means")
    alike: dict = {}
    for k, g in enumerate(res["groups"]):
        for r in g:
            alike.setdefault(r, []).append(str(k + 1))
    means = pd.DataFrame([{"run": m["run"], "LS mean": round(m["mean"], 2),
                           "SE": round(m["se"], 3) if math.isfinite(m["se"]) else None,
                           "scores": m["n"], "alike-set": " ".join(alike.get(m["run"], []))}
                          for m in sorted(res["means"], key=lambda m: -m["mean"])])
    st.dataframe(means, hide_index=True, use_container_width=True,
                 height=min(38 + 35 * len(means), 560))
    n_differ = sum(p["differ"] for p in res["pairs"])
    st.caption(f"Runs sharing an alike-set number do not differ (Tukey-Kramer, family "
               f"confidence {100 * (1 - res['alpha']):g}%); {n_differ} of "
               f"{len(res['pairs'])} pairs differ.")
with right:
    st.subheader("Assessors")
    lines = retrain_lines(res)
    if lines:
        st.warning("To retrain or check:\n\n" + "\n".join(f"- {text.plain(x)}"
                                                            for x in lines))
    else:
        st.success("Every assessor scores in line with the panel.")
    if not res["replicated"]:
        st.caption("One session: an assessor's own F and repeatability need repeated "
                   "sessions.")
table = pd.DataFrame([{
    "assessor": a["assessor"], "own F for runs": _n(a["f_runs"]), "p": _p(a["p_runs"]),
    "agreement r": _n(a["agreement"], "{:.2f}"), "repeat SD": _n(a["repeat_sd"]),
    "centre": _n(a["centre"]), "range": _n(a["range"]),
    "offset": _n(a["offset"], "{:+.2f}")} for a in res["assessors"]])
st.dataframe(table, hide_index=True)
if result.get("notes"):
    with st.expander("Notes on the panel table"):
        for note in result["notes"]:
            st.markdown(f"- {text.plain(note)}")
