"""The models view's panels for a blend: effects along Cox directions, Cox traces,
and the coefficients and equation in amounts.

Runs like a view: read state -> widgets -> call the library (through
``cached``) -> show. A blend's components move together (they add up to the
total), so the coded -1/+1 effects, the half-normal plot and the interaction
chart of an ordinary study would move one component while the others stay: a
blend that no longer adds up. These panels move a component along its Cox
direction instead, within the blends the bounds allow.
"""
from __future__ import annotations

import pandas as pd
import streamlit as st

from tradeoff import TradeoffError
from tradeoff_ui import blend_charts, cached, charts, text
from tradeoff_ui.shown import blank_none, num, p_text

__all__ = ["is_blend_model", "blend_view", "blend_panels", "blend_coefficients"]


def is_blend_model(model) -> bool:
    """True for a fitted model of a blend (Scheffe terms, no intercept)."""
    return getattr(model, "mixture", None) is not None


def _amount(f, v) -> str:
    return f"{v}" if isinstance(v, str) else f"{num(v)}" + (f" {f.unit}" if f.unit else "")


def blend_view(study, fitted, name: str, response, model, report: dict, unit: str) -> None:
    """Everything the models view shows of a blend's model below its fit figures."""
    from tradeoff.maps.tables import residual_table

    blend_panels(study, fitted, name, response, model)
    st.subheader("Residuals: what the model leaves unexplained")
    st.caption("Look for patterns: a funnel against the fitted value suggests a transform; "
               "a curve in the quantile plot suggests non-normal errors; a trend in run "
               "order suggests drift. Dark points are runs whose deleted studentized "
               "residual (the value the quantile plot shows) is beyond ±3 (dashed lines).")
    residuals = residual_table(model)
    for which, col in enumerate(st.columns(3)):
        charts.show(charts.residual_chart, residuals, unit, which, where=col,
                    width="stretch")
    with st.expander("Coefficients, analysis of variance and the equation in amounts"):
        blend_coefficients(study, report)
        anova = pd.DataFrame([
            {"source": k.replace("_", " "),
             **{c: (p_text(v.get(c)) if c == "p" else num(v.get(c)))
                for c in ("ss", "df", "ms", "f", "p")}}
            for k, v in report["anova"].items()
            if isinstance(v, dict) and k not in ("curvature", "terms")
            and v.get("df") is not None])
        st.write("Analysis of variance:")
        st.dataframe(blank_none(anova), hide_index=True, height=35 * (len(anova) + 1) + 3)


def blend_panels(study, fitted, name: str, response, model) -> None:
    """Effects along Cox directions and the Cox traces of one response."""
    comps = [f for f in study.factors if getattr(f, "is_component", False)]
    process = [f for f in study.factors if not getattr(f, "is_component", False)]
    st.subheader("What each part of the recipe does")
    held = {}
    cats = [f for f in process if f.is_categorical]
    if cats:
        cols = st.columns(min(3, len(cats)))
        for col, f in zip(cols * len(cats), cats):
            held[f.name] = col.selectbox(text.plain(f"{f.display()}: held at"),
                                         list(f.levels), key=f"m_blend_hold.{f.name}")
    try:
        effects = cached.blend_effects(study, fitted, name, held)
        traces = cached.cox_traces(study, fitted, held)
    except TradeoffError as exc:
        st.error(text.plain(exc))
        return
    from tradeoff.maps.mixture_tables import reference_blend

    ref = reference_blend(study)
    unit = comps[0].unit
    ref_text = ", ".join(f"{c.label} {_amount(c, ref[c.name])}" for c in comps)
    numeric = [f for f in process if not f.is_categorical]
    held_text = "; ".join([f"{f.label} at {_amount(f, f.centre)}" for f in numeric]
                          + [f"{study.factor(k).label} {v}" for k, v in held.items()])
    st.caption(text.plain(
        "A blend's coefficients are not effects: each is what the model predicts for one "
        "pure component (or a blending excess), far outside the blends tried, so they get "
        "no test of their own here. A component is read along its Cox direction instead: "
        "from the least to the most of it the bounds allow, the others keeping their ratios "
        f"to each other, through the centre of the allowed blends ({ref_text})"
        + (f"; {held_text}" if held_text else "") + ". Process factors go from low to high "
        "(a choice: from the level held to each other level) at that blend. Each dot is the "
        f"change in the predicted mean; its bar, the {study.confidence:.0%} interval of that "
        "change: a bar across the zero line is a change the runs cannot tell from none."))
    charts.show(blend_charts.blend_effects_chart, effects[["what", "effect", "ci_low",
                                                            "ci_high"]],
                charts.titled(f"Change in {response.label}", response.unit),
                width="stretch")
    st.subheader("Cox traces")
    st.caption(text.plain(
        "Each line moves one component away from the centre of the allowed blends, the "
        "others keeping their ratios, as far as the bounds allow; the dot is the centre "
        "blend itself. A steep line: the response follows that component closely; a flat "
        f"one: it hardly matters. Shaded: the {study.confidence:.0%} interval of the mean. "
        "Every point on a line is a blend that adds up."))
    part = traces[traces["response"] == name]
    labels = {c.name: c.label for c in comps}
    part = part.assign(component=part["component"].map(labels),
                       change=part["deviation"] * comps[0].total)
    charts.show(blend_charts.cox_trace_chart,
                part[["component", "change", "amount", "predicted", "ci_low", "ci_high"]],
                charts.titled(response.label, response.unit),
                charts.titled("Change from the centre blend", unit),
                width="stretch")


