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
from tradeoff.inputs import study_from_files, with_production_sd, with_response_model

__all__ = ["base_study", "current_study", "fit", "optimize", "study_keys",
           "contour", "contour_lines", "limits_map", "slices", "model_interaction",
           "curves", "runs_table", "what_if", "kinetics", "compare", "next_batch"]


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
        # "revision" is bumped when the workbench saves the runs (views/data.py)
        return _digest("path", str(path), path.stat().st_mtime_ns if path.exists() else 0,
                       origin.get("revision", 0))
    return _digest("files", *[(n, _digest(b)) for n, b in sorted(origin["files"].items())])


@st.cache_resource(max_entries=16, show_spinner=False)
def _open(key: str, _origin: dict):
    origin = _origin
    if origin["kind"] == "path":
        return tradeoff.load_study(origin["path"])
    return study_from_files(origin["files"])


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
    for name, value in ss.get("spread", {}).items():
        if name in study.factor_names and value != study.factor(name).production_sd:
            study = with_production_sd(study, name, value)
    return study


def study_keys(study) -> tuple[str, str]:
    """(fit key, search key): digests of what a fit and a search depend on."""
    reduce = sorted(st.session_state["reduce"])
    fit_part = [(r.name, study.model_for(r), r.transform) for r in study.responses]
    fit_key = _digest(origin_key(st.session_state["origin"]), fit_part, reduce)
    goals = [(x.name, asdict(x.goal)) for x in (*study.factors, *study.responses)]
    spread = [(f.name, f.production_sd) for f in study.factors]
    search_key = _digest(fit_key, goals, list(study.constraints), study.seed,
                         study.confidence, spread)
    return fit_key, search_key


@st.cache_resource(max_entries=32, show_spinner=False)
def _fit(key: str, _study, reduce: tuple):
    from tradeoff.model.study_fit import StudyFit, fit_study

    full = fit_study(_study)
    if not reduce:
        return full
    # Reduction is chosen per response: take those responses from a reduced fit.
    reduced = fit_study(_study, reduce=True, responses=list(reduce))
    models = {name: reduced.models.get(name, model) for name, model in full.models.items()}
    return StudyFit(study=_study, models=models, skipped=full.skipped)


def fit(study):
    """The fitted models of every response (cached by data and model choices)."""
    reduce = tuple(sorted(n for n in st.session_state["reduce"] if n in study.response_names))
    return _fit(study_keys(study)[0], study, reduce)


@st.cache_resource(max_entries=64, show_spinner=False)
def _optimize(key: str, top: int, rank_by: str, _study, _fit, aim: str = "balance"):
    from tradeoff.search.search import optimize as search

    return search(_study, top=top, seed=_study.seed, fit=_fit, rank_by=rank_by, aim=aim)


def optimize(study, fitted):
    """The best settings and alternatives (cached by data, models, goals and options)."""
    ss = st.session_state
    with st.spinner("Searching the tested region for the best balance..."):
        return _optimize(study_keys(study)[1], ss["top"], ss["rank_by"], study, fitted,
                         ss.get("aim", "balance"))


@st.cache_resource(max_entries=32, show_spinner=False)
def _frontier(key: str, goals: tuple, _study, _fit):
    from tradeoff.search.frontier import frontier as trace

    return trace(_study, list(goals), points=21, seed=_study.seed, fit=_fit, draws=2000)


@st.cache_resource(max_entries=32, show_spinner=False)
def _conflicts(key: str, _study, _fit):
    from tradeoff.search.conflict import goal_conflicts

    return goal_conflicts(_study, fit=_fit, seed=_study.seed)


def conflicts(study, fitted):
    """Every pair of goals by the rank correlation of their d (``goal_conflicts``)."""
    return _conflicts(study_keys(study)[1], study, fitted)


def frontier(study, fitted, goals):
    """The trade-off frontier between two goals (cached by data, models, goals, pair)."""
    with st.spinner("Tracing the trade-off frontier..."):
        return _frontier(study_keys(study)[1], tuple(goals), study, fitted)


@st.cache_resource(max_entries=64, show_spinner=False)
def _runs_table(key: str, _study, _fit):
    from tradeoff.maps.tables import runs_table as build

    return build(_study, _fit)


