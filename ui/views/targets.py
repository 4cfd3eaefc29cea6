"""Targets and weights: each goal with its desirability curve, live."""
from __future__ import annotations

import math

import pandas as pd
import streamlit as st

from tradeoff import TradeoffError
from tradeoff.derive.reach import goal_warnings
from tradeoff.inputs import checked_goal, with_production_sd
from tradeoff.study.spec import GOAL_WORDS, LIMIT_WORDS
from tradeoff_ui import cached, charts, new_guide, panels, text

ss = st.session_state
KINDS = GOAL_WORDS
# What each box means, for the goal it belongs to (the limits' meaning changes with
# the goal: a minimize goal is fully met at its lower limit).
HELP = {
    ("maximize", "lower"): "At or below this the goal is not met at all (desirability 0).",
    ("maximize", "upper"): "At or above this the goal is fully met (desirability 1); "
                           "higher is no better.",
    ("minimize", "lower"): "At or below this the goal is fully met (desirability 1); "
                           "lower is no better.",
    ("minimize", "upper"): "Above this the goal is not met at all (desirability 0).",
    ("target", "lower"): "Below this the goal is not met at all (desirability 0).",
    ("target", "target"): "The best value (desirability 1).",
    ("target", "upper"): "Above this the goal is not met at all (desirability 0).",
    ("range", "lower"): "Below this the goal is not met (desirability 0); anywhere "
                        "between the two limits counts as fully met.",
    ("range", "upper"): "Above this the goal is not met (desirability 0); anywhere "
                        "between the two limits counts as fully met.",
}

# -- read state -------------------------------------------------------------
st.title("Targets and weights")
st.caption("For each response, say what you want. Desirability runs from 0 (not "
           "acceptable) to 1 (as good as it gets); the overall desirability D is the "
           "weighted geometric mean of them all, so a single 0 makes D = 0. A weight of "
           "2 counts a goal twice as much as a weight of 1. The diamond shows where the "
           "current best settings land.")
study = panels.study_or_stop()
epoch = ss["epoch"]


def _step(lo: float, hi: float) -> float:
    return 10.0 ** math.floor(math.log10(max(hi - lo, 1e-12)) - 1)


def _span(item) -> tuple[float, float]:
    """Default limits for a goal that has none: the measured (or tested) range,
    widened to round numbers (a box never opens on 0.01760030370...)."""
    if hasattr(item, "low") and item.low is not None:
        return float(item.low), float(item.high)
    values = study.runs[item.name].dropna() if item.name in study.runs else pd.Series([0, 1])
    lo, hi = float(values.min()), float(values.max())
    if not hi > lo:
        return lo - 1.0, lo + 1.0
    step = _step(lo, hi)
    return _tidy(math.floor(lo / step) * step, step), _tidy(math.ceil(hi / step) * step, step)


def _tidy(value: float, step: float) -> float:
    """``value`` without floating dust, to the decimals of ``step``."""
    places = max(0, -math.floor(math.log10(step))) if step > 0 else 6
    return round(float(value), places) + 0.0


def _sentence(message, then: str) -> str:
    """A library message and a sentence after it, with one stop between them."""
    first = text.plain(message).rstrip()
    return f"{first}{'' if first.endswith(('.', '?', '!')) else '.'} {then}"


def _production_sd_input(factor, key: str) -> None:
    """How far the factor strays from its setting in production (a standard deviation)."""
    old = ss["spread"].get(factor.name)
    unit = f" ({text.plain(factor.unit)})" if factor.unit else ""
    typed = st.number_input(
        f"Spread in production, SD{unit}", min_value=0.0,
        value=_tidy(old or 0.0, _step(factor.low, factor.high) / 100),
        step=_step(factor.low, factor.high), format="%g", key=f"{key}.spread",
        help="The standard deviation of the actual setting around the intended one when "
             "made in production (say a dosing scatter of +-0.5 % is an SD of about "
             "0.25 %). 0: made exactly. The results then show each response's spread "
             "and the chance that a production batch meets every limit.")
    value = typed if typed > 0 else None
    if value == old:
        return
    try:
        with_production_sd(study, factor.name, value)
    except TradeoffError as exc:
        st.error(_sentence(exc, "The previous spread stays in use until this is fixed."))
    else:
        ss["spread"] = {**ss["spread"], factor.name: value}


