"""The models view's panel for a category response (``derive = "panel_category"``):
its fit figures, effects and thresholds on the latent scale, and each category's
chance at the runs. No statistics here: every number comes from the library."""
from __future__ import annotations

import pandas as pd
import streamlit as st

from tradeoff_ui import panels, text
from tradeoff_ui.shown import num, p_text

__all__ = ["category_model"]


def category_model(study, response, model, report: dict) -> None:
    """Figures, effects, thresholds and category chances of a category response."""
    what = {"expected": "the expected category",
            "top_box": f"the percent of scores in the top {report['boxes']} categories",
            "bottom_box": f"the percent of scores in the bottom {report['boxes']} "
                          "categories"}[report["summary"]]
    cols = st.columns(5)
    cols[0].metric("Scores used", report["n"])
    cols[1].metric("Runs", report["n_runs"])
    cols[2].metric("R² of the run values", "-" if report["r2"] is None
                   else f"{report['r2']:.3f}")
    cols[3].metric("Predicted R²", "-" if report["pred_r2"] is None
                   else f"{report['pred_r2']:.3f}",
                   help="Each run's value predicted by the model fitted without that "
                        "run's scores: far below R² means the model follows noise.")
    cols[4].metric("Panel scatter of a new run (SD)", num(report["residual_sd"]))
    st.caption(text.plain(
        f"A cumulative-logit (proportional-odds) model of every score, predicting {what}"
        + (", with each assessor's use of the scale as a fixed effect"
           if report["assessor"] == "fixed" else "")
        + ". Effects are on the latent scale, per coded unit: a positive effect moves "
          "scores up the scale. Intervals: " + report["interval_method"] + "."))
    panels.show_notices(report["warnings"])
    left, right = st.columns([3, 2])
    with left:
        st.subheader("Effects (latent scale)")
        rows = report["effects"] + report["assessors"]
        st.dataframe(pd.DataFrame({
            "term": [r["term"] for r in rows],
            "estimate": [num(r["estimate"]) for r in rows],
            "std. error": [num(r["se"]) for r in rows],
            "p": [p_text(r["p"]) for r in rows]}), hide_index=True, width="stretch")
    with right:
        st.subheader("Thresholds")
        st.dataframe(pd.DataFrame({
            "between": [t["between"] for t in report["thresholds"]],
            "estimate": [num(t["estimate"]) for t in report["thresholds"]],
            "std. error": [num(t["se"]) for t in report["thresholds"]]}),
            hide_index=True, width="stretch")
    st.subheader("Each category's chance at the runs")
    table = model.probabilities(study.coded().to_numpy())
    table = (100 * table).round(1).add_suffix(" (%)")
    table.insert(0, "run", study.runs["run"].astype(str).to_numpy())
    table["predicted"] = [num(v) for v in model.predict(study.coded().to_numpy())]
    table["observed"] = [num(v) for v in study.runs[response.name].to_numpy(float)]
    st.dataframe(table, hide_index=True, width="stretch")
