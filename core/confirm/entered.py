"""Confirmation runs typed in (in the workbench's table) rather than read from a file.

The typed table goes through the same reader and checks as a confirmation file
the study names (``[[confirmations]] data = "..."``): it is handed over as that
file's bytes, so a cell the command would refuse is refused with the same
message, naming the row and the column. Nothing is written until the user saves:
then the table is written beside the study file and, when the study does not
name it yet, one ``[[confirmations]]`` table naming it is added at the end of the
study file (the rest of the file, comments included, stays as it was).
"""
from __future__ import annotations

import dataclasses
from pathlib import Path

import pandas as pd

from ..errors import StudyError

__all__ = ["entered_name", "entered_table", "entered_study", "save_entered",
           "study_file_addition", "not_measured", "measured_rows", "as_typed_text",
           "typed_line"]


def entered_name(study) -> str:
    """The file name the typed confirmation runs are kept under, beside the study file."""
    stem = Path(study.source).stem if study.source is not None else "study"
    return f"{stem}_confirmations.csv"


def entered_table(study, table: pd.DataFrame) -> bytes:
    """The typed runs as the CSV the study will name (columns: run, factors, responses).

    Rows with nothing measured yet are left out: a spare line, or a batch of the
    batch sheet not made yet (``not_measured`` names them).
    """
    from ..study.safe_cells import csv_bytes

    frame = _cleaned(study, table)
    return csv_bytes(frame[frame[study.response_names].notna().any(axis=1)])


def _cleaned(study, table: pd.DataFrame) -> pd.DataFrame:
    """The typed table on the file's columns, blank cells (spaces too) as None."""
    columns = ["run"] + study.factor_names + study.response_names
    frame = table.reindex(columns=columns).astype(object)
    blank = frame.isna() | frame.apply(lambda col: col.map(lambda v: str(v).strip() == ""))
    return frame.where(~blank, None)


def measured_rows(study, table: pd.DataFrame) -> int:
    """How many typed rows hold at least one measured value."""
    return int(_cleaned(study, table)[study.response_names].notna().any(axis=1).sum())


def as_typed_text(table: pd.DataFrame, columns: list[str]) -> pd.DataFrame:
    """``table`` with ``columns`` as text cells, blanks as "" (numbers as they read)."""
    out = table.copy()
    for column in columns:
        if column in out.columns:
            out[column] = out[column].map(
                lambda v: "" if v is None or (isinstance(v, float) and v != v)
                or v is pd.NA else f"{v:.15g}" if isinstance(v, float) else str(v))
    return out.astype(object)


def typed_line(study, table: pd.DataFrame, file_row: int) -> tuple[int, str] | None:
    """The typed table's line (1 = first) and run id behind row ``file_row`` of the
    saved table (its header is row 1), which leaves out rows not measured yet."""
    frame = _cleaned(study, table)
    kept = [i for i, m in enumerate(frame[study.response_names].notna().any(axis=1)) if m]
    if not 2 <= file_row < len(kept) + 2:
        return None
    line = kept[file_row - 2]
    run = frame["run"].iloc[line]
    return line + 1, "" if run is None else str(run)


def not_measured(study, table: pd.DataFrame) -> list[str]:
    """The typed rows with settings but no measured value yet, by run id (or row)."""
    frame = _cleaned(study, table)
    waiting = frame[frame.notna().any(axis=1)
                    & frame[study.response_names].isna().all(axis=1)]
    return [str(run) if run is not None else f"row {i + 1}"
            for i, run in zip(waiting.index, waiting["run"])]


def _names_it(study, name: str) -> bool:
    entries = study.spec.get("confirmations", [])
    return any(isinstance(e, dict) and isinstance(e.get("data"), str)
               and Path(e["data"].strip()).name == name for e in entries or [])


def entered_study(study, table: pd.DataFrame) -> tuple[object, dict[str, bytes]]:
    """The study as it will be once the typed runs are saved, and the files to hand over.

    Returns the study (its ``[[confirmations]]`` naming the typed table) and
    ``{file name: bytes}`` for ``check_confirmations(..., files=...)``.
    """
    name = entered_name(study)
    data = entered_table(study, table)
    spec = dict(study.spec)
    entries = list(spec.get("confirmations", []) or [])
    if not _names_it(study, name):
        entries.append({"data": name})
    spec["confirmations"] = entries
    return dataclasses.replace(study, spec=spec), {name: data}


def study_file_addition(study) -> str:
    """The lines saving adds at the end of the study file ("" when it names the table)."""
    name = entered_name(study)
    if _names_it(study, name):
        return ""
    return f'\n# confirmation runs typed in the workbench\n[[confirmations]]\ndata = "{name}"\n'


def save_entered(study, table: pd.DataFrame) -> list[Path]:
    """Write the typed runs beside the study file and name them in it, atomically.

    Checks the runs first (as ``tradeoff confirm`` would read them) and writes
    nothing when a cell is wrong. Returns the files written.
    """
    from ..study.confirmations import confirmation_runs
    from ..study.files import write_atomic

    if study.source is None or not Path(study.source).is_file():
        raise StudyError("this study was not opened from a file on this computer: download "
                         "the confirmation table instead and keep it beside the study file")
    changed, files = entered_study(study, table)
    confirmation_runs(changed, read_files=True, files=files)
    source = Path(study.source)
    [(name, data)] = files.items()
    written = [write_atomic(source.parent / name, data, error=StudyError)]
    addition = study_file_addition(study)
    if addition:
        text = source.read_text(encoding="utf-8")
        if not text.endswith("\n"):
            text += "\n"
        written.append(write_atomic(source, text + addition, error=StudyError))
    return written
