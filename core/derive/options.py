"""The derived-response keys of a study file: which kinds exist, what each needs,
and the check of every ``derive = ...`` response when the study loads.
"""
from __future__ import annotations

import math
from pathlib import Path


from ..errors import StudyError, did_you_mean
from .shelf import TEMPERATURE_KINDS, kinetic_options
from .panel_input import panel_layout
from .storage import DIRECTIONS, ORDERS
from .table import DERIVED_COLUMNS
from ..study.spec import SECTION_KEYS, Response, Study
from ..study.reader import check_keys

__all__ = ["STORAGE_KINDS", "PANEL_KINDS", "DERIVE_KINDS", "DERIVED_COLUMNS",
           "CATEGORY_SUMMARIES", "check_derived"]

STORAGE_KINDS = ("value_at", "change", "rate") + TEMPERATURE_KINDS
PANEL_KINDS = ("panel_mean", "panel_adjusted", "panel_category")
# what a panel_category response summarises (model/category_model.py)
CATEGORY_SUMMARIES = ("expected", "top_box", "bottom_box")
DERIVE_KINDS = STORAGE_KINDS + PANEL_KINDS

_USES = {
    "value_at": {"property", "at", "extrapolate", "order", "min_points", "at_temperature"},
    "change": {"property", "at", "from", "relative", "extrapolate", "order", "min_points",
               "at_temperature"},
    "rate": {"property", "order", "min_points", "at_temperature"},
    "time_to_limit": {"property", "limit", "direction", "order", "min_points",
                      "at_temperature"},
    "shelf_life": {"property", "limit", "direction", "order", "min_points",
                   "at_temperature", "estimate"},
    "activation_energy": {"property", "order", "min_points"},
    "q10": {"property", "order", "min_points", "at_temperature"},
    "rate_at": {"property", "order", "min_points", "at_temperature"},
    "panel_mean": {"attribute", "min_points", "fit_on"},
    "panel_adjusted": {"attribute", "min_points", "fit_on"},
    "panel_category": {"attribute", "min_points", "assessor", "summary", "top", "bottom"},
}
_NEEDS = {"value_at": ("property", "at"), "change": ("property", "at"),
          "rate": ("property",), "time_to_limit": ("property", "limit", "direction"),
          "shelf_life": ("property", "limit", "direction"),
          "activation_energy": ("property",), "q10": ("property", "at_temperature"),
          "rate_at": ("property",),
          "panel_mean": ("attribute",), "panel_adjusted": ("attribute",),
          "panel_category": ("attribute",)}
_DERIVE_KEYS = set().union(*_USES.values()) | {"derive"}
_EXAMPLE = {"time": "week", "time_unit": "weeks", "temperature": "storage_temp"}
# Agreement below this correlation with the rest of the panel is reported.
_DEFAULT_AGREEMENT = 0.3
_POOR_FIT_R2 = 0.8


def _fname(study: Study) -> str:
    return study.source.name if study.source is not None else "study"


def _num(value, fname, what) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or \
            not math.isfinite(value):
        raise StudyError(f"{fname}: {what} must be a number, found {value!r}")
    return float(value)


