"""A panel response modelled on the scores themselves, not on the run means.

``score = factor model + assessor + run + error`` with the run as a random
intercept: runs are the whole plots and the scores within a run its
sub-plots, so the fit is ``WholePlotModel``'s REML/GLS (``model/reml.py``)
with the assessors as sum-to-zero nuisance terms (the study's blocks slot).
One run per product then still has honest tests and intervals: the
run-to-run SD is estimated from the runs the factor model does not explain,
the assessor-by-run scatter from the panel's own replication, and a new
product's mean scatters with both (Naes, Brockhoff & Tomic 2010, ch. 5,
treat products and assessors this way; the REML engine is the whole-plot one).

When the factor model uses every run (one run per product and a saturated
model, such as a 2x2 with its interaction), the run-to-run SD cannot be
separated from the effects; the scores are then fitted with the runs fixed,
as the panel ANOVA does, and the model says so in its warnings.

Predictions are for the average assessor (assessor terms at 0).
"""
from __future__ import annotations

import numpy as np

from ..derive.panel_study import panel_scores
from ..errors import ModelError
from ..study.coding import to_coded

__all__ = ["FIT_ON", "NO_RUN_DF", "fits_on_scores", "score_data"]

FIT_ON = ("runs", "scores")
NO_RUN_DF = ("fitted on the panel's scores with the runs fixed: the model uses every "
             "run, so no run-to-run SD can be estimated; effects are tested against the "
             "panel's scatter (assessor by run), which says whether the panel tells "
             "these products apart, not whether a new batch of each would repeat them")


def fits_on_scores(response) -> bool:
    """True when the response asks for ``fit_on = "scores"`` (panel kinds only)."""
    fit_on = response.extra.get("fit_on", "runs")
    if fit_on not in FIT_ON:
        raise ModelError(f"response '{response.name}': fit_on = {fit_on!r}: use \"runs\" "
                         "(the model of the run values) or \"scores\" (the model of the "
                         "panel's scores, runs random)")
    if fit_on == "scores" and response.extra.get("derive") not in ("panel_mean",
                                                                    "panel_adjusted"):
        raise ModelError(f"response '{response.name}': fit_on = \"scores\" is for a "
                         "response derived from the panel (derive = \"panel_mean\" or "
                         "\"panel_adjusted\")")
    return fit_on == "scores"


def score_data(study, response) -> dict:
    """Coded settings, scores, ids, assessors and runs of one panel response.

    Returns ``X`` (one coded row per score: its run's settings), ``y``, ``ids``
    (``run/assessor`` and ``/session`` when sessions repeat), ``assessor`` and
    ``run`` arrays. Runs without factor settings in the runs table are left out.
    """
    _, frame = panel_scores(study)
    attr = response.extra["attribute"]
    sub = frame[(frame["attribute"] == attr)].dropna(subset=["score"])
    if study.block_labels() is not None:
        raise ModelError(f"response '{response.name}': fit_on = \"scores\" takes the "
                         "assessors as the nuisance terms and cannot also take the runs' "
                         "blocks: use fit_on = \"runs\"")
    coded = to_coded(study.factors, study.runs)
    index = {r: i for i, r in enumerate(study.runs["run"])}
    sub = sub[sub["run"].map(index).notna()]
    if sub.empty:
        raise ModelError(f"response '{response.name}': no '{attr}' scores for the runs")
    rows = sub["run"].map(index).to_numpy(int)
    ids = (sub["run"] + "/" + sub["assessor"]
           + np.where(sub["session"] != "", "/" + sub["session"], "")).to_numpy(object)
    return {"X": coded[rows], "y": sub["score"].to_numpy(float), "ids": ids,
            "assessor": sub["assessor"].to_numpy(object),
            "run": sub["run"].to_numpy(object)}
