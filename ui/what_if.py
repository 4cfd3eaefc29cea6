"""The what-if panel of the results view: settings typed by hand, one recipe per row.

Runs like a view: read state -> widgets -> call the library (through
``cached``) -> show. A blend's components keep their total: editing one moves
the others along Cox's direction (``tradeoff.maps.mixture_tables.cox_edit``),
so the boxes always show a blend the models know. Every figure shown (each
prediction, d, D, the chances) is for the one recipe the panel names
(``WhatIf.settings``).
"""
from __future__ import annotations

import pandas as pd
import streamlit as st

from tradeoff import TradeoffError
from tradeoff.search.chance import NOT_STATED, chance_text
from tradeoff_ui import cached, text
from tradeoff_ui.shown import NARROW_PX, num, span, table_px

__all__ = ["what_if_panel"]


def _components(study) -> list:
    return [f for f in study.factors if getattr(f, "is_component", False)]


def _edit_blend(study, name: str, keys: dict, before: dict) -> None:
    """Callback of a component's box: the others follow along Cox's direction.

    Runs before the page, so every box shows the new blend at once. An amount no
    blend of the total can hold is refused: the box goes back and a note says why.
    """
    from tradeoff.maps.mixture_tables import cox_edit

    ss = st.session_state
    try:
        new = cox_edit(study, before, name, ss[keys[name]],
                       keep_total=not ss.get("r_whatif_free", False))
    except TradeoffError as exc:
        ss[keys[name]] = before[name]
        ss["whatif_note"] = str(exc)
        return
    ss["whatif_note"] = None
    for n, value in new.items():
        ss[keys[n]] = value


def _refuse_free_total(study) -> None:
    """Callback of the 'others fixed, total changes' switch: a fixed total refuses it."""
    from tradeoff.maps.mixture_tables import cox_edit, reference_blend

    ss = st.session_state
    if not ss.get("r_whatif_free"):
        return
    comp = _components(study)[0]
    try:
        cox_edit(study, reference_blend(study), comp.name, comp.low, keep_total=False)
    except TradeoffError as exc:
        ss["r_whatif_free"] = False
        ss["whatif_note"] = str(exc)


def what_if_panel(study, fitted, chosen, pct: str) -> None:
    """Boxes for every factor (started from the chosen solution) and the figures there."""
    ss = st.session_state
    comps = _components(study)
    st.subheader("What if I make it like this?")
    st.caption("Set the factors by hand; predictions update with their intervals."
               + (" The blend keeps its total: changing one component moves the others "
                  "with it, each keeping its ratio to the rest (Cox's direction)."
                  if comps else ""))
    if ss["whatif_from"] != chosen.label:
        # another solution was chosen: start the panel from it, as its button says
        ss["whatif"], ss["whatif_nonce"] = {}, ss["whatif_nonce"] + 1
        ss["whatif_from"], ss["whatif_note"] = chosen.label, None
    nonce = ss["whatif_nonce"]
    if st.button(f"Start from {text.plain(chosen.label)}", key="r_whatif_reset"):
        ss["whatif"], ss["whatif_nonce"], ss["whatif_note"] = {}, nonce + 1, None
        nonce += 1
    keys = {f.name: f"w{ss['epoch']}.{nonce}.{f.name}" for f in study.factors}
    for f in study.factors:  # a box's value lives in its key: callbacks may move it
        if keys[f.name] not in ss:
            ss[keys[f.name]] = (ss["whatif"].get(f.name, chosen.settings[f.name])
                                if f.is_categorical else
                                float(ss["whatif"].get(f.name, chosen.settings[f.name])))
    if comps:
        total, unit = comps[0].total, comps[0].unit
        st.toggle("Others fixed, total changes", key="r_whatif_free",
                  on_change=_refuse_free_total, args=(study,),
                  help="Off (the default): more of one component means less of the "
                       "others, in their ratios, and the blend keeps its total. On: the "
                       "other components stay and the total changes, which only a study "
                       "without a fixed total allows.")
    before = {c.name: float(ss[keys[c.name]]) for c in comps}
    settings = {}
    cols = st.columns(len(study.factors))
    for col, f in zip(cols, study.factors):
        label = text.plain(f.display())
        if f.is_categorical:
            settings[f.name] = col.selectbox(label, list(f.levels), key=keys[f.name])
        elif f in comps:
            settings[f.name] = col.number_input(
                label, step=float((f.high - f.low) / 20), format="%.4g", key=keys[f.name],
                on_change=_edit_blend, args=(study, f.name, keys, before))
        else:
            settings[f.name] = col.number_input(label, step=float((f.high - f.low) / 20),
                                                format="%.4g", key=keys[f.name])
    ss["whatif"] = settings
    if comps:
        amounts = [settings[c.name] for c in comps]
        u = f" {unit}" if unit else ""
        st.caption(text.plain(" + ".join(f"{a:.4g}" for a in amounts)
                              + f" = {sum(amounts):.4g}{u}: the blend's total is "
                              f"{total:g}{u}."))
    if ss["whatif_note"]:
        st.warning(text.plain(f"Not changed: {ss['whatif_note']}."))
    try:
        answer = cached.what_if(study, fitted, settings)
    except TradeoffError as exc:
        st.error(text.plain(exc))
        return
    for note in answer.notes:  # a blend off its total: read as its shares
        st.warning(text.plain(note[:1].upper() + note[1:] + "."))
    if answer.outside:
        st.warning("Outside the tested range: " + text.plain(", ".join(
            study.factor(n).display() for n in answer.outside))
                   + ". The model is extrapolating; predictions there are guesses.")
    if not answer.allowed:
        st.warning("These settings break a rule among factors set in the study.")
    recipe = "; ".join(f"{study.factor(k).display()} = {v if isinstance(v, str) else num(v)}"
                       for k, v in answer.settings.items())
    t = answer.table
    # a shelf life far past the storage study gets no chance (core/derive/reach.py)
    far = {n for n, v in zip(t["response"], t["predicted"]) if n in study.reach
           and study.response(n).goal.active and study.reach[n].status(v)[0] == "far"}
    all_met = NOT_STATED if far else chance_text(answer.chance_all)
    st.markdown(f"D = {answer.desirability:.3f}; chance that every response lands "
                f"within its limits: **{all_met}**")
    st.caption(text.plain(f"Every figure here is for one recipe: {recipe}."))
    shown = pd.DataFrame({
        "response": [study.response(n).display() for n in t["response"]],
        "predicted": t["predicted"].map(num),
        f"mean ({pct})": [span(a, b) for a, b in zip(t["ci_low"], t["ci_high"])],
        f"one batch ({pct})": [span(a, b) for a, b in zip(t["pi_low"], t["pi_high"])],
        "limits": [span(a, b) for a, b in zip(t["lower_limit"], t["upper_limit"])],
        "d": t["desirability"].map(lambda v: num(v, 3)),
        "chance in limits": [NOT_STATED if n in far else chance_text(c) for n, c in
                                 zip(t["response"], t["chance_in_limits"])]})
    # long labels would push columns behind a scroll on a laptop: the mean's interval
    # (the narrower one) goes first; the one batch's interval is what a lab meets
    if table_px(shown) > NARROW_PX:
        shown = shown.drop(columns=f"mean ({pct})")
        st.caption(f"The mean's interval is left out to keep every column in view "
                   f"(the one-batch interval contains it).")
    st.dataframe(shown, hide_index=True, key="r_whatif_table")
