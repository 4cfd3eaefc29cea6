"""Files a user takes away from the workbench, built as bytes.

The study as a study file (TOML) with the goals and model choices as they
stand now, and the search result as CSV (one tidy table) or as an Excel
workbook (several sheets, with the provenance block). Nothing is written to
disk here; the caller saves or serves the bytes.
"""
from __future__ import annotations

import pandas as pd

from ..cautions import FOOD_CAUTION
from ..study.safe_cells import csv_bytes

__all__ = ["study_toml_bytes", "solutions_table", "results_csv_bytes", "CAUTION"]

CAUTION = FOOD_CAUTION


def study_toml_bytes(study) -> bytes:
    """The study as a UTF-8 study file, with its current goals, weights and models."""
    import tomli_w

    from ..study.writer import study_to_dict

    return tomli_w.dumps(study_to_dict(study)).encode("utf-8")


def solutions_table(result) -> pd.DataFrame:
    """One row per solution: label, rank, D, chance of meeting all limits, settings.

    Columns ``solution``, ``rank``, ``D``, ``chance_all``, (when some factor
    has a production SD or production was asked for: ``chance_all_production``
    and ``d_given_up``), then one column per factor (natural setting or level
    name), then ``out_of_limits`` and ``notes`` (the solution's warnings
    joined by " | ").
    """
    rows = []
    production = any(s.chance_all_production is not None for s in result.solutions)
    for s in result.solutions:
        row = {"solution": s.label, "rank": s.rank, "D": s.desirability,
               "chance_all": s.chance_all}
        if production:
            row["chance_all_production"] = s.chance_all_production
            row["d_given_up"] = s.d_given_up
        row.update(s.settings)
        row["out_of_limits"] = ", ".join(s.out_of_limits)
        row["notes"] = " | ".join(s.warnings)
        rows.append(row)
    return pd.DataFrame(rows)


def results_csv_bytes(result) -> bytes:
    """The result's tidy table (``OptimizationResult.table()``) as UTF-8 CSV."""
    return csv_bytes(result.table())
