"""The runs table corrected or extended by hand (the workbench's table editor):
checked by the whole load before anything is written, the changes listed, then
saved over the data file in one atomic write.

The table is edited as the lab laid it out: every column of the data file, cells
as text, rows in file order. The check is the load itself (``study_from_dict``
with the edited table's bytes), so a cell the command line would refuse is
refused with the same one-line message naming the row and the column.
"""
from __future__ import annotations

from pathlib import Path

import pandas as pd

from ..errors import DataError
from ..study.safe_cells import csv_bytes

__all__ = ["runs_as_laid_out", "edited_bytes", "check_edited", "run_changes",
           "save_edited", "CHANGE_COLUMNS"]

CHANGE_COLUMNS = ["row", "run", "column", "before", "after", "change"]


def _text(cell) -> str:
    if cell is None:
        return ""
    if isinstance(cell, float):
        if cell != cell:  # NaN
            return ""
        return f"{cell:.15g}"
    return str(cell)


def runs_as_laid_out(study) -> pd.DataFrame:
    """The data file as text cells: its header as columns, one row per data row.

    The index is the row number in the file (the header is row 1).
    """
    from ..study.intake import read_table

    if study.data_path is None:
        raise DataError("the study names no data file ([study] data = ...): there are no "
                        "runs to correct yet")
    name = study.data_path.name
    data = (study.uploads or {}).get(name)
    raw = read_table(study.data_path, sheet=study.sheet, data=data)
    rows = {row: [_text(c) for c in cells] + [""] * (len(raw.header) - len(cells))
            for row, cells in raw.rows}
    frame = pd.DataFrame.from_dict(rows, orient="index", columns=raw.header, dtype=object)
    frame.index.name = "row"
    return frame


def edited_bytes(table: pd.DataFrame) -> bytes:
    """The edited table as CSV, wholly blank rows left out."""
    frame = table.astype(object).where(table.notna(), "")
    frame = frame.map(lambda v: "" if v is None else str(v).strip())
    frame = frame[(frame != "").any(axis=1)]
    return csv_bytes(frame.reset_index(drop=True))


def check_edited(study, table: pd.DataFrame):
    """Load the study with the edited runs, as the command would load the saved file.

    Returns the study with those runs; raises the load's error (file, row,
    column named) when a cell is wrong.
    """
    from .load import study_from_dict

    name = study.data_path.name if study.data_path is not None else "runs.csv"
    data = edited_bytes(table)
    uploads = {**(study.uploads or {}), name: data} if study.uploads else None
    return study_from_dict(study.spec, source=study.source, data_bytes=data,
                           uploads=uploads)


def run_changes(before: pd.DataFrame, after: pd.DataFrame) -> pd.DataFrame:
    """What saving changes, cell by cell (``CHANGE_COLUMNS``).

    Rows are matched by position: ``row`` is the file row (header = 1) after
    saving; ``change`` is "changed", "added" or "removed".
    """
    b = before.astype(object).where(before.notna(), "").map(_text).reset_index(drop=True)
    a = after.astype(object).where(after.notna(), "").map(_text).reset_index(drop=True)
    a = a[(a.map(str.strip) != "").any(axis=1)].reset_index(drop=True)
    run = "run" if "run" in a.columns else None
    out = []
    for i in range(max(len(a), len(b))):
        if i >= len(a):
            out.append({"row": i + 2, "run": b.loc[i, run] if run else "", "column": "",
                        "before": ", ".join(b.loc[i].tolist()), "after": "",
                        "change": "removed"})
            continue
        if i >= len(b):
            out.append({"row": i + 2, "run": a.loc[i, run] if run else "", "column": "",
                        "before": "", "after": ", ".join(a.loc[i].tolist()),
                        "change": "added"})
            continue
        for column in a.columns:
            old = b.loc[i, column] if column in b.columns else ""
            new = a.loc[i, column]
            if old.strip() != new.strip():
                out.append({"row": i + 2, "run": a.loc[i, run] if run else "",
                            "column": column, "before": old, "after": new,
                            "change": "changed"})
    return pd.DataFrame(out, columns=CHANGE_COLUMNS)


def save_edited(study, table: pd.DataFrame) -> Path:
    """Check the edited runs, then write them over the study's CSV data file atomically.

    A workbook or a file written with decimal commas is not rewritten (its other
    sheets or its number style would be lost): the message says to download
    the corrected table instead.
    """
    from ..study.files import write_atomic
    from ..study.intake import read_table

    path = study.data_path
    if path is None or study.source is None or study.uploads or not Path(path).is_file():
        raise DataError("these runs were not opened from a file on this computer: "
                        "download the corrected table instead")
    if Path(path).suffix.lower() != ".csv":
        raise DataError(f"{Path(path).name} is a workbook: saving would drop its other "
                        "sheets and formats: download the corrected table instead")
    if read_table(path, sheet=study.sheet).decimal_comma:
        raise DataError(f"{Path(path).name} writes numbers with decimal commas: download "
                        "the corrected table instead, so its style is kept")
    check_edited(study, table)
    return write_atomic(path, edited_bytes(table), error=DataError)
