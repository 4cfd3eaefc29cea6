"""Writing a study back as a study-file document (downloads, saved targets)."""
from __future__ import annotations

from typing import Any


from .mixture import is_component
from .spec import (Factor, Response, Study, _BASE_TOP)

__all__ = ["study_to_dict"]


def study_to_dict(study: Study) -> dict:
    """The study as a TOML-ready dict, with its current goals and settings."""
    head: dict[str, Any] = {"name": study.name}
    if study.data_path is not None:
        head["data"] = (study.data_path.name if study.source is not None and
                        study.data_path.parent == study.source.parent
                        else str(study.data_path))
    if study.sheet is not None:
        head["sheet"] = study.sheet
    head["model"] = study.model
    if study.terms is not None:
        head["terms"] = list(study.terms)
    for key in ("description",):
        if getattr(study, key):
            head[key] = getattr(study, key)
    if study.confidence != 0.95:
        head["confidence"] = study.confidence
    if study.seed:
        head["seed"] = study.seed
    if study.blocks is not None:
        head["blocks"] = study.blocks
    if study.whole_plot is not None:
        head["whole_plot"] = study.whole_plot
    out: dict[str, Any] = {"study": head}
    for key, value in study.spec.items():
        if key not in _BASE_TOP:
            out[key] = value  # sections added by other modules travel unchanged
    # components travel in the spec's [[components]] (study/mixture.py)
    factors = [_factor_dict(f) for f in study.factors if not is_component(f)]
    if factors:
        out["factors"] = factors
    out["responses"] = [_response_dict(r) for r in study.responses]
    if study.constraints:
        out["constraints"] = [dict(c) for c in study.constraints]
    return out


def _factor_dict(f: Factor) -> dict:
    out: dict[str, Any] = {"name": f.name}
    if f.label != f.name:
        out["label"] = f.label
    if f.unit:
        out["unit"] = f.unit
    if f.hard_to_change:
        out["hard_to_change"] = True
    if f.is_categorical:
        out["levels"] = list(f.levels)
        if f.hold is not None:
            out["hold"] = f.hold
        return out
    out["low"], out["high"] = f.low, f.high
    if f.search is not None:
        out["search"] = list(f.search)
    if f.production_sd is not None:
        out["production_sd"] = f.production_sd
    if f.step is not None:
        out["step"] = f.step
    out.update(f.goal.keys())
    return out


def _response_dict(r: Response) -> dict:
    out: dict[str, Any] = {"name": r.name}
    if r.label != r.name:
        out["label"] = r.label
    if r.unit:
        out["unit"] = r.unit
    out.update(r.goal.keys())
    if r.model is not None:
        out["model"] = r.model
    if r.terms is not None:
        out["terms"] = list(r.terms)
    if r.transform != "none":
        out["transform"] = r.transform
    out.update(r.extra)
    return out
