"""Writing the workbench's choices back into the user's own study file, comments kept.

The goals, weights, model choices and production SDs set in the workbench
are put into the study file's text in place: each ``[[responses]]`` or
``[[factors]]`` table keeps its order, its comments and its other keys; only the
keys that changed are rewritten. tomlkit does the editing: it parses TOML into
a document that remembers every comment and blank line, which tomllib (read
only) and tomli-w (writes a fresh file) cannot. ``text_diff`` shows the
changes before anything is written.
"""
from __future__ import annotations

import difflib

from ..errors import StudyError
from .mixture import is_component
from .spec import Study, _GOAL_KEYS

__all__ = ["updated_study_text", "text_diff"]


def _plain(x):
    """A number as a lab user writes it (40, not 40.0)."""
    if isinstance(x, float) and x.is_integer() and abs(x) < 1e15:
        return int(x)
    return x


def _same(a, b) -> bool:
    try:
        return float(a) == float(b)
    except (TypeError, ValueError):
        return a == b


def _set_keys(table, wanted: dict, managed: set[str]) -> None:
    """Make ``table``'s managed keys equal ``wanted``, touching only those that differ."""
    for key in [k for k in table if k in managed and k not in wanted]:
        del table[key]
    for key, value in wanted.items():
        if key in table and _same(table[key], value):
            continue
        table[key] = _plain(value)


def updated_study_text(original: str, study: Study, name: str = "study.toml") -> str:
    """``original`` (a study file's text) with ``study``'s goals and choices put in.

    Responses get their goal keys, ``model`` and ``terms``; numeric factors their
    goal keys and ``production_sd``. Every comment, blank line and other key
    stays as the user wrote it.
    """
    import tomlkit
    from tomlkit.exceptions import TOMLKitError

    try:
        doc = tomlkit.parse(original)
    except TOMLKitError as exc:
        raise StudyError(f"{name}: not a valid study file ({exc}): fix it in a text "
                         "editor first") from None
    by_name = {r.name: r for r in study.responses}
    for table in doc.get("responses", []):
        r = by_name.get(table.get("name"))
        if r is None or r.is_derived:
            continue
        wanted = r.goal.keys(defaults=False)
        if r.model is not None:
            wanted["model"] = r.model
        if r.terms is not None:
            wanted["terms"] = list(r.terms)
        _set_keys(table, wanted, _GOAL_KEYS | {"model", "terms"})
    factors = {f.name: f for f in study.factors
               if not is_component(f) and not f.is_categorical}
    for table in doc.get("factors", []):
        f = factors.get(table.get("name"))
        if f is None:
            continue
        wanted = f.goal.keys(defaults=False)
        if f.production_sd is not None:
            wanted["production_sd"] = f.production_sd
        _set_keys(table, wanted, _GOAL_KEYS | {"production_sd"})
    return tomlkit.dumps(doc)


def text_diff(old: str, new: str, name: str) -> str:
    """The changes from ``old`` to ``new`` as a unified diff ('' when none)."""
    return "".join(difflib.unified_diff(old.splitlines(keepends=True),
                                        new.splitlines(keepends=True),
                                        fromfile=f"{name} (on disk)",
                                        tofile=f"{name} (with the workbench's choices)"))
