"""Keeping a user's work across a reload, a new tab and a restart.

Every browser session gets an id, written into the page address
(``?session=<id>``). After each interaction the study's whereabouts, the
goals, weights, model choices and search options, the pinned recipes, the
tables typed and not saved yet, the batch sheet's choices (and a study being drafted)
are written to ``<sessions folder>/<id>.session.json`` (tradeoff.study.session);
uploaded or drafted files are kept beside it in ``<id>/``. Opening the same
address again (a reload, a bookmark, a new tab, after a restart) reads it back.

A study opened from a file on disk also gets ``<study>.session.json`` beside it,
so ``tradeoff app study.toml`` starts where the user left off. That file is
ours: one that exists but is not a session file is left alone, and nothing is
written beside the shipped demo.

The sessions folder is ``$TRADEOFF_SESSIONS``, else ``~/.tradeoff/sessions``.
"""
from __future__ import annotations

import hashlib
import os
import re
import secrets
from pathlib import Path

import pandas as pd
import streamlit as st

from tradeoff import TradeoffError
from tradeoff.study.files import write_atomic
from tradeoff.study.session import SESSION_SUFFIX, read_session, session_text

__all__ = ["PARAM", "sessions_dir", "beside", "restored", "kept_beside", "apply", "keep"]

PARAM = "session"
_ID = re.compile(r"^[0-9a-f]{16,64}$")


def sessions_dir() -> Path:
    """The workbench's own folder of session files (created on first use)."""
    return Path(os.environ.get("TRADEOFF_SESSIONS") or Path.home() / ".tradeoff" / "sessions")


def beside(study_path: str | Path) -> Path | None:
    """The session file beside a study file, or None where we must not write one."""
    from tradeoff.study.demo import demo_study_path

    path = Path(study_path)
    if path.resolve().parent == demo_study_path().resolve().parent:
        return None  # the shipped demo's folder is the program's, not the user's
    if not os.access(path.parent, os.W_OK):
        return None
    target = path.with_name(path.stem + SESSION_SUFFIX)
    if target.exists():
        try:
            read_session(target.read_bytes(), target.name)
        except (TradeoffError, OSError):
            return None  # a file of the user's that happens to have our name
    return target


def _read(path: Path) -> dict | None:
    try:
        return read_session(path.read_bytes(), path.name)
    except (TradeoffError, OSError):
        return None


def restored() -> tuple[dict, str, dict] | None:
    """(origin, label, kept) from the session named in the page address, if any."""
    sid = st.query_params.get(PARAM)
    if not sid or not _ID.match(sid):
        return None
    kept = _read(sessions_dir() / f"{sid}{SESSION_SUFFIX}")
    if kept is None:
        return None
    st.session_state["session_id"] = sid
    study = kept["study"]
    try:
        if study["kind"] == "path":
            path = Path(study["path"])
            return {"kind": "path", "path": str(path)}, path.name, kept
        folder = sessions_dir() / sid / "study"
        files = {n: (folder / Path(n).name).read_bytes() for n in study["files"]}
    except (OSError, KeyError, TypeError):
        return None
    return {"kind": "files", "files": files}, str(study.get("label") or "study"), kept


def kept_beside(study_path: str | Path) -> dict | None:
    """The session kept beside a study file (``tradeoff app study.toml`` after a restart)."""
    target = beside(study_path)
    if target is None or not target.is_file():
        return None
    kept = _read(target)
    if kept is None or kept["study"].get("path") != str(Path(study_path).resolve()):
        return None
    return kept


