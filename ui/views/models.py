"""What drives each response: effects, interactions, fit and residuals."""
from __future__ import annotations

import pandas as pd
import streamlit as st

from tradeoff import TradeoffError
from tradeoff.maps.effects_picture import term_title
from tradeoff.maps.estimates import effect_estimates, effects_note
from tradeoff.maps.tables import (effect_table, half_normal_table,
                           interaction_means, residual_table)
from tradeoff.study.spec import MODELS
from tradeoff.model.dependence import combination_text
from tradeoff.model.terms import model_terms
from tradeoff.model.transforms import power_advice
from tradeoff_ui import blend_model, cached, charts, panels, text
from tradeoff_ui.shown import blank_none, num, p_text

ss = st.session_state
OWN = "my own choice of terms"

# -- read state -------------------------------------------------------------
st.title("What drives each response")
study = panels.study_or_stop()

# -- widgets --------------------------------------------------------------------
names = study.response_names
labels = {r.name: r.display() for r in study.responses}
name = st.selectbox("Response", names, format_func=labels.get, key="m_response")
response = study.response(name)
current = study.model_for(response)
candidates = [t.label for t in model_terms("full", study.factor_names)[0]
              if t.label != "intercept"]
with st.container(border=True):
    st.markdown("**Model terms**")
    options = list(MODELS) + [OWN]
    blend = study.mixture is not None
    if blend:  # the Scheffe blend part is set in [mixture]; the choice is the process part
        st.caption(text.plain(
            f"The blend part is the {study.mixture.model.replace('_', ' ')} blending model "
            "of the study file; below, how the process factors enter."))
    choice = st.selectbox(
        "Process model" if blend else "Start from", options,
        index=options.index(current) if isinstance(current, str) else len(MODELS),
        help="main: one effect per factor; interactions: plus every pair; full: every "
             "combination; quadratic: plus squares (needs three or more settings); "
             "smooth: a Gaussian process, for peaks and plateaus no polynomial follows.",
        key=f"m_model.{name}")
    if choice == OWN:
        own = st.multiselect("Terms", candidates,
                               default=[t for t in (current if not isinstance(current, str)
                                                    else candidates[:len(study.factors)])
                                        if t in candidates],
                               key=f"m_terms.{name}")
        wanted = tuple(own)
    else:
        wanted = choice
    reduce = st.checkbox("Keep only the terms that matter", value=name in ss["reduce"],
                         help="Backward reduction: the least clear term is dropped "
                              "again and again while it is within the noise; a term "
                              "stays while a higher term contains it (the hierarchy).",
                         key=f"m_reduce.{name}", disabled=choice == "smooth")

if wanted != current and wanted != ():
    ss["models"] = {**ss["models"], name: wanted}
    study = cached.current_study()
ss["reduce"] = (ss["reduce"] | {name}) if reduce else (ss["reduce"] - {name})

# -- call the library -------------------------------------------------------------
try:
    fitted = cached.fit(study)
except TradeoffError as exc:
    st.error(text.plain(exc))
    st.stop()
if name in fitted.skipped:
    st.error(text.plain(f"No model for {response.label}: {fitted.skipped[name]}"))
    st.stop()
model = fitted.models[name]
report = model.report()
if report["model"] == "category":  # the scores' cumulative logit (ui/category_model.py)
    from tradeoff_ui.category_model import category_model

    category_model(study, response, model, report)
    st.stop()
if report["model"] == "smooth":  # no terms: length scales and leave-one-out instead
    panels.smooth_model(study, response, model, report)
    panels.model_comparison(study, name)
    st.stop()
unit = response.unit + (f", {response.transform} scale" if response.transform != "none" else "")
effects = effect_table(model)
estimates = effect_estimates(model)

# -- show ---------------------------------------------------------------------------
cols = st.columns(6)
cols[0].metric("Runs used", report["n"])
cols[1].metric("Terms", len(report["terms"]))
cols[2].metric("Residual df", report["residual_df"])
for col, key, title in ((cols[3], "r2", "R²"), (cols[4], "adj_r2", "Adjusted R²"),
                        (cols[5], "pred_r2", "Predicted R²")):
    col.metric(title, "-" if report[key] is None else f"{report[key]:.3f}")
