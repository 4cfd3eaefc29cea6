"""Several measurements of one batch: pieces of a run, folded into the run's mean.

A texture lab measures several bars of every batch; a water-activity check
several cups. Rows of the runs table that share a run id, and the columns a
response lists under ``columns = [...]``, are such pieces. The batch (the run)
is the experimental unit: every model sees one value per run, the mean of its
pieces, so pure error and lack of fit come from replicate runs only. The
pieces themselves are kept (``Study.pieces``) so the measurement noise can be
set against the batch-to-batch noise (model/pieces.py).
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from ..errors import DataError, StudyError

__all__ = ["PIECE_COLUMNS", "piece_columns", "run_groups", "check_same_settings",
           "run_means", "pieces_table"]

PIECE_COLUMNS = ("run", "response", "row", "column", "value")


def piece_columns(table: dict, fname: str, what: str) -> tuple[str, ...] | None:
    """The ``columns = [...]`` of a response's study-file table, checked (or None)."""
    value = table.get("columns")
    if value is None:
        return None
    if (not isinstance(value, (list, tuple)) or not value
            or not all(isinstance(v, str) and v.strip() for v in value)):
        raise StudyError(f"{fname}: {what}: columns must list the data columns that hold "
                         "its pieces, in quotes, for example columns = [\"hard_1\", "
                         "\"hard_2\", \"hard_3\"]")
    names = [v.strip() for v in value]
    twice = sorted({n for n in names if names.count(n) > 1})
    if twice:
        raise StudyError(f"{fname}: {what}: columns names '{twice[0]}' twice: list each "
                         "column once")
    if table.get("derive"):
        raise StudyError(f"{fname}: {what}: columns is for measured responses; a derived "
                         "response takes its pieces from its storage or panel table")
    return tuple(names)


def run_groups(ids: list[str]) -> tuple[np.ndarray, np.ndarray]:
    """Group code of each row and the first row (position) of each group, in file order."""
    codes, labels = pd.factorize(pd.Series(ids, dtype=object), sort=False)
    # factorize numbers groups in order of appearance, so the sorted unique
    # codes are 0..m-1 and return_index gives each group's earliest row
    first = np.unique(codes, return_index=True)[1]
    return codes, first


def check_same_settings(fname: str, column: str, values, ids, row_numbers,
                        codes: np.ndarray, first: np.ndarray, *, what: str = "setting") -> None:
    """Refuse pieces of one run whose ``column`` differs: one line naming rows and column."""
    values = np.asarray(values, dtype=object)
    lead = values[first[codes]]
    differ = np.array([a != b for a, b in zip(values.tolist(), lead.tolist())], dtype=bool)
    if not differ.any():
        return
    i = int(np.flatnonzero(differ)[0])
    j = int(first[codes[i]])
    shown = [_show(values[j]), _show(values[i])]
    raise DataError(f"{fname}, rows {row_numbers[j]} and {row_numbers[i]}, column "
                    f"'{column}': run '{ids[i]}' has two {what}s ({shown[0]} and "
                    f"{shown[1]}): rows with the same run id are pieces of one batch "
                    "and need the same settings: correct the cell, or give each run "
                    "its own id")


def _show(v) -> str:
    return f"{v:g}" if isinstance(v, (float, np.floating)) else f"'{v}'"


def run_means(values: np.ndarray, codes: np.ndarray, n_runs: int) -> tuple[np.ndarray,
                                                                           np.ndarray]:
    """Each run's mean over its pieces and its number of pieces (blanks left out).

    ``values`` is (rows, columns): one row per table row, one column per piece
    column. A run with no value gets NaN and 0 pieces.
    """
    values = np.asarray(values, dtype=float).reshape(len(codes), -1)
    present = ~np.isnan(values)
    count = np.bincount(codes, weights=present.sum(axis=1), minlength=n_runs)
    total = np.bincount(codes, weights=np.where(present, values, 0.0).sum(axis=1),
                        minlength=n_runs)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = np.where(count > 0, total / np.where(count > 0, count, 1.0), np.nan)
    return mean, count.astype(int)


def pieces_table(response: str, values: np.ndarray, columns: list[str], ids, row_numbers
                 ) -> pd.DataFrame:
    """The non-blank pieces of one response as a tidy table (columns ``PIECE_COLUMNS``)."""
    values = np.asarray(values, dtype=float).reshape(len(ids), -1)
    r, c = np.nonzero(~np.isnan(values))
    return pd.DataFrame({"run": np.asarray(ids, dtype=object)[r],
                         "response": response,
                         "row": np.asarray(row_numbers, dtype=int)[r],
                         "column": np.asarray(columns, dtype=object)[c],
                         "value": values[r, c]}, columns=list(PIECE_COLUMNS))
