"""Confirmation runs as the study file lists them: read and checked when the
study loads (their comparison with the models is confirm/check.py).

One ``[[confirmations]]`` table per run (``run``, ``settings``, ``measured``,
``note``), or ``data = "file"`` naming a table of runs (columns: optionally
``run``, one per factor, one per measured response; blank = not measured).
"""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pandas as pd

from ..errors import DataError, StudyError, did_you_mean, where
from .reader import check_keys
from .spec import SECTION_KEYS

__all__ = ["confirmation_runs", "confirmation_files", "CONFIRM_KEYS"]

# Keys of one [[confirmations]] table (registered in SECTION_KEYS).
CONFIRM_KEYS = SECTION_KEYS["confirmations"]


def confirmation_runs(study, *, read_files: bool = True,
                      files: dict[str, bytes] | None = None) -> pd.DataFrame:
    """The study's confirmation runs as a table, checked.

    Parameters
    ----------
    study : Study
        A study whose specification may hold ``[[confirmations]]`` tables.
    read_files : bool
        Read the tables named by ``data = "..."`` (False checks only the
        runs written in the study file itself).
    files : dict, optional
        File name -> bytes, for confirmation tables uploaded rather than read
        from the study's folder.

    Returns
    -------
    pandas.DataFrame
        One row per confirmation run, columns ``run`` (text), ``origin`` (the
        file the run came from), ``row`` (its row or table number there), one
        column per factor (natural units, level names for categorical factors)
        and one per response (float, NaN when not measured). Empty (with
        those columns) when the study lists no confirmation runs.
    """
    fname = Path(study.source).name if study.source is not None else "study"
    files = {**study.uploads, **(files or {})}
    entries = study.spec.get("confirmations", [])
    if not isinstance(entries, list) or not all(isinstance(e, dict) for e in entries):
        raise StudyError(f"{fname}: 'confirmations' must be written as "
                         "[[confirmations]] tables, one per run or one per file of runs")
    columns = ["run", "origin", "row"] + study.factor_names + study.response_names
    records: list[dict] = []
    for number, entry in enumerate(entries, start=1):
        what = f"[[confirmations]] number {number}"
        check_keys(entry, CONFIRM_KEYS, fname, what)
        if "data" in entry:
            clash = sorted(set(entry) & {"run", "settings", "measured"})
            if clash:
                raise StudyError(f"{fname}: {what}: give either data = \"file\" or "
                                 f"settings and measured, not both (found {clash[0]})")
            if not isinstance(entry["data"], str) or not entry["data"].strip():
                raise StudyError(f"{fname}: {what}: data must be a file name in quotes")
            if read_files:
                records += _runs_from_file(study, entry, files, fname, what)
        else:
            records.append(_run_from_table(study, entry, fname, what, number))
    for i, rec in enumerate(records, start=1):
        if rec["run"] is None:
            rec["run"] = f"C{i}"
    seen: dict[str, str] = {}
    for rec in records:
        place = f"{rec['origin']} {rec['row_label']}"
        if rec["run"] in seen:
            raise StudyError(f"{place}: confirmation run id '{rec['run']}' is used "
                             f"again (first at {seen[rec['run']]}): give each run its "
                             "own id")
        seen[rec["run"]] = place
    table = pd.DataFrame([{k: rec.get(k, np.nan) for k in columns} for rec in records],
                         columns=columns)
    for r in study.response_names:
        table[r] = table[r].astype(float)
    return table


def _run_from_table(study, entry: dict, fname: str, what: str, number: int) -> dict:
    run = entry.get("run")
    if run is not None:
        if isinstance(run, bool) or not isinstance(run, (str, int)) or not str(run).strip():
            raise StudyError(f"{fname}: {what}: run must be an id such as \"C1\"")
        run = str(run).strip()
        what = f"[[confirmations]] run '{run}'"
    settings = entry.get("settings")
    if not isinstance(settings, dict):
        raise StudyError(f"{fname}: {what}: needs settings = {{ factor = value, ... }} "
                         "naming every factor's setting for this run")
    measured = entry.get("measured")
    if not isinstance(measured, dict) or not measured:
        raise StudyError(f"{fname}: {what}: needs measured = {{ response = value, ... }} "
                         "with at least one measured response")
    for key in settings:
        if key not in study.factor_names:
            raise StudyError(f"{fname}: {what}: settings: '{key}' is not a factor of "
                             f"this study{did_you_mean(key, study.factor_names)}")
    for key in measured:
        if key not in study.response_names:
            raise StudyError(f"{fname}: {what}: measured: '{key}' is not a response of "
                             f"this study{did_you_mean(key, study.response_names)}")
    rec = {"run": run, "origin": fname, "row": number, "row_label": what}
    for f in study.factors:
        if f.name not in settings:
            raise StudyError(f"{fname}: {what}: settings: no setting for factor "
                             f"'{f.name}': the prediction needs every factor")
        rec[f.name] = _setting(f, settings[f.name], f"{fname}: {what}: settings: ")
    for name, value in measured.items():
        if isinstance(value, bool) or not isinstance(value, (int, float)) \
                or not math.isfinite(value):
            raise StudyError(f"{fname}: {what}: measured: {name} must be a number, "
                             f"found {value!r}")
        rec[name] = float(value)
    return rec