st.caption("R² is the share of the variation between runs the model explains; adjusted "
           "R² charges for each term; predicted R² is how well each run is predicted "
           "when it is left out of the fit. A predicted R² far below R² means the model "
           "follows noise.")
scale = report.get("box_cox")
if scale and not power_advice(scale, response.transform)[1]:  # else it is a warning below
    st.caption("Scale: " + power_advice(scale, response.transform)[0] + ".")
pieces = report.get("pieces")
if pieces:
    with st.container(border=True):
        st.markdown("**Pieces per batch: measurement noise against batch noise**")
        pc = st.columns(4)
        pc[0].metric("Runs with several pieces", pieces["runs_with_several"])
        pc[1].metric("Pieces", pieces["pieces"])
        for col, key, title in ((pc[2], "within_sd", "SD within a batch"),
                                (pc[3], "batch_sd", "SD batch to batch")):
            col.metric(title, "-" if pieces[key] is None else f"{pieces[key]:.3g}")
        st.info(text.plain(pieces["summary"][:1].upper() + pieces["summary"][1:]))
        st.caption("The model sees one value per run, the mean of its pieces; pure error "
                   "and lack of fit come from repeated runs, never from pieces of one "
                   "batch.")
whole = report.get("whole_plots")
if whole:  # runs sharing a batch: a random shift per whole plot (model/wholeplot.py)
    with st.container(border=True):
        st.markdown(f"**Runs sharing a batch: {whole['count']} whole plots "
                    f"({text.plain(whole['column'])})**")
        wc = st.columns(3)
        for col, key, title in ((wc[0], "sd", "SD between whole plots"),
                                (wc[1], "residual_sd", "SD within whole plots"),
                                (wc[2], "new_run_sd", "SD of a new run, new batch")):
            col.metric(title, "-" if whole[key] is None else f"{whole[key]:.3g}")
        st.caption("A hard-to-change factor is tested against the variation between "
                   "whole plots; every prediction interval and chance is for a new run "
                   f"made in a new batch, so it carries both variances ({whole['method']}).")
panels.show_notices(report["warnings"])  # one box per kind (a storage flag among them)
if report.get("reduction"):
    dropped = report["reduction"]["dropped"]
    st.info("Reduction dropped: " + text.plain(", ".join(f"{t} ({p})"
                                                         for t, p in dropped.items()))
            if dropped else "Reduction kept every term.")

if blend_model.is_blend_model(model):  # components move together: Cox directions
    blend_model.blend_view(study, fitted, name, response, model, report, unit)
    panels.model_comparison(study, name)
    st.stop()

_labels = {f.name: f.label for f in study.factors}
left, right = st.columns([3, 2])
with left:
    st.subheader("Effects and their margins")
    _named = estimates.assign(term=[  # labels, not the data file's names
        term_title(t, _labels) for t in estimates["term"]])
    st.caption(text.plain(effects_note(_named, study.confidence)))
    if len(estimates):
        charts.show(charts.effects_chart, _named, charts.titled("Effect", unit),
                    width="stretch")
with right:
    st.subheader("Half-normal plot")
    st.caption("Each dot is one effect, the largest on the right. Effects that are only "
               "noise rise steadily from the bottom left; real effects stand apart, far "
               "to the right of the rest.")
    if len(effects) >= 2:
        _half = half_normal_table(model)
        charts.show(charts.half_normal_chart, _half.assign(term=[
            term_title(t, _labels) for t in _half["term"]]), response.unit,
                    width="stretch")

st.subheader("Interactions")
if len(study.factor_names) < 2:  # one factor: no pair to draw (never a factor 'None')
    st.caption("An interaction is one factor's effect changing with the setting of "
               "another: it takes two factors, and this study varies one.")
