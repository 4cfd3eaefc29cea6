"""New study: say what each column of a data table is, and watch the study file grow.

Start from a data table (.csv or .xlsx), a run sheet the plan command wrote,
or from scratch. The draft (tradeoff.study.draft) is the truth, kept in the
session (and the session file); the widgets only edit it. The study file's
text, its problems (the reader's own messages) and a download sit beside the
form at every step, valid or not.
"""
from __future__ import annotations

import hashlib
import re

import streamlit as st

from tradeoff import TradeoffError
from tradeoff.inputs import DATA_SUFFIXES
from tradeoff.study.draft import (ROLES, Draft, DraftColumn, draft_from_dict, draft_problems,
                                  draft_text, draft_to_dict, guess_draft)
from tradeoff.study.mixture import MIXTURE_MODELS, PROCESS_MODES
from tradeoff.study.spec import GOAL_WORDS, LIMIT_WORDS, MODELS
from tradeoff_ui import cached, state, text

ss = st.session_state

MODEL_WORDS = {"main": "main effects", "interactions": "main effects and two-factor "
               "interactions", "full": "every interaction", "quadratic": "interactions and "
               "curvature", "smooth": "smooth curve (no equation)"}
BLEND_WORDS = {"linear": "linear", "quadratic": "quadratic", "special_cubic": "special cubic",
               "cubic": "full cubic"}
# the limit boxes a goal does not use, greyed out
SPARE_WORDS = {"lower": "Lower limit", "target": "Target", "upper": "Upper limit"}
PROCESS_WORDS = {"none": "added to the blend", "linear": "crossed, linear",
                 "quadratic": "crossed, quadratic"}


def _file_name(name: str) -> str:
    stem = re.sub(r"[^0-9A-Za-z]+", "_", name).strip("_").lower() or "new_study"
    return f"{stem}.toml"


def _start(draft: Draft, data: bytes | None, digest: str | None) -> None:
    ss["new_draft"] = {"data": draft.data, "digest": digest, "draft": draft_to_dict(draft)}
    ss["new_data"] = data


def _number(where, label: str, value, key: str, disabled: bool = False):
    return where.number_input(label, value=None if value is None else float(value),
                              format="%g", key=key, step=None, disabled=disabled)


# -- read state: where the draft comes from --------------------------------------------
st.title("New study")
st.write("Say what each column of your data is: the factors you set, the parts of a blend "
         "that add up, what you measured, and how each result should turn out. The study "
         "file is written beside the form as you go; download it at any moment.")
up_col, scratch_col = st.columns([4, 1])
upload = up_col.file_uploader(
    "Data table or run sheet (.csv, .xlsx): one row per run, one column per setting or "
    "result", type=[s.lstrip(".") for s in DATA_SUFFIXES], key="ns_upload")
scratch = scratch_col.button("Start from scratch", key="ns_scratch",
                             help="No data yet: name the columns of the run sheet to be")

if ss["draft"] is not None:  # a bare table uploaded on 'Study and runs'
    came = ss["draft"]
    try:
        _start(guess_draft(came["name"], came["data"]), came["data"],
               hashlib.sha256(came["data"]).hexdigest())
    except TradeoffError as exc:
        st.error(text.plain(exc))
    ss["draft"] = None
if upload is not None:
    data = upload.getvalue()
    digest = hashlib.sha256(upload.name.encode() + b"\0" + data).hexdigest()
    if (ss["new_draft"] or {}).get("digest") != digest:
        try:
            _start(guess_draft(upload.name, data), data, digest)
        except TradeoffError as exc:
            st.error(text.plain(exc))
if scratch:
    _start(Draft(name="new study", data="runs.csv"), None, None)

if ss["new_draft"] is None:
    st.info("Upload the table of your runs above (a run sheet from 'tradeoff plan' with "
            "its results still blank will do), or start from scratch.")
    st.stop()

draft = draft_from_dict(ss["new_draft"]["draft"])
data = ss["new_data"]
nonce = (ss["new_draft"].get("digest") or "scratch")[:8]