def _order_problem(kind: str, values: dict, words: dict) -> str:
    """The boxes out of order, said with their own labels ('' when in order)."""
    if kind == "none":
        return ""
    keys = ["lower", "target", "upper"] if kind == "target" else ["lower", "upper"]
    for a, b in zip(keys, keys[1:]):
        if not values[a] < values[b]:
            return (f"'{words[a]}' ({values[a]:g}) must be below '{words[b]}' "
                    f"({values[b]:g}): swap them or change one.")
    return ""


# -- widgets -------------------------------------------------------------------
# A categorical factor is a choice among its levels (a hydrocolloid, a binder): the
# curves can mark the best settings found with the level chosen here, to see what
# each level gives up on each goal.
ANY = "the best of any level"
picks = {}
for f in (f for f in study.factors if f.is_categorical):
    picks[f.name] = st.selectbox(f"{text.plain(f.display())}: mark the best settings with",
                                 [ANY, *f.levels], key=f"g{epoch}.level.{f.name}")
items = list(study.responses) + [f for f in study.factors if not f.is_categorical]
slots = {}
for item in items:
    goal = ss["goals"].get(item.name, item.goal)
    key = f"g{epoch}.{item.name}"
    is_factor = item in study.factors
    with st.container(border=True):
        left, right = st.columns([1, 1])  # room for the boxes' words at 1280 px
        with left:
            what = ("blend component" if getattr(item, "is_component", False)
                    else "factor") if is_factor else ""
            st.markdown(f"**{text.plain(item.display())}**"
                        + (f" · {what}" if what else ""))
            kinds = list(KINDS)
            kind = st.selectbox("Goal", kinds, index=kinds.index(goal.kind),
                                format_func=KINDS.get, key=f"{key}.kind")
            lo0, hi0 = (goal.lower, goal.upper) if goal.active else _span(item)
            step = _step(lo0, hi0)
            lo0, hi0 = _tidy(lo0, step / 1000), _tidy(hi0, step / 1000)
            values = {"kind": kind, "weight": goal.weight, "shape": goal.shape,
                      "shape_below": goal.shape_below, "shape_above": goal.shape_above}
            words = LIMIT_WORDS.get(kind, {})
            if kind != "none":
                c1, c2, c3 = st.columns(3)
                values["lower"] = c1.number_input(
                    words["lower"], value=float(lo0), step=step, format="%g",
                    key=f"{key}.lower", help=HELP[(kind, "lower")])
                if kind == "target":
                    t0 = goal.target if goal.target is not None else \
                        _tidy((lo0 + hi0) / 2, step)
                    values["target"] = c2.number_input(
                        words["target"], value=float(t0), step=step, format="%g",
                        key=f"{key}.target", help=HELP[(kind, "target")])
                values["upper"] = c3.number_input(
                    words["upper"], value=float(hi0), step=step, format="%g",
                    key=f"{key}.upper", help=HELP[(kind, "upper")])
                c1, c2, c3 = st.columns(3)
                values["weight"] = c1.number_input(
                    "Weight", min_value=0.1, max_value=10.0, value=float(goal.weight),
                    step=0.5, format="%g", key=f"{key}.weight")
                if kind in ("maximize", "minimize"):
                    values["shape"] = c2.number_input(
                        "Shape", min_value=0.1, max_value=10.0, value=float(goal.shape),
                        step=0.5, format="%g", key=f"{key}.shape",
                        help="1: straight line. Above 1: only values near the ideal "
                             "score well. Below 1: values just inside the limit already "
                             "score well.")
                elif kind == "target":
                    values["shape_below"] = c2.number_input(
                        "Shape below", min_value=0.1, max_value=10.0,
                        value=float(goal.shape_below), step=0.5, format="%g",
                        key=f"{key}.below")
                    values["shape_above"] = c3.number_input(
                        "Shape above", min_value=0.1, max_value=10.0,
                        value=float(goal.shape_above), step=0.5, format="%g",
                        key=f"{key}.above")
            problem = _order_problem(kind, values, words)
            if problem:
                st.error(f"{problem} The previous goal stays in use until this is fixed.")
            else:
                try:
                    new = checked_goal(item.name, **values)
                except TradeoffError as exc:
                    st.error(_sentence(exc, "The previous goal stays in use until this "
                                            "is fixed."))
                else:
                    if new != goal:
                        ss["goals"] = {**ss["goals"], item.name: new}
            if is_factor:
                _production_sd_input(item, key)
        slots[item.name] = (right, item, is_factor)

