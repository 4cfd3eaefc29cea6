"""Files a user takes away from the workbench, built as bytes.

The study as a study file (TOML) with the goals and model choices as they
stand now, and the search result as CSV (one tidy table) or as an Excel
workbook (several sheets, with the provenance block). Nothing is written to
disk here; the caller saves or serves the bytes.
"""
from __future__ import annotations

import io

import pandas as pd

from .cautions import FOOD_CAUTION

__all__ = ["study_toml_bytes", "solutions_table", "results_csv_bytes",
           "results_excel_bytes", "CAUTION"]

CAUTION = FOOD_CAUTION


def study_toml_bytes(study) -> bytes:
    """The study as a UTF-8 study file, with its current goals, weights and models."""
    import tomli_w

    from .study import study_to_dict

    return tomli_w.dumps(study_to_dict(study)).encode("utf-8")


def solutions_table(result) -> pd.DataFrame:
    """One row per solution: label, rank, D, chance of meeting all limits, settings.

    Columns ``solution``, ``rank``, ``D``, ``chance_all``, then one column per
    factor (natural setting or level name), then ``out_of_limits`` and
    ``notes`` (the solution's warnings joined by " | ").
    """
    rows = []
    for s in result.solutions:
        row = {"solution": s.label, "rank": s.rank, "D": s.desirability,
               "chance_all": s.chance_all}
        row.update(s.settings)
        row["out_of_limits"] = ", ".join(s.out_of_limits)
        row["notes"] = " | ".join(s.warnings)
        rows.append(row)
    return pd.DataFrame(rows)


def results_csv_bytes(result) -> bytes:
    """The result's tidy table (``OptimizationResult.table()``) as UTF-8 CSV."""
    return result.table().to_csv(index=False).encode("utf-8")


def results_excel_bytes(result, study, *, provenance: dict | None = None) -> bytes:
    """The result as an Excel workbook.

    Sheets: ``solutions`` (``solutions_table``), ``predictions``
    (``OptimizationResult.table()``), ``goals`` (each goal as used),
    ``notes`` (warnings, assumptions and the food caution) and, when given,
    ``provenance`` (key, value).
    """
    goals = []
    for kind, items in (("response", study.responses), ("factor", study.factors)):
        for item in items:
            g = item.goal
            if kind == "factor" and item.is_categorical:
                continue
            goals.append({"kind": kind, "name": item.name, "unit": item.unit,
                          "goal": g.kind, "lower": g.lower, "target": g.target,
                          "upper": g.upper, "shape": g.shape,
                          "shape_below": g.shape_below, "shape_above": g.shape_above,
                          "weight": g.weight})
    notes = ([("warning", w) for w in result.warnings]
             + [("chances", a) for a in result.assumptions]
             + [("unreachable", u) for u in result.unreachable]
             + [("caution", CAUTION)])
    buffer = io.BytesIO()
    with pd.ExcelWriter(buffer, engine="openpyxl") as writer:
        solutions_table(result).to_excel(writer, sheet_name="solutions", index=False)
        result.table().to_excel(writer, sheet_name="predictions", index=False)
        pd.DataFrame(goals).to_excel(writer, sheet_name="goals", index=False)
        pd.DataFrame(notes, columns=["kind", "text"]).to_excel(
            writer, sheet_name="notes", index=False)
        if provenance is not None:
            flat = [(k, v if not isinstance(v, dict) else str(v))
                    for k, v in provenance.items()]
            pd.DataFrame(flat, columns=["key", "value"]).to_excel(
                writer, sheet_name="provenance", index=False)
    return buffer.getvalue()