def runs_table(study, fitted=None):
    """The runs with coded settings and marks (see ``tradeoff.maps.tables.runs_table``)."""
    key = study_keys(study)[0] if fitted is not None else origin_key(
        st.session_state["origin"])
    return _runs_table(_digest(key, fitted is not None), study, fitted)


@st.cache_resource(max_entries=128, show_spinner=False)
def _contour(key: str, _study, _fit, x: str, y: str, held_items: tuple, n: int):
    from tradeoff.maps.tables import contour_grid

    return contour_grid(_study, _fit, x, y, dict(held_items), n=n)


def contour(study, fitted, x: str, y: str, held: dict, n: int = 41):
    """Predictions and D over a grid of two factors (``tradeoff.maps.tables.contour_grid``)."""
    items = tuple(sorted((k, v if isinstance(v, str) else float(v)) for k, v in held.items()))
    return _contour(study_keys(study)[1], study, fitted, x, y, items, n)


def _held_items(held: dict) -> tuple:
    return tuple(sorted((k, v if isinstance(v, str) else float(v)) for k, v in held.items()))


@st.cache_resource(max_entries=128, show_spinner=False)
def _contour_lines(key: str, _study, _fit, value: str, x: str, y: str, held_items: tuple):
    from tradeoff.maps.contours import contour_lines as build

    return build(_study, value, x, y, fixed=dict(held_items), fit=_fit)


def contour_lines(study, fitted, value: str, x: str, y: str, held: dict):
    """Lines of equal response or D (``tradeoff.maps.contours.contour_lines``)."""
    return _contour_lines(study_keys(study)[1], study, fitted, value, x, y,
                          _held_items(held))


@st.cache_resource(max_entries=64, show_spinner=False)
def _limits_map(key: str, _study, _fit, x: str, y: str, held_items: tuple):
    from tradeoff.maps.contours import limits_map as build

    return build(_study, x, y, fixed=dict(held_items), fit=_fit)


def limits_map(study, fitted, x: str, y: str, held: dict):
    """Every limit's line and the region where all hold (``contours.limits_map``)."""
    return _limits_map(study_keys(study)[1], study, fitted, x, y, _held_items(held))


@st.cache_resource(max_entries=64, show_spinner=False)
def _slices(key: str, _study, _fit, items: tuple):
    from tradeoff.maps.slices import slices as build

    return build(_study, dict(items), fit=_fit)


def slices(study, fitted, settings: dict):
    """Each response and D along each factor (``tradeoff.maps.slices.slices``)."""
    return _slices(study_keys(study)[1], study, fitted, _held_items(settings))


@st.cache_resource(max_entries=64, show_spinner=False)
def _model_interaction(key: str, _study, _fit, response: str, a: str, b: str):
    from tradeoff.maps.slices import model_interaction as build

    return build(_study, response, a, b, fit=_fit)


def model_interaction(study, fitted, response: str, a: str, b: str):
    """The model's predictions at the ends of two factors (``slices.model_interaction``)."""
    return _model_interaction(study_keys(study)[0], study, fitted, response, a, b)


@st.cache_resource(max_entries=16, show_spinner=False)
def _kinetics(key: str, _study):
    from tradeoff.derive.derived import kinetic_tables

    return kinetic_tables(_study)


def kinetics(study):
    """Per-run tables and Arrhenius points of the responses fitted across storage
    temperatures (``tradeoff.derive.derived.kinetic_tables``)."""
    return _kinetics(_digest(origin_key(st.session_state["origin"]), study.confidence),
                     study)


@st.cache_resource(max_entries=64, show_spinner=False)
def _curves(key: str, _study):
    from tradeoff.maps.tables import desirability_curves

    return desirability_curves(_study)


def curves(study):
    """Each goal's desirability curve (``tradeoff.maps.tables.desirability_curves``)."""
    return _curves(study_keys(study)[1], study)


@st.cache_resource(max_entries=64, show_spinner=False)
def _what_if(key: str, _study, _fit, items: tuple):
    from tradeoff.maps.tables import what_if as build

    return build(_study, _fit, dict(items))