def apply(kept: dict, study) -> None:
    """Put a kept session's choices back, those that still fit the study."""
    ss = st.session_state
    names = {f.name for f in study.factors if not f.is_categorical} | {
        r.name for r in study.responses}
    ss["goals"].update({n: g for n, g in kept["goals"].items() if n in names})
    responses = {r.name for r in study.responses}
    ss["models"] = {n: m for n, m in kept["models"].items() if n in responses}
    ss["reduce"] = kept["reduce"] & responses
    ss["spread"].update({n: v for n, v in kept["spread"].items() if n in ss["spread"]})
    ss["top"], ss["rank_by"], ss["aim"] = kept["top"], kept["rank_by"], kept["aim"]
    ss["chosen"] = kept["chosen"]
    factors = set(study.factor_names)
    ss["pins"] = {label: settings for label, settings in kept["pins"].items()
                  if set(settings) == factors}
    for name, key, columns in (
            ("confirm", "confirm_typed",
             ["run", *study.factor_names, *study.response_names]),
            ("data", "data_typed", None)):
        table = kept["typed"].get(name)
        if table is not None and (columns is None or table["columns"] == columns):
            ss[key] = pd.DataFrame(table["rows"], columns=table["columns"]).astype(object)
            ss["data_changed"] = ss["data_changed"] or name == "data"
    ss["batch"] = dict(kept["batch"])
    ss["plan"] = dict(kept["plan"])
    ss["next_runs"] = kept["asked"]["next_runs"]
    ss["compare_shown"] = kept["asked"]["compare_shown"] & responses
    ss["report_ready"] = kept["asked"]["report"]
    ss["frontier_pair"] = kept["asked"]["frontier"]  # checked against the goals when drawn
    whatif = kept["whatif"]
    if whatif["from"] is not None and set(whatif["settings"]) <= factors:
        ss["whatif_from"], ss["whatif"] = whatif["from"], dict(whatif["settings"])
    draft = kept.get("draft")
    sid = ss.get("session_id")
    if draft and sid:
        data = sessions_dir() / sid / "draft" / Path(str(draft.get("data") or "")).name
        ss["new_draft"] = draft
        ss["new_data"] = data.read_bytes() if draft.get("data") and data.is_file() else None


def _keep_files(folder: Path, files: dict[str, bytes]) -> None:
    """Copy uploads into our folder once (by content), never anywhere else."""
    done = st.session_state.setdefault("kept_files", set())
    for name, data in files.items():
        mark = (str(folder), name, hashlib.sha256(data).hexdigest())
        if mark in done:
            continue
        folder.mkdir(parents=True, exist_ok=True)
        write_atomic(folder / Path(name).name, data)
        done.add(mark)


def keep() -> None:
    """Write the session file when something changed, and name it in the address."""
    ss = st.session_state
    if "origin" not in ss:
        return
    sid = ss.get("session_id") or secrets.token_hex(8)
    ss["session_id"] = sid
    if st.query_params.get(PARAM) != sid:
        st.query_params[PARAM] = sid
    origin = ss["origin"]
    folder = sessions_dir() / sid
    try:
        if origin["kind"] == "path":
            study = {"kind": "path", "path": str(Path(origin["path"]).resolve())}
        elif origin["kind"] == "files":
            _keep_files(folder / "study", origin["files"])
            study = {"kind": "files", "files": sorted(origin["files"]),
                     "label": ss["origin_label"]}
        else:
            return  # an older in-memory draft: nothing to point at yet
        draft = ss.get("new_draft")
        if draft and ss.get("new_data") is not None:
            _keep_files(folder / "draft", {draft["data"]: ss["new_data"]})
        text = session_text(study=study, goals=ss["goals"], models=ss["models"],
                            reduce=ss["reduce"], top=ss["top"], rank_by=ss["rank_by"],
                            aim=ss["aim"], spread=ss["spread"], chosen=ss["chosen"],
                            draft=draft, pins=ss["pins"], batch=ss["batch"],
                            plan=ss["plan"],
                            asked={"next_runs": ss["next_runs"],
                                   "compare_shown": ss["compare_shown"],
                                   "report": ss["report_ready"],
                                   "frontier": ss["frontier_pair"]},
                            whatif={"from": ss["whatif_from"], "settings": ss["whatif"]},
                            typed={"confirm": ss["confirm_typed"],
                                   # the runs table only when edited: an untouched copy
                                   # must not hide later changes to the file itself
                                   "data": ss["data_typed"] if ss["data_changed"] else None})
        if text == ss.get("kept_text"):
            return
        sessions_dir().mkdir(parents=True, exist_ok=True)
        write_atomic(sessions_dir() / f"{sid}{SESSION_SUFFIX}", text)
        if origin["kind"] == "path":
            target = beside(origin["path"])
            if target is not None:
                write_atomic(target, text)
        ss["kept_text"] = text
    except (TradeoffError, OSError):
        # keeping is a convenience: a read-only home must not stop the analysis
        ss["kept_text"] = None
