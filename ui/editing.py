"""A table editor whose edits outlive the page: each edit is folded into a table
kept in the session, and the editor starts again from it.

Streamlit forgets a widget's state when its page is not shown, and a data
editor's state is a list of edits against the table it was given; folding the
edits in at once (and giving the editor a new key) keeps what was typed when the
user goes to another view and comes back, and never applies an edit twice.
"""
from __future__ import annotations

import pandas as pd
import streamlit as st

__all__ = ["kept_editor"]


def _fold(store: str, key: str) -> None:
    ss = st.session_state
    delta = ss.get(key) or {}
    base = ss[store].copy()
    for i, changes in (delta.get("edited_rows") or {}).items():
        for column, value in changes.items():
            base.at[base.index[int(i)], column] = value
    gone = [base.index[int(i)] for i in (delta.get("deleted_rows") or [])]
    base = base.drop(index=gone)
    added = delta.get("added_rows") or []
    if added:
        base = pd.concat([base, pd.DataFrame(added, columns=base.columns).astype(object)],
                         ignore_index=True)
    ss[store] = base.reset_index(drop=True)
    ss["editor_nonce"] = ss.get("editor_nonce", 0) + 1


def kept_editor(store: str, **options) -> pd.DataFrame:
    """A data editor over ``st.session_state[store]``; returns the table as edited."""
    ss = st.session_state
    key = f"{store}_editor_{ss.get('editor_nonce', 0)}"
    return st.data_editor(ss[store], key=key, on_change=_fold, args=(store, key),
                          **options)