def key(*parts) -> str:
    return "ns_" + nonce + "_" + "_".join(str(p) for p in parts)


BREAK = "\u200b"  # a zero-width space: where a long column name may break
form, side = st.columns([5, 3], gap="medium")

# -- widgets: the form -----------------------------------------------------------------
with form:
    draft.name = st.text_input("Study name", value=draft.name, key=key("name"))
    draft.description = st.text_input("What the study is about (optional)",
                                      value=draft.description, key=key("description"))
    if data is None:
        with st.form(key("add")):
            a, b = st.columns([3, 2])
            new_name = a.text_input("New column name (as in your run sheet)",
                                    key=key("new_name"))
            new_role = b.selectbox("It is a", list(ROLES)[:3], format_func=ROLES.get,
                                   key=key("new_role"))
            if st.form_submit_button("Add the column"):
                name = new_name.strip()
                if name and name not in [c.column for c in draft.columns]:
                    draft.columns.append(DraftColumn(column=name, role=new_role))
                elif name:
                    st.error(text.plain(f"There is a column '{name}' already."))

    st.subheader("1. What each column is")
    st.caption("Factor: a setting you chose. Blend component: a part of a blend whose "
               "parts add up to the same total in every run. Response: a result you "
               "measured. Batch: runs made from one dough or oven load (a whole plot). "
               "Notes: kept in the table, not used.")
    if not draft.columns:
        st.caption("No columns yet: add them above.")
    for col in draft.columns:
        # the role box wide enough for "batch (whole plot)"; a long column name may
        # break at its underscores rather than mid-word
        a, b, c, d = st.columns([3, 4, 3, 2], vertical_alignment="center")
        a.markdown("**" + text.plain(col.column).replace("_", "_" + BREAK) + "**")
        col.role = b.selectbox(f"Role of {col.column}", list(ROLES), format_func=ROLES.get,
                               index=list(ROLES).index(col.role), key=key("role", col.column),
                               label_visibility="collapsed")
        if col.role in ("factor", "component", "response"):
            col.label = c.text_input(f"Label of {col.column}", value=col.label,
                                     placeholder="label (optional)",
                                     key=key("label", col.column),
                                     label_visibility="collapsed")
            col.unit = d.text_input(f"Unit of {col.column}", value=col.unit,
                                    placeholder="unit", key=key("unit", col.column),
                                    label_visibility="collapsed")

    components, factors = draft.of_role("component"), draft.of_role("factor")
    if components or factors:
        st.subheader("2. Ranges and levels")
    if components:
        a, b, c = st.columns(3)
        draft.total = _number(a, "The components add up to", draft.total, key("total"))
        draft.mixture_model = b.selectbox(
            "Blend model", MIXTURE_MODELS, help="How the parts blend: linear (each part "
            "on its own), quadratic (pairs blend better or worse than their parts), "
            "special cubic (also triples), full cubic", format_func=lambda m: BLEND_WORDS.get(m, m),
            index=list(MIXTURE_MODELS).index(draft.mixture_model), key=key("mixture_model"))
        if factors:
            draft.process = c.selectbox(
                "With the process factors", PROCESS_MODES, help="Added: the process "
                "factors shift every blend alike. Crossed: each part's blending effect "
                "changes with the process factors (linear or with the quadratic terms)",
                format_func=lambda m: PROCESS_WORDS.get(m, m),
                index=list(PROCESS_MODES).index(draft.process), key=key("process"))
    batch = bool(draft.of_role("batch"))
    for col in [*components, *factors]:
        a, b, c = st.columns([2, 4, 2]) if col.role == "factor" and col.levels else \
            st.columns([2, 2, 2])
        a.markdown(text.plain(col.label or col.column)
                   + (f" ({text.plain(col.unit)})" if col.unit else ""))
        if col.role == "factor" and col.levels:
            typed = b.text_input("Levels, separated by commas",
                                 value=", ".join(col.levels), key=key("levels", col.column))
            col.levels = [v.strip() for v in typed.split(",") if v.strip()]
        else:
            col.low = _number(b, "Lowest", col.low, key("low", col.column))
            col.high = _number(c, "Highest", col.high, key("high", col.column))
        if col.role == "factor" and batch:
            col.hard_to_change = st.checkbox(
                f"{col.column} is set once per batch (hard to change)",
                value=col.hard_to_change, key=key("htc", col.column))
    if factors:
        draft.model = st.selectbox(
            "Model of the process factors" if components else "Model", MODELS,
            format_func=lambda m: MODEL_WORDS.get(m, m), index=list(MODELS).index(draft.model),
            key=key("study_model"))

    responses = draft.of_role("response")
    if responses:
        st.subheader("3. Goals")
        st.caption("For each result: which way is better, where it becomes unacceptable "
                   "and where it is fully met. The weight says how much it counts in the "
                   "balance (1 is usual). You can change goals later on 'Targets and "
                   "weights'.")
    for col in responses:
        st.markdown(f"**{text.plain(col.label or col.column)}**"
                    + (f" ({text.plain(col.unit)})" if col.unit else ""))
        cells = st.columns([3, 2, 2, 2, 2])
        col.goal = cells[0].selectbox("Goal", list(GOAL_WORDS),
                                      format_func=GOAL_WORDS.get,
                                      index=list(GOAL_WORDS).index(col.goal),
                                      key=key("goal", col.column))
        # every box is always there (greyed out when the goal does not use it): a new
        # goal changes labels, not the page's layout, so the page settles at once
        words = LIMIT_WORDS.get(col.goal, {})
        for limit, where in (("lower", cells[1]), ("target", cells[2]), ("upper", cells[3])):
            typed = _number(where, words.get(limit, SPARE_WORDS[limit]), getattr(col, limit),
                            key(limit, col.column), disabled=limit not in words)
            if limit in words:
                setattr(col, limit, typed)
        typed = _number(cells[4], "Weight", col.weight, key("weight", col.column),
                        disabled=col.goal == "none")
        col.weight = typed if typed is not None and typed > 0 else 1.0

