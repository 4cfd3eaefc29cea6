"""The runs table: read the table a study names and attach it as ``study.runs``.

Each column is checked against its factor or response: numbers where numbers
belong, level names where levels belong, one id per run.
"""
from __future__ import annotations

from dataclasses import replace
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from ..errors import DataError, did_you_mean, where
from .coding import nearest_level
from .intake import RawTable, cell_text, parse_number, read_table
from .pieces import check_same_settings, pieces_table, run_groups, run_means
from .mixture import check_blend_rows
from .whole_plots import check_hard_to_change, whole_plot_labels
from .spec import Study
from .reader import _fmt, _rows

__all__ = ["read_study_table", "attach_runs"]


def read_study_table(study: Study, path: str | Path, *, sheet=None) -> RawTable:
    """A table the study names: from the study's uploads if given there, else from disk."""
    path = Path(path)
    if study.uploads and path.name not in study.uploads:
        # An uploaded study's tables come with it; never read a stray file
        # that happens to sit in the server's working folder.
        raise DataError(f"{path.name}: the study names this table but it was not "
                        f"uploaded (uploaded: {', '.join(sorted(study.uploads))}): "
                        "upload it together with the study file")
    return read_table(path, sheet=sheet, data=study.uploads.get(path.name))


def attach_runs(study: Study, table: RawTable) -> Study:
    """Check a raw data table against the study and attach it as ``runs``."""
    fname = table.source.name
    header = table.header
    if not table.rows:
        raise DataError(f"{fname}: the table has a header but no runs: add one row "
                        "per run below the header")
    _refuse_title_rows(study, table)
    width = len(header)
    for row_number, cells in table.rows:
        extra = [c for c in cells[width:] if c is not None]
        if extra:
            raise DataError(f"{where(fname, row_number)}the row has more cells than "
                            f"the header has names ({width}): check for a stray "
                            "separator or a missing column name")
    columns = {name: i for i, name in enumerate(header) if name}

    def column_index(name: str, what: str) -> int:
        if name not in columns:
            raise DataError(f"{fname}: no column '{name}' for {what}: the header has "
                            f"{[h for h in header if h]}"
                            f"{did_you_mean(name, list(columns))}")
        return columns[name]

    def cells_of(index: int) -> list:
        return [cells[index] if index < len(cells) else None for _, cells in table.rows]

    row_numbers = [r for r, _ in table.rows]
    data: dict[str, Any] = {}
    if "run" in columns:
        ids = ["" if c is None else cell_text(c) for c in cells_of(columns["run"])]
        for row, run in zip(row_numbers, ids):
            if run == "":
                raise DataError(f"{where(fname, row, 'run')}blank run id: give every "
                                "run an id, or delete the 'run' column to number runs "
                                "automatically")
    else:
        ids = [str(i) for i in range(1, len(row_numbers) + 1)]
    # Rows sharing a run id are pieces of one batch (study/pieces.py): they must
    # agree on every setting, and the run's responses are their means.
    codes, first = run_groups(ids)
    data["run"] = ids

    notes: list[str] = []
    piece_frames: list[pd.DataFrame] = []
    response_names = {r.name for r in study.responses if not r.is_derived}
    for f in study.factors:
        raw = cells_of(column_index(f.name, f"factor '{f.name}'"))
        if f.is_categorical:
            values = []
            for row, cell in zip(row_numbers, raw):
                text = None if cell is None else cell_text(cell)
                if text not in f.levels:
                    found = "a blank cell" if text is None else f"'{text}'"
                    near = nearest_level(text or "", f.levels)
                    raise DataError(f"{where(fname, row, f.name)}found {found}, "
                                    f"expected one of the levels {list(f.levels)} "
                                    f"(nearest: '{near}'): fix the cell or add the "
                                    "level to the study file")
                values.append(text)
            check_same_settings(fname, f.name, values, ids, row_numbers, codes, first)
            data[f.name] = values
            if len(set(values)) < 2:
                notes.append(f"factor '{f.name}' is '{values[0]}' in every run: its "
                             "effect cannot be estimated")
        else:
            values = []
            for row, cell in zip(row_numbers, raw):
                if cell is None:
                    raise DataError(f"{where(fname, row, f.name)}blank factor setting: "
                                    "every run needs a setting for every factor")
                values.append(parse_number(cell, decimal_comma=table.decimal_comma,
                                           location=where(fname, row, f.name)))
            values = np.array(values)
            check_same_settings(fname, f.name, values, ids, row_numbers, codes, first)
            data[f.name] = values
            tol = 1e-9 * max(1.0, abs(f.high - f.low))
            outside = [row for row, v in zip(row_numbers, values)
                       if v < f.low - tol or v > f.high + tol]
            if outside:
                notes.append(f"factor '{f.name}': {len(outside)} run(s) lie outside "
                             f"{_fmt(f.low)}..{_fmt(f.high)} (rows "
                             f"{_rows(outside)}), e.g. axial points: allowed")
            if np.ptp(values) == 0:
                notes.append(f"factor '{f.name}' is {_fmt(values[0])} in every run: "
                             "its effect cannot be estimated")
    for r in study.responses:
        if r.is_derived:
            continue  # computed from a storage or panel table, not read here
        sources = r.extra.get("columns") or [r.name]
        if r.extra.get("columns") and r.name in columns:
            raise DataError(f"{fname}: response '{r.name}' is a column of its own and "
                            f"also listed in columns = {list(sources)}: keep one (delete "
                            "or rename the column, or remove columns from the study file)")
        pieces = np.column_stack([
            [parse_number(c, decimal_comma=table.decimal_comma,
                          location=where(fname, row, name))
             for row, c in zip(row_numbers, cells_of(column_index(
                 name, f"response '{r.name}'" + (" (listed in its columns)"
                                                 if name != r.name else ""))))]
            for name in sources]).astype(float)
        if np.isnan(pieces).all():
            raise DataError(f"{fname}, column '{sources[0]}': every cell is blank: enter "
                            "the measurements, or remove the response from the study")
        data[r.name], count = run_means(pieces, codes, len(first))
        if (count > 1).any():
            piece_frames.append(pieces_table(r.name, pieces, list(sources), ids,
                                             row_numbers))
            several = int((count > 1).sum())
            notes.append(f"response '{r.name}': {several} run(s) measured in several "
                         f"pieces ({int(count.sum())} pieces in all): each run's value "
                         "is the mean of its pieces; the model counts runs, not pieces")
        values = data[r.name]
        blank = [ids[first[i]] for i in np.flatnonzero(np.isnan(values))]
        if blank:
            notes.append(f"response '{r.name}': run(s) {', '.join(blank)} blank, "
                         "left out of its model only")
        if r.transform in ("log", "sqrt"):
            bad = pieces[~np.isnan(pieces)]
            if (r.transform == "log" and (bad <= 0).any()) or (bad < 0).any():
                raise DataError(f"{fname}, column '{r.name}': transform = "
                                f"'{r.transform}' needs positive values: remove the "
                                "transform or check the data")
    modelled = ({f.name for f in study.factors} | {r.name for r in study.responses}
                | {"run"} | {c for r in study.responses for c in r.extra.get("columns") or ()})
    for name, index in columns.items():
        if name not in modelled:
            data[name] = cells_of(index)
    block = study.blocks or ("block" if "block" in columns and "block" not in modelled
                             else None)
    if block is not None:
        # Blocks enter every model (core/models.py): each run needs one.
        index = column_index(block, "the blocks ([study] blocks)")
        labels = []
        for row, cell in zip(row_numbers, cells_of(index)):
            text = None if cell is None else cell_text(cell)
            if not text:
                raise DataError(f"{where(fname, row, block)}blank block: every run "
                                "needs its block (day, batch) when the table has a block "
                                "column: fill it in, or delete the column if the runs "
                                "were not made in blocks")
            labels.append(text)
        check_same_settings(fname, block, labels, ids, row_numbers, codes, first,
                            what="block")
        data[block] = labels
    plots = None
    if study.whole_plot is not None:  # runs sharing a batch (study/whole_plots.py)
        plots = whole_plot_labels(study, fname, study.whole_plot, cells_of(column_index(
            study.whole_plot, "the whole plots ([study] whole_plot)")), row_numbers, ids,
            codes, first, cell_text)
        data[study.whole_plot] = plots
    check_hard_to_change(study, fname, data, plots, row_numbers, first)
    # One row per run (its first row in the file); responses are already run means.
    data = {k: v if k in response_names else _first_of_run(v, first)
            for k, v in data.items()}
    runs = pd.DataFrame(data, index=pd.Index(np.asarray(row_numbers)[first], name="row"))
    piece_table = (pd.concat(piece_frames, ignore_index=True) if piece_frames else None)
    study = replace(study, runs=runs, notes=tuple(notes), pieces=piece_table)
    if study.mixture is not None:  # every run adds up to the total (study/mixture.py)
        check_blend_rows(study, fname)
        study = replace(study, notes=study.mixture.notes + study.notes)
    return study


def _first_of_run(values, first: np.ndarray):
    if isinstance(values, np.ndarray):
        return values[first]
    return [values[i] for i in first]


def _refuse_title_rows(study: Study, table: RawTable) -> None:
    # A title or a merged "Factors | Responses" row above the column names is
    # read as the header; say so instead of "no column 'protein'".
    wanted = [f.name for f in study.factors] + [r.name for r in study.responses
                                                if not r.is_derived]
    if all(name in table.header for name in wanted):
        return
    for row_number, cells in table.rows[:10]:
        words = {str(c).strip() for c in cells if c is not None}
        if all(name in words for name in wanted):
            raise DataError(f"{where(table.source.name, row_number)}the column names "
                            "seem to be in this row, not in the first row of the "
                            "table: delete the title rows above them (one header row "
                            "only, no merged cells)")
