"""Cached wrappers of the library calls the pages make: the only place that caches.

Streamlit reruns a page on every click, so opening files, fitting models and
searching are cached. Each wrapper is keyed by a digest of exactly what its
answer depends on (the data and the specification); the heavy objects are
passed as ``_``-prefixed arguments, which Streamlit does not hash.
"""
from __future__ import annotations

import hashlib
import json
from dataclasses import asdict
from pathlib import Path

import streamlit as st

import tradeoff
from tradeoff.inputs import draft_spec, study_from_files, with_response_model

__all__ = ["base_study", "current_study", "fit", "optimize", "study_keys",
           "contour", "curves", "runs_table", "whatif", "chances"]


def _digest(*parts) -> str:
    h = hashlib.sha256()
    for part in parts:
        h.update(part if isinstance(part, bytes) else
                 json.dumps(part, sort_keys=True, default=str).encode())
        h.update(b"\x00")
    return h.hexdigest()[:24]


def origin_key(origin: dict) -> str:
    """A digest of where a study came from (for a file: its path and modification time)."""
    if origin["kind"] == "path":
        path = Path(origin["path"])
        return _digest("path", str(path), path.stat().st_mtime_ns if path.exists() else 0)
    if origin["kind"] == "files":
        return _digest("files", *[(n, _digest(b)) for n, b in sorted(origin["files"].items())])
    return _digest("draft", origin["name"], _digest(origin["data"]), origin["factors"],
                   origin["responses"])


@st.cache_resource(max_entries=16, show_spinner=False)
def _open(key: str, _origin: dict):
    origin = _origin
    if origin["kind"] == "path":
        return tradeoff.load_study(origin["path"])
    if origin["kind"] == "files":
        return study_from_files(origin["files"])
    spec = draft_spec(origin["name"], origin["data"], origin["factors"], origin["responses"])
    return tradeoff.study_from_dict(spec, source=Path(origin["name"]).with_suffix(".toml"),
                                    data_bytes=origin["data"])


def base_study(origin: dict):
    """The study as opened, before the user's goals and model choices."""
    return _open(origin_key(origin), origin)


def current_study():
    """The open study with the user's model choices and goals applied."""
    ss = st.session_state
    study = base_study(ss["origin"])
    for name, model in ss["models"].items():
        study = with_response_model(study, name, model)
    for name, goal in ss["goals"].items():
        study = study.with_goal(name, goal)
    return study


def study_keys(study) -> tuple[str, str]:
    """(fit key, search key): digests of what a fit and a search depend on."""
    fit_part = [(r.name, study.model_for(r), r.transform) for r in study.responses]
    fit_key = _digest(origin_key(st.session_state["origin"]), fit_part)
    goals = [(x.name, asdict(x.goal)) for x in (*study.factors, *study.responses)]
    search_key = _digest(fit_key, goals, list(study.constraints), study.seed,
                         study.confidence)
    return fit_key, search_key


@st.cache_resource(max_entries=32, show_spinner=False)
def _fit(key: str, _study):
    from tradeoff.models import fit_study

    return fit_study(_study)


def fit(study):
    """The fitted models of every response (cached by data and model choices)."""
    return _fit(study_keys(study)[0], study)


@st.cache_resource(max_entries=64, show_spinner=False)
def _optimize(key: str, top: int, _study, _fit):
    return tradeoff.optimize(_study, top=top, seed=_study.seed, fit=_fit)


def optimize(study, top: int):
    """The best settings and alternatives (cached by data, models, goals and ``top``)."""
    fitted = fit(study)
    with st.spinner("Searching the tested region for the best balance..."):
        return _optimize(study_keys(study)[1], top, study, fitted)


@st.cache_resource(max_entries=64, show_spinner=False)
def _runs_table(key: str, _study, _fit):
    from tradeoff.maps import runs_table as build

    return build(_study, _fit)


def runs_table(study, fitted=None):
    """The runs with coded settings and marks (see ``tradeoff.maps.runs_table``)."""
    key = study_keys(study)[0] if fitted is not None else origin_key(
        st.session_state["origin"])
    return _runs_table(_digest(key, fitted is not None), study, fitted)


@st.cache_resource(max_entries=128, show_spinner=False)
def _contour(key: str, _study, _fit, x: str, y: str, held_items: tuple, n: int):
    from tradeoff.maps import contour_grid

    return contour_grid(_study, _fit, x, y, dict(held_items), n=n)


def contour(study, fitted, x: str, y: str, held: dict, n: int = 41):
    """Predictions and D over a grid of two factors (``tradeoff.maps.contour_grid``)."""
    items = tuple(sorted((k, v if isinstance(v, str) else float(v)) for k, v in held.items()))
    return _contour(study_keys(study)[1], study, fitted, x, y, items, n)


@st.cache_resource(max_entries=64, show_spinner=False)
def _curves(key: str, _study):
    from tradeoff.maps import desirability_curves

    return desirability_curves(_study)


def curves(study):
    """Each goal's desirability curve (``tradeoff.maps.desirability_curves``)."""
    return _curves(study_keys(study)[1], study)


@st.cache_resource(max_entries=64, show_spinner=False)
def _chances(key: str, _study, _fit, points: tuple):
    from tradeoff.maps import settings_chances

    return settings_chances(_study, _fit, [dict(p) for p in points])


def chances(study, fitted, points: list[dict]):
    """Chance of meeting each limit and all at some settings (``settings_chances``)."""
    frozen = tuple(tuple(sorted((k, v if isinstance(v, str) else float(v))
                                for k, v in p.items())) for p in points)
    with st.spinner("Estimating the chance of meeting every limit..."):
        return _chances(study_keys(study)[1], study, fitted, frozen)


def whatif(study, fitted, settings: dict):
    """Predictions with intervals at hand-set settings (not cached: one point is quick)."""
    return fitted.predict(settings)