else:
    numeric_or_all = study.factor_names
    a_col, b_col = st.columns(2)
    a = a_col.selectbox("First factor", numeric_or_all, index=0, key="m_ia",
                        format_func=lambda n: study.factor(n).display())
    b = b_col.selectbox("Second factor", [n for n in numeric_or_all if n != a], index=0,
                        key="m_ib", format_func=lambda n: study.factor(n).display())
    try:
        ab = interaction_means(study, name, a, b)
        ba = interaction_means(study, name, b, a)
        model_ab = cached.model_interaction(study, fitted, name, a, b)
        model_ba = cached.model_interaction(study, fitted, name, b, a)
    except TradeoffError as exc:
        st.error(text.plain(exc))
    else:
        st.caption(f"Lines: the model's prediction at the low and high ends, the other "
                   f"factors at their centre, with {study.confidence:.0%} confidence intervals "
                   "of the mean, so the chart agrees with the equation. Open circles: the "
                   "measured means of the runs at those ends (centre points left out). "
                   "Parallel lines: no interaction; lines that cross or fan out: the effect "
                   "of one factor depends on the other.")
        p1, p2 = st.columns(2)
        y_title = charts.titled(response.label, response.unit)
        charts.show(charts.interaction_chart, ab, model_ab, study.factor(a).display(),
                    study.factor(b).display(), y_title,
                    where=p1, width="stretch")
        charts.show(charts.interaction_chart, ba, model_ba, study.factor(b).display(),
                    study.factor(a).display(), y_title,
                    where=p2, width="stretch")


st.subheader("Residuals: what the model leaves unexplained")
st.caption("Look for patterns: a funnel against the fitted value suggests a transform; "
           "a curve in the quantile plot suggests non-normal errors; a trend in run "
           "order suggests drift. Dark points are runs whose deleted studentized "
           "residual (the value the quantile plot shows) is beyond ±3 (dashed lines).")
residuals = residual_table(model)
for which, col in enumerate(st.columns(3)):
    charts.show(charts.residual_chart, residuals, unit, which, where=col, width="stretch")

with st.expander("Coefficients, analysis of variance and the equation"):
    coef = pd.DataFrame({"term": report["terms"],
                         "coefficient (coded)": [num(report["coefficients"][t])
                                                 for t in report["terms"]]})
    if report["std_errors"]:
        coef["std. error"] = [num(report["std_errors"][t]) for t in report["terms"]]
        coef["p-value"] = [p_text(report["p_values"][t]) for t in report["terms"]]
    # every row shown: no inner scroll hiding the last terms
    st.dataframe(coef, hide_index=True, height=35 * (len(coef) + 1) + 3)
    anova = pd.DataFrame([{"source": k.replace("_", " "),
                           **{c: (p_text(v.get(c)) if c == "p" else num(v.get(c)))
                              for c in ("ss", "df", "ms", "f", "p")}}
                          for k, v in report["anova"].items()
                          if isinstance(v, dict) and k not in ("curvature", "terms")])
    st.dataframe(blank_none(anova), hide_index=True, height=35 * (len(anova) + 1) + 3)
    curvature = report["anova"].get("curvature")
    if curvature:
        st.write(f"Curvature check: centre points average {curvature['centre_mean']:.4g}, "
                 f"factorial runs {curvature['factorial_mean']:.4g} (p = "
                 f"{curvature['p']:.3g})." if curvature.get("p") is not None else
                 "Curvature check: not available.")
    if report["aliases"]:
        st.write("Terms the runs cannot tell apart (aliases), each as the combination of "
                 "kept columns it equals in these runs:")
        st.dataframe(pd.DataFrame([
            {"term": k, "equals": combination_text({p["term"]: p["coef"] for p in v})}
            for k, v in report["aliases"].items()]), hide_index=True)
    if report["natural_coefficients"]:
        st.write("The equation in natural units (a two-level categorical factor coded "
                 "-1/+1; one of three or more levels by its sum-to-zero columns, +1 at the "
                 "level named, -1 at the last level):")
        natural = report["natural_coefficients"]
        st.dataframe(pd.DataFrame({"term": list(natural),
                                   "coefficient": [num(v, 6) for v in natural.values()]}),
                     hide_index=True, height=35 * (len(natural) + 1) + 3)

panels.model_comparison(study, name)