def _term_text(study, term: str) -> str:
    """A model term in the study's labels: 'Rice flour × Bake temperature'."""
    labels = {f.name: f.label for f in study.factors}

    def part(p: str) -> str:
        if p.startswith("(") and p.endswith(")"):
            a, _, b = p[1:-1].partition("-")
            return f"({labels.get(a, a)} - {labels.get(b, b)})"
        name, bracket, level = p.partition("[")
        name, caret, power = name.partition("^")
        return labels.get(name, name) + (f"^{power}" if caret else "") + (
            f" = {level[:-1]}" if bracket else "")

    return " \u00d7 ".join(part(p) for p in term.split(":"))


def blend_coefficients(study, report: dict) -> None:
    """The coefficient table of a blend (no test on a pure component's coefficient)
    and the fitted equation in amounts."""
    from tradeoff.model.equation import amount_equation

    comps = [f for f in study.factors if getattr(f, "is_component", False)]
    names = {c.name for c in comps}
    coef = pd.DataFrame({"term": [_term_text(study, t) for t in report["terms"]],
                         "coefficient (as fitted)": [num(report["coefficients"][t])
                                                     for t in report["terms"]]})
    if report["std_errors"]:
        coef["std. error"] = [num(report["std_errors"][t]) for t in report["terms"]]
        # a pure component's coefficient tested against 0 says nothing about the blend
        coef["p-value"] = ["" if t in names else p_text(report["p_values"][t])
                           for t in report["terms"]]
    st.dataframe(coef, hide_index=True, height=35 * (len(coef) + 1) + 3)
    st.caption("As fitted, the components enter as shares of what their lows leave "
               "(0 at a component's low). A single component's coefficient has no p-value: "
               "it is the prediction for that pure ingredient, not an effect. A blending "
               "term's p-value (two components together) says whether they blend better or "
               "worse than their average.")
    proportions = report.get("proportion_coefficients")
    if proportions:
        total = comps[0].total
        eq = amount_equation(proportions, [c.name for c in comps], total)
        eq = {k: v for k, v in eq.items() if v != 0.0}
        process = [f for f in study.factors if f.name not in names]
        coded = "; ".join(
            f"{f.label} coded (-1 at {f.low:g}, +1 at {f.high:g})" if not f.is_categorical
            else f"{f.label} by its level columns (+1 at the level named, -1 at "
                 f"{f.levels[-1]})" for f in process)
        st.write(text.plain(
            f"The equation in amounts: each component in {comps[0].unit or 'study units'} "
            f"(they add up to {total:g})" + (f"; {coded}" if coded else "") + ":"))
        st.dataframe(pd.DataFrame({"term": [_term_text(study, t) for t in eq],
                                   "coefficient": [num(v, 6) for v in eq.values()]}),
                     hide_index=True, height=35 * (len(eq) + 1) + 3)