def _section(study: Study, name: str) -> dict | None:
    fname = _fname(study)
    sec = study.spec.get(name)
    if sec is None:
        return None
    if not isinstance(sec, dict):
        raise StudyError(f"{fname}: [{name}] must be a table of keys")
    check_keys(sec, SECTION_KEYS[name], fname, f"[{name}]")
    if not isinstance(sec.get("data"), str) or not sec["data"].strip():
        raise StudyError(f"{fname}: [{name}] needs data = \"<file name>\" naming the "
                         f"{name} table")
    path = Path(sec["data"])
    if study.source is not None and not path.is_absolute():
        path = study.source.parent / path
    out = {"data": path, "sheet": sec.get("sheet")}
    if name == "storage":
        for key in ("time", "time_unit", "temperature"):
            if key in sec and (not isinstance(sec[key], str) or not sec[key].strip()):
                raise StudyError(f"{fname}: [storage] {key} must be a name in quotes, "
                                 f"for example {key} = \"{_EXAMPLE[key]}\"")
        out["time"] = sec.get("time", "time").strip()
        out["time_unit"] = sec.get("time_unit", out["time"] + "s").strip()
        # the column of each measurement's storage temperature (degC), if any
        out["temperature"] = sec["temperature"].strip() if "temperature" in sec else None
    else:
        scale = sec.get("scale")
        if scale is None and sec.get("attributes"):
            out["scale"] = None  # every attribute brings its own ([[panel.attributes]])
        else:
            if not isinstance(scale, list) or len(scale) != 2:
                raise StudyError(f"{fname}: [panel] needs scale = [low, high], the lowest "
                                 "and highest score allowed, for example scale = [1, 9]")
            lo, hi = (_num(v, fname, "[panel] scale") for v in scale)
            if lo >= hi:
                raise StudyError(f"{fname}: [panel] scale = [{lo:g}, {hi:g}]: the low end "
                                 "must come first and be below the high end")
            out["scale"] = (lo, hi)
        out.update(panel_layout(sec, fname, out["scale"]))
        agree = _num(sec.get("min_agreement", _DEFAULT_AGREEMENT), fname,
                     "[panel] min_agreement")
        if not -1 <= agree <= 1:
            raise StudyError(f"{fname}: [panel] min_agreement = {agree:g} must be a "
                             "correlation between -1 and 1, such as 0.3")
        out["min_agreement"] = agree
    return out


def _options(study: Study, r: Response) -> dict:
    """The response's derivation options, checked, with defaults filled in."""
    fname = _fname(study)
    what = f"[[responses]] '{r.name}'"
    ex = r.extra
    kind = ex.get("derive")
    if kind is None or kind is False or kind == "":
        used = sorted(k for k in ex if k in _DERIVE_KEYS)
        if used:
            raise StudyError(f"{fname}: {what}: '{used[0]}' is only used with derive = "
                             f"\"...\" (one of {', '.join(DERIVE_KINDS)}): add derive "
                             "or remove the key")
        return {}
    if kind not in DERIVE_KINDS:
        raise StudyError(f"{fname}: {what}: derive = '{kind}' is not one I know: use one "
                         f"of {', '.join(DERIVE_KINDS)}{did_you_mean(kind, DERIVE_KINDS)}")
    for key in ex:
        if key in _DERIVE_KEYS and key != "derive" and key not in _USES[kind]:
            raise StudyError(f"{fname}: {what}: '{key}' is not used with derive = "
                             f"'{kind}' (it uses {', '.join(sorted(_USES[kind]))}): "
                             "remove it")
    for key in _NEEDS[kind]:
        if key not in ex:
            raise StudyError(f"{fname}: {what}: derive = '{kind}' needs {key} = ...")
    section = "storage" if kind in STORAGE_KINDS else "panel"
    if study.spec.get(section) is None:
        raise StudyError(f"{fname}: {what}: derive = '{kind}' reads the {section} table, "
                         f"but the study file has no [{section}] section: add one "
                         f"([{section}] with data = \"{section}.csv\")")
    opts = {"kind": kind, "section": section}
    for key in ("property", "attribute"):
        if key in ex:
            if not isinstance(ex[key], str) or not ex[key].strip():
                raise StudyError(f"{fname}: {what}: {key} must be a name in quotes, as "
                                 f"written in the {section} table")
            opts[key] = ex[key].strip()
    for key in ("at", "from"):
        if key in ex:
            opts[key] = _num(ex[key], fname, f"{what} {key}")
            if opts[key] < 0:
                raise StudyError(f"{fname}: {what}: {key} = {opts[key]:g} is before the "
                                 "start of storage: use a time of 0 or more")
    if "from" in opts and opts["from"] == opts["at"]:
        raise StudyError(f"{fname}: {what}: from and at are both {opts['at']:g}: a change "
                         "needs two different times")
    for key in ("relative", "extrapolate"):
        if key in ex and not isinstance(ex[key], bool):
            raise StudyError(f"{fname}: {what}: {key} must be true or false, found "
                             f"{ex[key]!r}")
        opts[key] = bool(ex.get(key, False))
    order = ex.get("order", "zero")
    if order not in ORDERS:
        raise StudyError(f"{fname}: {what}: order = '{order}' is not one I know: use "
                         "'zero' (straight line) or 'first' (log-linear)")
    opts["order"] = order
    if "limit" in ex:
        opts["limit"] = _num(ex["limit"], fname, f"{what} limit")
        if order == "first" and opts["limit"] <= 0:
            raise StudyError(f"{fname}: {what}: a first-order fit cannot reach a limit "
                             f"of {opts['limit']:g}: use a limit above 0 or order = 'zero'")
    if "direction" in ex:
        if ex["direction"] not in DIRECTIONS:
            raise StudyError(f"{fname}: {what}: direction = '{ex['direction']}' is not "
                             "one I know: use 'up' (the property rises to the limit) or "
                             "'down' (it falls to it)")
        opts["direction"] = ex["direction"]
    if "fit_on" in ex and ex["fit_on"] not in ("runs", "scores"):
        raise StudyError(f"{fname}: {what}: fit_on = {ex['fit_on']!r}: use \"runs\" (the "
                         "model of the run values) or \"scores\" (the model of the panel's "
                         "scores, runs random)")
    if kind == "panel_category":
        opts.update(_category_options(study, ex, fname, what, opts["attribute"]))
    opts.update(kinetic_options(ex, kind, fname, what))
    default_min = 2 if kind in PANEL_KINDS else 3
    mp = ex.get("min_points", default_min)
    if isinstance(mp, bool) or not isinstance(mp, int) or mp < 1:
        raise StudyError(f"{fname}: {what}: min_points must be a whole number of 1 or "
                         f"more, found {mp!r}")
    if kind in ("rate",) + TEMPERATURE_KINDS and mp < 2:
        raise StudyError(f"{fname}: {what}: a fitted line needs min_points of 2 or more")
    opts["min_points"] = mp
    return opts


