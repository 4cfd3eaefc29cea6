"""Runs that share a batch: hard-to-change factors and the whole-plot column.

In a bakery a dough of one recipe is divided and baked at several oven
temperatures; an oven set once holds trays of several recipes; one fat lot
serves a day's runs. Such runs share a batch, a *whole plot*, and their errors
are correlated. A factor set once per batch is ``hard_to_change = true``; the
data column ``[study] whole_plot = "COLUMN"`` says which runs share one.

Not to be confused with pieces (study/pieces.py): pieces are one run (the same
settings) measured several times; a whole plot holds different runs (different
settings of the easy factors) made from one dough, oven load or day.
"""
from __future__ import annotations

import unicodedata
from dataclasses import replace

import numpy as np

from ..errors import DataError, StudyError
from .pieces import check_same_settings

__all__ = ["read_whole_plot_keys", "whole_plot_labels", "check_hard_to_change",
           "whole_plot_counts", "NO_SPLIT_PLOT"]

NO_SPLIT_PLOT = ("every run is a whole plot of its own, so no runs share a batch: this "
                 "is no split plot")


def read_whole_plot_keys(factor_tables: list, head: dict, factors: tuple, responses: tuple,
                         blocks: str | None, fname: str) -> tuple[tuple, str | None]:
    """Factors with their ``hard_to_change`` flag, and the ``[study] whole_plot`` column."""
    flags = {}
    for table in factor_tables:
        if isinstance(table, dict) and "hard_to_change" in table:
            value = table["hard_to_change"]
            if not isinstance(value, bool):
                raise StudyError(f"{fname}: factor '{table.get('name')}': hard_to_change "
                                 f"must be true or false, found {value!r}")
            flags[table.get("name")] = value
    if flags:
        factors = tuple(replace(f, hard_to_change=flags.get(f.name, False))
                        for f in factors)
    name = head.get("whole_plot")
    if name is None:
        return factors, None
    if not isinstance(name, str) or not name.strip():
        raise StudyError(f"{fname}: [study] whole_plot must be the name of the data column "
                         "that says which runs share a batch, in quotes, for example "
                         "whole_plot = \"dough\"")
    name = unicodedata.normalize("NFC", name.strip())
    if name in [f.name for f in factors] + [r.name for r in responses]:
        raise StudyError(f"{fname}: [study] whole_plot = '{name}' is a factor or response "
                         "of the study: name the column of batches (doughs, oven loads, "
                         "days) instead")
    if name == blocks:
        raise StudyError(f"{fname}: [study] whole_plot = '{name}' is also the blocks "
                         "column: a block shifts every run in it by a fixed amount; a "
                         "whole plot is a batch of runs sharing one random error: name "
                         "the column once")
    return factors, name


def whole_plot_labels(study, fname: str, column: str, cells: list, row_numbers: list,
                      ids: list, codes: np.ndarray, first: np.ndarray, cell_text) -> list:
    """Each row's whole plot (text), checked: none blank, one per run."""
    labels = []
    for row, cell in zip(row_numbers, cells):
        text = None if cell is None else cell_text(cell)
        if not text:
            raise DataError(f"{fname}, row {row}, column '{column}': blank whole plot: "
                            "every run needs the batch it shares (dough, oven load, "
                            "day): fill it in")
        labels.append(text)
    check_same_settings(fname, column, labels, ids, row_numbers, codes, first,
                        what="whole plot")
    run_labels = [labels[i] for i in first]
    if len(set(run_labels)) == len(run_labels):
        raise DataError(f"{fname}, column '{column}': {NO_SPLIT_PLOT}: give runs made "
                        "from one batch the same whole plot, or remove [study] whole_plot")
    return labels


def check_hard_to_change(study, fname: str, data: dict, labels: list, row_numbers: list,
                         first: np.ndarray) -> None:
    """Every hard-to-change factor is one setting within each whole plot."""
    if study.whole_plot is None:
        hard = [f.name for f in study.factors if f.hard_to_change]
        if hard:
            raise StudyError(f"{fname}: factor '{hard[0]}' is hard to change but the study "
                             "names no column of batches: add [study] whole_plot = "
                             "\"COLUMN\" naming the column that says which runs share a "
                             "batch")
        return
    plots = [labels[i] for i in first]
    rows = [row_numbers[i] for i in first]
    for f in study.factors:
        if not f.hard_to_change:
            continue
        values = [data[f.name][i] for i in first]
        seen: dict[str, int] = {}
        for j, (plot, v) in enumerate(zip(plots, values)):
            if plot not in seen:
                seen[plot] = j
                continue
            k = seen[plot]
            if values[k] != v:
                shown = [f"{x:g}" if isinstance(x, (float, np.floating)) else f"'{x}'"
                         for x in (values[k], v)]
                raise DataError(f"{fname}, rows {rows[k]} and {rows[j]}, column "
                                f"'{f.name}': whole plot '{plot}' has two settings of "
                                f"hard-to-change factor '{f.name}' ({shown[0]} and "
                                f"{shown[1]}): it is set once per whole plot: correct the "
                                "cell, or give the run the whole plot it was made in")


def whole_plot_counts(study) -> dict | None:
    """The check's summary: the column, the number of whole plots, the runs in each,
    and the whole plots of a single run (which say nothing of the batch variation)."""
    labels = study.whole_plot_labels()
    if labels is None:
        return None
    order = list(dict.fromkeys(labels.tolist()))
    runs = {p: int(np.sum(labels == p)) for p in order}
    single = [p for p, k in runs.items() if k == 1]
    return {"column": study.whole_plot, "count": len(order), "runs": runs,
            "single": single,
            "hard_to_change": [f.name for f in study.factors if f.hard_to_change]}