def what_if(study, fitted, settings: dict):
    """Predictions, intervals and chances at hand-set settings (``tradeoff.maps.tables.what_if``)."""
    items = tuple((k, v if isinstance(v, str) else float(v)) for k, v in settings.items())
    return _what_if(study_keys(study)[1], study, fitted, items)


@st.cache_resource(max_entries=8, show_spinner=False)
def _report(key: str, kind: str, top: int, _study, _fit, _result, _study_bytes,
            _data_bytes):
    from tradeoff.report.html import build_report_html
    from tradeoff.report.workbook import build_workbook

    build = build_report_html if kind == "html" else build_workbook
    return build(_study, top=top, fit=_fit, result=_result, study_bytes=_study_bytes,
                 data_bytes=_data_bytes)


def report(study, fitted, result, kind: str, study_bytes=None, data_bytes=None) -> bytes:
    """The report as HTML (``kind="html"``) or an Excel workbook (``"xlsx"``), cached."""
    ss = st.session_state
    key = _digest(study_keys(study)[1], ss["top"], ss["rank_by"])
    busy = ("Writing the report (charts take a few seconds)..." if kind == "html"
            else "Writing the workbook...")
    with st.spinner(busy):
        return _report(key, kind, ss["top"], study, fitted, result, study_bytes, data_bytes)


@st.cache_resource(max_entries=32, show_spinner=False)
def _compare(key: str, name: str, _study):
    from tradeoff.model.compare import compare_response

    return compare_response(_study, name)


def compare(study, name: str):
    """The cross-validated comparison of one response's models (cached by the data)."""
    with st.spinner("Predicting each run from the others, model by model..."):
        return _compare(_digest(origin_key(st.session_state["origin"]), name), name, study)


@st.cache_resource(max_entries=16, show_spinner=False)
def _next_batch(key: str, runs: int, distance: float, _study, _fit):
    from tradeoff.search.next_batch import next_batch as suggest

    return suggest(_study, runs=runs, seed=_study.seed, fit=_fit, min_distance=distance)


def next_batch(study, fitted, runs: int, distance: float):
    """The suggested next runs (``tradeoff.search.next_batch``), cached by data,
    models, goals and the options."""
    with st.spinner("Choosing the runs most likely to improve the balance..."):
        return _next_batch(study_keys(study)[1], runs, distance, study, fitted)


# -- blend triangles (ternary maps) -------------------------------------------------------
__all__ += ["ternary_lines", "ternary_limits", "ternary_wash"]


def _blend_items(study, components, settings: dict) -> tuple:
    """(the three, the other components' amounts, the process settings) as hashables."""
    comps = [f.name for f in study.factors if getattr(f, "is_component", False)]
    reference = tuple((n, float(settings[n])) for n in comps)
    process = _held_items({k: v for k, v in settings.items() if k not in comps})
    return tuple(components), reference, process


@st.cache_resource(max_entries=64, show_spinner=False)
def _ternary_lines(key: str, _study, _fit, value: str, three: tuple, reference: tuple,
                   process: tuple):
    from tradeoff.maps.ternary import ternary_lines as build

    return build(_study, value, list(three), reference=dict(reference),
                 settings=dict(process), fit=_fit)


def ternary_lines(study, fitted, value: str, components, settings: dict):
    """Lines of equal response or D in the triangle (``tradeoff.ternary_lines``), the
    other components and the process factors at ``settings``."""
    return _ternary_lines(study_keys(study)[1], study, fitted, value,
                          *_blend_items(study, components, settings))


@st.cache_resource(max_entries=32, show_spinner=False)
def _ternary_limits(key: str, _study, _fit, three: tuple, reference: tuple, process: tuple):
    from tradeoff.maps.ternary import ternary_limits as build

    return build(_study, list(three), reference=dict(reference), settings=dict(process),
                 fit=_fit)


def ternary_limits(study, fitted, components, settings: dict):
    """Every limit, the allowed blends and where all limits hold, in the triangle
    (``tradeoff.ternary_limits``)."""
    return _ternary_limits(study_keys(study)[1], study, fitted,
                           *_blend_items(study, components, settings))


@st.cache_resource(max_entries=32, show_spinner=False)
def _ternary_wash(key: str, _study, _fit, three: tuple, reference: tuple, process: tuple):
    from tradeoff.maps.mixture_tables import ternary_grid
    from tradeoff.maps.ternary import ternary_points

    return ternary_points(ternary_grid(_study, _fit, list(three), reference=dict(reference),
                                       settings=dict(process), steps=60, zoom=True))