# -- call the library ---------------------------------------------------------------
try:
    study = cached.current_study()
    if not new_guide.has_goals(study):  # a study from a bare table: goals come first
        st.info("No result has a goal yet: choose one above (higher is better, lower is "
                "better, a target or a range) and the best settings appear here.",
                icon=":material/info:")
        st.stop()
    fitted = cached.fit(study)
    result = cached.optimize(study, fitted)
    curves = cached.curves(study)
except TradeoffError as exc:
    st.error(text.plain(exc))
    st.stop()
best = result.best
# the solution the curves mark: the best, or the best listed with the levels picked
wanted = {k: v for k, v in picks.items() if v != ANY}
marked = next((s for s in result.solutions
               if all(s.settings[k] == v for k, v in wanted.items())), None)

# -- show -------------------------------------------------------------------------------
if marked is None:
    st.warning("No solution listed uses " + text.plain(", ".join(
        f"{study.factor(k).label} = {v}" for k, v in wanted.items()))
        + ": the curves mark the best settings. "
        "Ask for more solutions on the results view to see more levels.")
    marked = best
elif wanted:
    st.caption(f"The curves mark {text.plain(marked.label)} (D = {marked.desirability:.3f}), "
               "the best settings found with " + text.plain(", ".join(
                   f"{study.factor(k).label} = {v}" for k, v in wanted.items()))
               + f"; the best of all is {text.plain(best.label)} (D = "
                 f"{best.desirability:.3f}).")
# a shelf-life goal past the storage's reach, warned in the goal's own box
beyond_storage = goal_warnings(study, "This goal")
for name, (slot, item, is_factor) in slots.items():
    goal = study.factor(name).goal if is_factor else study.response(name).goal
    with slot:
        if name in beyond_storage:
            st.warning(text.plain(beyond_storage[name]), icon=":material/schedule:")
        if not goal.active:
            st.caption("No goal: this takes no part in D.")
            continue
        if is_factor:
            value, d = marked.settings[name], marked.factor_desirability.get(name)
        elif name in marked.responses:
            value, d = marked.predictions[name], marked.responses[name].desirability
        else:
            st.caption("No model for this response: it takes no part in D.")
            continue
        marker = pd.DataFrame({"value": [value], "desirability": [d]})
        curve = curves[curves["name"] == name]
        charts.show(charts.desirability_chart, curve, marker,
                    charts.titled(item.label, item.unit),
                    width="stretch")
        st.caption(f"At {'the best settings' if marked is best else text.plain(marked.label)}: "
                   f"{value:.4g} {text.plain(item.unit)} -> desirability {d:.3f}")

with st.sidebar.container(key="best_now"):
    lines = []
    for f in study.factors:
        value = best.settings[f.name]
        shown = value if isinstance(value, str) else f"{value:.4g} {f.unit}".strip()
        lines.append(f"- {text.plain(f.label)}: **{text.plain(shown)}**")
    st.markdown(f"**Best settings now** (D = {best.desirability:.3f})\n\n"
                + "\n".join(lines))
