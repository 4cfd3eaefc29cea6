"""What a view needs that the open study lacks, said once, with a link to where to add it.

A study opened from a bare table has no goals yet: the search has nothing to
balance. Instead of the library's message (written for a study file the user
may not have), these views say what is missing in the workbench's words and
link to the view that adds it.
"""
from __future__ import annotations

import streamlit as st

__all__ = ["has_goals", "stop_without_goals", "no_goals_note"]


def has_goals(study) -> bool:
    """True when at least one response or factor has a goal (something to balance)."""
    return any(r.goal.active for r in study.responses) or any(
        f.goal.active for f in study.factors if not f.is_categorical)


def no_goals_note() -> None:
    """Say that no goal is set yet, and link to where goals are set."""
    st.info("No result has a goal yet, so there is nothing to balance. Say which way each "
            "result should go (higher, lower, a target or a range) and where it becomes "
            "unacceptable.", icon=":material/info:")
    st.page_link("views/targets.py", label="Set goals on 'Targets and weights'",
                 icon=":material/tune:")
    st.page_link("views/new_study.py", label="Or declare the study's columns again on "
                 "'New study'", icon=":material/note_add:")


def stop_without_goals(study) -> None:
    """On a view that needs goals: say what is missing and stop the view."""
    if has_goals(study):
        return
    no_goals_note()
    st.stop()
