"""Every session key the workbench uses, initialised in this one place.

The truth a user builds up (which study is open, the goals and weights they
typed, the model terms they chose) lives in these keys, not in widget keys:
Streamlit forgets a widget's value when its page is not shown, these stay.
"""
from __future__ import annotations

import sys
from pathlib import Path

import streamlit as st

from tradeoff import TradeoffError

__all__ = ["init", "open_origin", "study_argument", "pin_recipe", "KEYS"]

# key -> what it holds. Defaults are built in ``init``.
KEYS = {
    "origin": "where the open study came from: {'kind': 'path'|'files', ...}",
    "origin_label": "a short name of that origin for the sidebar",
    "goals": "name -> Goal: the goals and weights as the user set them",
    "models": "response name -> model name or tuple of terms chosen by the user",
    "reduce": "set of response names whose model is reduced to its active terms",
    "top": "how many solutions to list (the best and its alternatives)",
    "rank_by": "order of the solutions: 'desirability' (D), 'chance' (all limits met) or "
               "'production' (all limits met by a production batch)",
    "aim": "what comes first: 'balance' (best D) or 'production' (most likely to hold)",
    "spread": "factor name -> production SD typed on the targets view (None: none)",
    "chosen": "index of the solution the maps and what-if panel start from",
    "whatif": "factor name -> natural setting typed in the what-if panel",
    "whatif_note": "why the last edit of a blend in the what-if panel was refused (None: "
                   "nothing refused)",
    "open_error": "the last error from opening files (kept while they stay uploaded)",
    "upload_digest": "digest of the uploaded files last tried, so each is tried once",
    "draft": "a bare data table uploaded on 'Study and runs' ({'name', 'data'}), waiting "
             "for 'New study' to draft its columns",
    "report_ready": "True once the user asked for the report (then it follows every change)",
    "whatif_nonce": "bumped by 'start from the chosen solution' to reset the what-if widgets",
    "whatif_from": "label of the solution the what-if panel started from (another one "
                   "chosen resets the panel to it)",
    "epoch": "counts opened studies; part of widget keys so a new study starts fresh",
    "compare_shown": "response names whose model comparison the user asked to see",
    "next_runs": "how many next runs the user asked for in 'Make next' (0: not asked yet)",
    "frontier_nonce": "bumped to drop the frontier point picked on the results view",
    "frontier_pair": "the two goals the frontier was last drawn between (kept in the "
                     "session file), [] before",
    "frontier_seen": "the solution chosen above the frontier when its point was picked "
                     "(choosing another drops the pick)",
    # keeping work across reloads and restarts (ui/new_keep.py)
    "session_id": "this browser session's id, also in the page address (?session=...)",
    "kept_text": "the session file's text as last written (unchanged: not written again)",
    "kept_files": "uploads already copied into the session's folder (folder, name, digest)",
    # the new-study view (ui/views/new_study.py)
    "new_draft": "the study being drafted: {'data': data file name, 'draft': Draft as a dict}",
    "new_data": "the bytes of the drafted study's data table (None: drafted from scratch)",
    "pins": "label -> settings (natural units) of the recipes pinned to compare, at most 3",
    "confirm_typed": "the confirmation runs typed on the confirm view, not saved yet "
                     "(a table; None: start from what the study lists)",
    "data_typed": "the runs table as edited on the data view, not saved yet (None: none)",
    "data_changed": "True while the runs table on the data view differs from the file",
    "plan": "the plan view's choices, widget name -> value (ui/remembered.py)",
    "batch": "the batch sheet's choices: size_g, step_g, batches, seed, recipes, percent, "
             "rest (tradeoff.study.session.BATCH_KEYS); empty: the defaults",
    "editor_nonce": "bumped when a table editor's edits are folded into its table "
                    "(ui/editing.py): the editor starts again from that table",
}

MAX_PINS = 3


def pin_recipe(label: str, settings: dict) -> str:
    """Pin a recipe to compare; returns one line saying what happened."""
    pins = st.session_state["pins"]
    if label in pins:
        pins[label] = dict(settings)
        return f"{label} is pinned (updated)."
    if len(pins) >= MAX_PINS:
        return f"Already {MAX_PINS} recipes pinned: unpin one on the compare view first."
    pins[label] = dict(settings)
    return f"{label} pinned: see it on the compare view."


def study_argument(argv: list[str] | None = None) -> str | None:
    """The study file handed over by ``tradeoff app`` (after ``--``), if any."""
    argv = sys.argv[1:] if argv is None else argv
    for arg in argv:
        if arg.lower().endswith(".toml") and Path(arg).is_file():
            return arg
    return None


def open_origin(origin: dict, label: str, study) -> None:
    """Make ``study`` (built from ``origin``) the open study; reset what depends on it."""
    st.session_state["origin"] = origin
    st.session_state["epoch"] = st.session_state.get("epoch", 0) + 1
    st.session_state["origin_label"] = label
    st.session_state["goals"] = {**{f.name: f.goal for f in study.factors
                                    if not f.is_categorical},
                                 **{r.name: r.goal for r in study.responses}}
    st.session_state["models"] = {}
    st.session_state["reduce"] = set()
    st.session_state["chosen"] = 0
    st.session_state["whatif"] = {}
    st.session_state["whatif_note"] = None
    st.session_state["spread"] = {f.name: f.production_sd for f in study.factors
                                  if not f.is_categorical}
    st.session_state["whatif_from"] = None
    st.session_state["compare_shown"] = set()
    st.session_state["next_runs"] = 0
    st.session_state["pins"] = {}
    st.session_state["confirm_typed"] = None
    st.session_state["data_typed"] = None
    st.session_state["data_changed"] = False
    st.session_state["batch"] = {}
    st.session_state["plan"] = {}
    st.session_state["frontier_pair"] = []


def init() -> None:
    """Create every key once per session; on first run open the study argument or the demo."""
    ss = st.session_state
    defaults = {"top": 5, "rank_by": "desirability", "reduce": set(), "chosen": 0,
                "whatif": {}, "whatif_note": None, "open_error": None, "upload_digest": None, "draft": None,
                "models": {}, "report_ready": False, "whatif_nonce": 0, "goals": {},
                "aim": "balance", "spread": {},
                "whatif_from": None, "compare_shown": set(), "next_runs": 0,
                "frontier_nonce": 0, "frontier_seen": None, "frontier_pair": [],
                "new_draft": None, "new_data": None,
                "pins": {}, "confirm_typed": None, "data_typed": None, "editor_nonce": 0,
                "data_changed": False, "batch": {}, "plan": {}}
    for key, value in defaults.items():
        if key not in ss:
            ss[key] = value
    if "origin" not in ss:
        from tradeoff.study.demo import demo_study_path

        from tradeoff_ui import cached, new_keep

        # the session named in the page address (a reload, a new tab, a bookmark)
        back = new_keep.restored()
        if back is not None:
            origin, label, kept = back
            try:
                study = cached.base_study(origin)
            except TradeoffError:
                back = None  # the study moved or changed past reading: start afresh
        if back is None:
            path = study_argument() or str(demo_study_path())
            origin = {"kind": "path", "path": str(Path(path).resolve())}
            label, study = Path(path).name, cached.base_study(origin)
            kept = new_keep.kept_beside(path)  # where `tradeoff app study.toml` left off
        open_origin(origin, label, study)
        if kept is not None:
            new_keep.apply(kept, study)