ss["new_draft"] = {**ss["new_draft"], "draft": draft_to_dict(draft)}

# -- call the library: the file and its problems --------------------------------------
study_file = _file_name(draft.name)
toml_text = draft_text(draft)
problems = draft_problems(draft, data, study_file=study_file)

# -- show: the study file beside the form ----------------------------------------------
with side:
    st.subheader("The study file")
    # the file's name under the button, not on it: a long study name would be cut
    st.download_button("Download the study file", toml_text.encode("utf-8"),
                       file_name=study_file, mime="application/toml", key="ns_download",
                       icon=":material/download:", width="stretch",
                       help="Save it next to your data file; it opens as it is, or once "
                            "the problems below are fixed.")
    st.caption(f"Saved as {text.plain(study_file)}")
    if problems:
        st.warning("Not ready yet:\n\n" + "\n".join(f"- {text.plain(p)}" for p in problems))
    elif data is None:
        st.info("The study file is complete. It has no runs yet: plan them with "
                "'tradeoff plan', make them, then upload the filled-in run sheet here.")
    else:
        st.success("The study file reads without a problem.")
        if not any(c.goal != "none" for c in draft.of_role("response")):
            st.info("No result has a goal yet: set them under '3. Goals', or later on "
                    "'Targets and weights'.")
        if st.button("Open this study in the workbench", type="primary", key="ns_open"):
            origin = {"kind": "files", "files": {study_file: toml_text.encode("utf-8"),
                                                 draft.data: data}}
            try:
                state.open_origin(origin, study_file, cached.base_study(origin))
            except TradeoffError as exc:
                st.error(text.plain(exc))
            else:
                st.rerun()
    st.code(toml_text, language="toml", wrap_lines=True)
    if ss["origin"].get("files", {}).get(study_file) == toml_text.encode("utf-8"):
        st.success("This study is open. Next:")
        st.page_link("views/study.py", label="See its runs", icon=":material/table_view:")
        st.page_link("views/targets.py", label="Adjust goals and weights",
                     icon=":material/tune:")
        st.page_link("views/results.py", label="Recommended settings",
                     icon=":material/flag:")
