"""Confirmation runs: does the model predict what was made at the chosen settings?

A study may list runs made after the analysis, at chosen settings, with what
was measured. Each one goes into the study file as a ``[[confirmations]]``
table, either one run per table::

    [[confirmations]]
    run = "C1"
    settings = { protein = 27, glycerol = 6, binder = "date paste", mix_temp = 45 }
    measured = { hardness_fresh = 17.4, liking = 7.2 }

or a whole table of runs in a separate file (columns: optionally ``run``, one
per factor, one per measured response; blank cells are "not measured")::

    [[confirmations]]
    data = "confirm_runs.csv"

Each measured value is compared with the prediction interval at its settings.
Several runs at the same settings are averaged and their mean is compared with
the interval for the mean of m new observations,

    yhat(x0) +/- t(1 - alpha/2, df) * sqrt(s^2 / m + se(yhat(x0))^2),

Montgomery, Peck & Vining, Introduction to Linear Regression Analysis, the
prediction of the mean of m future observations (from memory); with m = 1 it
is the usual prediction interval for one new observation (Montgomery, Design
and Analysis of Experiments, "prediction of new response observations").
For a response modelled on a log or square-root scale the comparison is made
on that scale and the interval is shown back in natural units.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from .errors import DataError, ModelError, StudyError, where
from .study import SECTION_KEYS

__all__ = ["confirmation_runs", "check_confirmations", "ConfirmationCheck",
           "CONFIRM_KEYS", "VERDICT_COLUMNS", "CHECK_COLUMNS"]

# Keys of one [[confirmations]] table (registered in study.SECTION_KEYS).
CONFIRM_KEYS = SECTION_KEYS["confirmations"]

# Columns of ConfirmationCheck.table (one row per settings group and response).
CHECK_COLUMNS = ["group", "runs", "m", "response", "measured", "predicted",
                 "pi_low", "pi_high", "inside", "outside_region"]
# Columns of ConfirmationCheck.verdicts (one row per response).
VERDICT_COLUMNS = ["response", "label", "checked", "inside", "verdict", "advice"]


# --------------------------------------------------------------------------
# Reading and checking the confirmation runs


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
    entries = study.spec.get("confirmations", [])
    if not isinstance(entries, list) or not all(isinstance(e, dict) for e in entries):
        raise StudyError(f"{fname}: 'confirmations' must be written as "
                         "[[confirmations]] tables, one per run or one per file of runs")
    columns = ["run", "origin", "row"] + study.factor_names + study.response_names
    records: list[dict] = []
    for number, entry in enumerate(entries, start=1):
        what = f"[[confirmations]] number {number}"
        for key in entry:
            if key not in CONFIRM_KEYS:
                raise StudyError(f"{fname}: {what}: unknown key '{key}'"
                                 f"{_did_you_mean(key, sorted(CONFIRM_KEYS))}")
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
                             f"this study{_did_you_mean(key, study.factor_names)}")
    for key in measured:
        if key not in study.response_names:
            raise StudyError(f"{fname}: {what}: measured: '{key}' is not a response of "
                             f"this study{_did_you_mean(key, study.response_names)}")
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
    from .intake import parse_number, read_table

    name = entry["data"].strip()
    path = Path(name)
    if study.source is not None and not path.is_absolute():
        path = Path(study.source).parent / path
    data = None
    if files and (name in files or path.name in files):
        data = files.get(name, files.get(path.name))
    elif study.source is None:
        raise DataError(f"{fname}: {what}: the confirmation table '{name}' was not "
                        "given: upload it with the study")
    table = read_table(path, sheet=entry.get("sheet"), data=data)
    tname = path.name
    header = [h for h in table.header if h]
    index = {h: i for i, h in enumerate(table.header) if h}
    for f in study.factors:
        if f.name not in index:
            raise DataError(f"{tname}: no column '{f.name}' for factor '{f.name}': a "
                            f"confirmation table needs every factor's setting; the "
                            f"header has {header}{_did_you_mean(f.name, header)}")
    measured = [r for r in study.response_names if r in index]
    if not measured:
        raise DataError(f"{tname}: no column named after a response "
                        f"({', '.join(study.response_names)}): add the measured values")
    records = []
    for row, cells in table.rows:
        cell = (lambda col: cells[index[col]] if index[col] < len(cells) else None)
        rec = {"run": None, "origin": tname, "row": row, "row_label": f"row {row}"}
        if "run" in index and cell("run") is not None:
            value = cell("run")
            rec["run"] = str(int(value)) if isinstance(value, float) and \
                value.is_integer() else str(value).strip()
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


def _did_you_mean(word: str, options) -> str:
    import difflib

    close = difflib.get_close_matches(str(word), list(options), n=1, cutoff=0.6)
    return f" (did you mean '{close[0]}'?)" if close else ""
