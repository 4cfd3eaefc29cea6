"""'Save study file': the workbench's choices written into the user's own study file.

The goals, weights, model choices and production SDs go into the file's text
in place, comments kept (tradeoff.study.session_save). The differences are shown
first; nothing is written until the user confirms. A study opened from uploads
has no file on disk to write: its updated text is offered as a download.
"""
from __future__ import annotations

from pathlib import Path

import streamlit as st

from tradeoff import TradeoffError
from tradeoff.study.files import write_atomic
from tradeoff.study.session_save import text_diff, updated_study_text
from tradeoff_ui import text

__all__ = ["save_panel"]


def _original(origin: dict) -> tuple[str, str, Path | None] | None:
    """(file name, its text, its path on disk or None) of the study file the user has."""
    if origin["kind"] == "path":
        path = Path(origin["path"])
        try:
            return path.name, path.read_text(encoding="utf-8-sig"), path
        except (OSError, UnicodeDecodeError):
            return None
    if origin["kind"] == "files":
        for name, data in origin["files"].items():
            if name.lower().endswith(".toml"):
                try:
                    return name, data.decode("utf-8-sig"), None
                except UnicodeDecodeError:
                    return None
    return None


def save_panel(study, origin: dict, key: str = "save") -> None:
    """Show what saving would change in the user's study file, and save on request."""
    from tradeoff.study.demo import demo_study_path

    found = _original(origin)
    if found is None:
        return
    name, original, path = found
    try:
        updated = updated_study_text(original, study, name)
    except TradeoffError as exc:
        st.error(text.plain(exc))
        return
    diff = text_diff(original, updated, name)
    st.subheader("Save your study file")
    if not diff:
        st.write(text.plain(f"{name} already holds the goals, weights and models shown "
                            "here: nothing to save."))
        return
    st.write(text.plain(f"These lines of {name} would change to hold the goals, weights "
                        "and models as set here; your comments and everything else stay "
                        "as you wrote them."))
    st.code(diff, language="diff")
    demo = path is not None and path.resolve().parent == demo_study_path().resolve().parent
    if path is None or demo:
        st.download_button(f"Download the updated {name}", updated.encode("utf-8"),
                           file_name=name, mime="application/toml", key=f"{key}_download")
        return
    if st.button(text.plain(f"Save these changes into {path}"), key=f"{key}_button"):
        try:
            write_atomic(path, updated.encode("utf-8"))
        except (TradeoffError, OSError) as exc:
            st.error(text.plain(f"Could not save {name}: {exc}"))
        else:
            st.success(text.plain(f"Saved {name}."))