def _setting(factor, value, prefix: str):
    if factor.is_categorical:
        if not isinstance(value, str) or value.strip() not in factor.levels:
            raise StudyError(f"{prefix}{factor.name} = {value!r} is not one of its "
                             f"levels {list(factor.levels)}: check the spelling")
        return value.strip()
    if isinstance(value, bool) or not isinstance(value, (int, float)) \
            or not math.isfinite(value):
        raise StudyError(f"{prefix}{factor.name} must be a number in "
                         f"{factor.unit or 'its units'}, found {value!r}")
    return float(value)


def _runs_from_file(study, entry: dict, files, fname: str, what: str) -> list[dict]:
    from .intake import cell_text, parse_number, read_table

    name = entry["data"].strip()
    path = Path(name)
    if study.source is not None and not path.is_absolute():
        path = Path(study.source).parent / path
    data = None
    if files and (name in files or path.name in files):
        data = files.get(name, files.get(path.name))
    elif study.source is None or study.uploads:
        # An uploaded study's tables come with it: never read a file of the
        # computer the workbench runs on because a shared study names it.
        raise DataError(f"{fname}: {what}: the confirmation table '{path.name}' was not "
                        "uploaded: upload it together with the study file")
    table = read_table(path, sheet=entry.get("sheet"), data=data)
    tname = path.name
    header = [h for h in table.header if h]
    index = {h: i for i, h in enumerate(table.header) if h}
    for f in study.factors:
        if f.name not in index:
            raise DataError(f"{tname}: no column '{f.name}' for factor '{f.name}': a "
                            f"confirmation table needs every factor's setting; the "
                            f"header has {header}{did_you_mean(f.name, header)}")
    measured = [r for r in study.response_names if r in index]
    if not measured:
        raise DataError(f"{tname}: no column named after a response "
                        f"({', '.join(study.response_names)}): add the measured values")
    records = []
    for row, cells in table.rows:
        cell = (lambda col: cells[index[col]] if index[col] < len(cells) else None)
        rec = {"run": None, "origin": tname, "row": row, "row_label": f"row {row}"}
        if "run" in index and cell("run") is not None:
            rec["run"] = cell_text(cell("run"))
        for f in study.factors:
            value = cell(f.name)
            loc = where(tname, row, f.name)
            if value is None:
                raise DataError(f"{loc}blank factor setting: every confirmation run "
                                "needs a setting for every factor")
            if f.is_categorical:
                text = str(value).strip()
                if text not in f.levels:
                    raise DataError(f"{loc}found '{text}', expected one of the levels "
                                    f"{list(f.levels)}: fix the cell")
                rec[f.name] = text
            else:
                number = parse_number(value, decimal_comma=table.decimal_comma,
                                      location=loc)
                if not math.isfinite(number):
                    raise DataError(f"{loc}blank factor setting: every confirmation "
                                    "run needs a setting for every factor")
                rec[f.name] = number
        for r in measured:
            rec[r] = parse_number(cell(r), decimal_comma=table.decimal_comma,
                                  location=where(tname, row, r))
        if all(math.isnan(rec[r]) for r in measured):
            raise DataError(f"{where(tname, row)}no measured value in this row: fill "
                            "in at least one response or delete the row")
        records.append(rec)
    if not records:
        raise DataError(f"{tname}: the confirmation table has a header but no runs")
    return records


def confirmation_files(study) -> dict[str, Path]:
    """The confirmation tables a study names (label -> path), for provenance."""
    out = {}
    entries = study.spec.get("confirmations", [])
    for entry in entries if isinstance(entries, list) else []:
        if isinstance(entry, dict) and isinstance(entry.get("data"), str):
            path = Path(entry["data"].strip())
            if study.source is not None and not path.is_absolute():
                path = Path(study.source).parent / path
            out[f"confirmations {path.name}"] = path
    return out