def ternary_wash(study, fitted, components, settings: dict):
    """Predictions and D over the triangle's blends with plotting coordinates
    (``tradeoff.ternary_grid``, zoomed to the blends the study allows)."""
    return _ternary_wash(study_keys(study)[1], study, fitted,
                         *_blend_items(study, components, settings))


@st.cache_resource(max_entries=16, show_spinner=False)
def _panel(key: str, _study):
    from tradeoff.model.panel_summary import panel_analysis

    return panel_analysis(_study)


def panel(study):
    """The panel analysis of the open study (cached by the study as opened)."""
    return _panel(origin_key(st.session_state["origin"]), study)


# -- a blend's model: effects along Cox directions and Cox traces -------------------------
__all__ += ["blend_effects", "cox_traces"]


@st.cache_resource(max_entries=32, show_spinner=False)
def _blend_effects(key: str, _study, _fit, response: str, held: tuple):
    from tradeoff.maps.mixture_tables import blend_effects as build

    return build(_study, _fit, response, settings=dict(held))


def blend_effects(study, fitted, response: str, held: dict):
    """Each component's and process factor's effect on a response at the reference blend
    (``tradeoff.maps.mixture_tables.blend_effects``)."""
    return _blend_effects(study_keys(study)[0], study, fitted, response, _held_items(held))


@st.cache_resource(max_entries=32, show_spinner=False)
def _cox_traces(key: str, _study, _fit, held: tuple):
    from tradeoff.maps.mixture_tables import mixture_trace

    return mixture_trace(_study, _fit, settings=dict(held))


def cox_traces(study, fitted, held: dict):
    """Every response along each component's Cox direction through the reference blend
    (``tradeoff.maps.mixture_tables.mixture_trace``)."""
    return _cox_traces(study_keys(study)[0], study, fitted, _held_items(held))


# -- plans: ``tradeoff plan`` run on the open study's file --------------------------------
__all__ += ["study_file_path", "plan"]


@st.cache_resource(max_entries=8, show_spinner=False)
def _study_file_path(key: str, _origin: dict) -> str:
    import tempfile

    from tradeoff.study.files import write_atomic

    # a scratch copy of the uploads for the plan command, never the user's files
    folder = Path(tempfile.mkdtemp(prefix="tradeoff-plan-study-"))
    for name, data in _origin["files"].items():
        write_atomic(folder / Path(name).name, data)
    name = next(n for n in _origin["files"] if n.lower().endswith(".toml"))
    return str(folder / Path(name).name)


def study_file_path(study) -> str:
    """A study file on this computer for the open study (a scratch copy of uploads)."""
    origin = st.session_state["origin"]
    if origin["kind"] == "path":
        return origin["path"]
    return _study_file_path(origin_key(origin), origin)


@st.cache_resource(max_entries=16, show_spinner=False)
def _plan(key: str, path: str, options: tuple):
    from tradeoff.plan.plan_request import plan_request

    return plan_request(path, **dict(options))


def plan(study, options: dict):
    """``tradeoff plan`` with these options on the open study (cached by study and options)."""
    path = study_file_path(study)
    with st.spinner("Planning the runs..."):
        return _plan(origin_key(st.session_state["origin"]), path,
                     tuple(sorted(options.items())))


# -- pinned recipes side by side -----------------------------------------------------------
__all__ += ["recipes_side_by_side"]


@st.cache_resource(max_entries=16, show_spinner=False)
def _recipes_side_by_side(key: str, _study, _fit, items: tuple):
    from tradeoff.maps.recipe_compare import compare_recipes

    return compare_recipes(_study, _fit, {label: dict(s) for label, s in items})


def recipes_side_by_side(study, fitted, recipes: dict):
    """Pinned recipes compared (``tradeoff.maps.recipe_compare.compare_recipes``)."""
    items = tuple((label, tuple((k, v if isinstance(v, str) else float(v))
                                for k, v in s.items())) for label, s in recipes.items())
    return _recipes_side_by_side(study_keys(study)[1], study, fitted, items)