def _category_options(study: Study, ex: dict, fname: str, what: str, attr: str) -> dict:
    """``assessor``, ``summary`` and ``top`` / ``bottom`` of a panel_category response."""
    from .panel_input import attribute_info

    info = attribute_info(_section(study, "panel"), attr)
    if info["kind"] != "category":
        raise StudyError(f"{fname}: {what}: derive = 'panel_category' needs a category "
                         f"attribute, but '{attr}' is a line scale: give it kind = "
                         "\"category\" in [[panel.attributes]] or use derive = 'panel_mean'")
    lo, hi = info["scale"]
    n_cat = int(hi - lo) + 1
    assessor = ex.get("assessor", "none")
    if assessor not in ("none", "fixed"):
        raise StudyError(f"{fname}: {what}: assessor = {assessor!r}: use \"none\" (the "
                         "panel as one) or \"fixed\" (each assessor's own use of the scale)")
    summary = ex.get("summary", "expected")
    if summary not in CATEGORY_SUMMARIES:
        raise StudyError(f"{fname}: {what}: summary = {summary!r}: use \"expected\" (the "
                         "expected category), \"top_box\" (percent of scores in the top "
                         "categories, top = N) or \"bottom_box\" (bottom = N)")
    out = {"assessor": assessor, "summary": summary, "boxes": 0}
    side = {"top_box": "top", "bottom_box": "bottom"}.get(summary)
    for key in ("top", "bottom"):
        if key in ex and key != side:
            raise StudyError(f"{fname}: {what}: {key} = ... is used with summary = "
                             f"\"{key}_box\": remove it or change the summary")
    if side is not None:
        n = ex.get(side, 1)
        if isinstance(n, bool) or not isinstance(n, int) or not 1 <= n < n_cat:
            raise StudyError(f"{fname}: {what}: {side} = {n!r} must be a whole number of "
                             f"categories from 1 to {n_cat - 1} (the scale has {n_cat})")
        out["boxes"] = n
    return out


def check_derived(study: Study) -> None:
    """Check the [storage] and [panel] sections and every derived response's keys.

    Raises ``StudyError`` with a one-line message naming the file, the section
    or response and the key. Needs no data.
    """
    for name in ("storage", "panel"):
        _section(study, name)
    for r in study.responses:
        _options(study, r)
