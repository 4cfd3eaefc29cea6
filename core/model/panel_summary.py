"""The panel analysis of a whole study: every attribute of its panel table."""
from __future__ import annotations

import numpy as np

from ..derive.panel_input import attribute_info
from ..derive.panel_study import panel_scores
from ..study.spec import Study
from .panel_anova import ALPHA, assessor_performance, attribute_anova

__all__ = ["panel_analysis", "panel_json"]


def panel_analysis(study: Study, *, panel=None, alpha: float = ALPHA) -> dict:
    """Per attribute (in table order): its scale and kind, the panel ANOVA,
    least-squares means, Tukey-Kramer pairs and groups, and each assessor's
    performance (see ``panel_anova``)."""
    sec, frame = panel_scores(study, panel)
    out = {}
    for attr, sub in frame.groupby("attribute", sort=False):
        info = attribute_info(sec, attr)
        res = attribute_anova(sub, alpha=alpha)
        res["assessors"] = assessor_performance(sub, min_agreement=sec["min_agreement"],
                                                alpha=alpha)
        res["scale"] = list(info["scale"])
        res["kind"] = info["kind"]
        res["labels"] = info["labels"]
        sessions = sorted(set(sub["session"]) - {""})
        res["sessions"] = sessions if len(sessions) > 1 else []
        out[attr] = res
    return {"attributes": out, "source": sec["data"].name}


def _clean(value):
    if isinstance(value, dict):
        return {k: _clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_clean(v) for v in value]
    if isinstance(value, float) and not np.isfinite(value):
        return None
    return value


def panel_json(result: dict) -> dict:
    """The analysis as plain JSON values (NaN as null)."""
    return _clean(result)
