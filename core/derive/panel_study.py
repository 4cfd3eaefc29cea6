"""A study's panel table, read as the ``[panel]`` section lays it out."""
from __future__ import annotations

import pandas as pd

from ..errors import StudyError
from ..study.intake import RawTable
from ..study.runs import read_study_table
from ..study.spec import Study
from .options import _section
from .panel_input import read_scores

__all__ = ["panel_scores"]


def panel_scores(study: Study, panel: RawTable | None = None) -> tuple[dict, pd.DataFrame]:
    """The checked ``[panel]`` section and its table, one score a row.

    ``panel`` may carry an already-read table (an upload). Raises
    ``StudyError`` when the study has no ``[panel]`` section.
    """
    sec = _section(study, "panel")
    if sec is None:
        raise StudyError(f"{study.source.name if study.source else 'study'}: no [panel] "
                         "section: the panel analysis needs a panel table "
                         "([panel] with data = \"panel.csv\")")
    raw = panel if panel is not None else read_study_table(study, sec["data"],
                                                           sheet=sec["sheet"])
    run_ids = list(study.runs["run"]) if study.runs is not None else None
    return sec, read_scores(raw, sec, run_ids=run_ids)
