"""Widgets whose values outlive their page and a reload.

Streamlit forgets a widget's value when its page is not shown, and a new browser
session starts every widget afresh. A remembered widget keeps its value in a
plain dict in the session (``st.session_state[store][name]``), which the session
file keeps too (ui/new_keep.py): the widget starts from it when it is drawn
again.
"""
from __future__ import annotations

import streamlit as st

__all__ = ["widget"]

# the arguments that give a widget its first value (left out when it starts from a
# kept value: a widget given both warns that one of them is ignored)
_FIRST = ("value", "index", "default")


def widget(draw, store: str, name: str, *args, key: str, **options):
    """``draw(*args, key=key, **options)`` starting from, and kept in, ``ss[store][name]``."""
    ss = st.session_state
    kept = ss[store]
    given = dict(options)
    if name in kept and key not in ss:
        ss[key] = kept[name]
        for first in _FIRST:
            given.pop(first, None)
    try:
        value = draw(*args, key=key, **given)
    except (st.errors.StreamlitAPIException, TypeError, ValueError):
        # a kept value the widget no longer offers (another study's choices): start afresh
        del ss[key]
        kept.pop(name, None)
        return widget(draw, store, name, *args, key=key, **options)
    kept[name] = value
    return value
