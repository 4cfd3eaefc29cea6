"""Data columns the study does not use, and what each might be.

A column that is neither a factor, a response (or one of its pieces), the run
id nor the blocks column is carried along but never modelled. Often it should
be: a ``batch`` or ``day`` column marks runs made in groups that may differ
as a whole (blocks), a ``replicate`` number often marks the same. ``tradeoff
check`` names each such column with a guess from its name and cells, and the
study-file key that would use it where one exists. The guesses are common
practice in lab records, not rules: the user decides.
"""
from __future__ import annotations

import re

import pandas as pd

__all__ = ["unused_columns"]

# Words in a column's name, and what the column then probably is.
_RUN_SHEET = {"std_order": "the run sheet's standard order",
              "run_order": "the run sheet's run order", "order": "a run order",
              "point": "the kind of each point (factorial, centre, axial, ...)"}
_GROUP = {"batch", "lot", "day", "date", "week", "session", "shift", "operator",
          "analyst", "oven", "line", "plant", "site", "lab", "block", "kiln", "mixer",
          "campaign", "trial"}
_REPLICATE = {"rep", "reps", "replicate", "replicates", "replication", "repeat",
              "repetition"}
_NOTES = {"note", "notes", "comment", "comments", "remark", "remarks", "observation",
          "observations", "description", "text", "memo"}

_GROUPS = "runs made in groups that may differ as a whole, which the models can take " \
          "out as blocks"


def _words(name: str) -> set[str]:
    return {w for w in re.split(r"[^a-z0-9]+", name.lower()) if w}


def _blocks_key(column: str) -> str:
    return f'blocks = "{column}" under [study]'


def _guess(column: str, cells: pd.Series, n_runs: int) -> tuple[str, str | None]:
    """(what the column might be, the key that would use it or None)."""
    name = column.strip().lower().replace(" ", "_")
    words = _words(column)
    if name in _RUN_SHEET:
        return f"{_RUN_SHEET[name]}: kept, not modelled", None
    if words & _NOTES:
        return "notes or text: kept, not modelled", None
    if words & _REPLICATE:
        return ("a replicate number: runs at the same settings count as replicates "
                "without it; if each replicate was made on its own day or batch, it marks "
                "blocks"), _blocks_key(column)
    if "plot" in name:
        return ("a whole plot (runs sharing a batch and its hard-to-change settings): "
                "the models can give each whole plot its own random shift and test a "
                "hard-to-change factor against the variation between them"), \
            f'whole_plot = "{column}" under [study]'
    if words & _GROUP:
        return f"a batch or day: {_GROUPS}", _blocks_key(column)
    present = cells.dropna()
    present = present[present.astype(str).str.strip() != ""]
    if present.empty:
        return "empty: kept, not modelled", None
    numbers = pd.to_numeric(present, errors="coerce")
    distinct = present.astype(str).nunique()
    if 2 <= distinct <= max(2, n_runs // 2) and (present.astype(str).value_counts() > 1).all():
        return (f"a grouping of the runs ({distinct} values, each on several runs): if it "
                f"is a batch or day, {_GROUPS}"), _blocks_key(column)
    if numbers.notna().all() and distinct > 1:
        return ("a measurement or setting not in the study file: kept, not modelled; "
                f"to model it, add a [[responses]] (or [[factors]]) table with name = "
                f'"{column}"'), f'[[responses]] name = "{column}"'
    if distinct == 1:
        return "the same in every run: kept, not modelled", None
    return "notes or text: kept, not modelled", None


def unused_columns(study) -> list[dict]:
    """The runs' columns the study does not use, in the data file's order.

    Returns
    -------
    list of dict
        ``column``, ``might_be`` (a guess, in a lab user's words) and ``key``
        (the study-file key that would use it, or None).
    """
    runs = study.runs
    if runs is None:
        return []
    used = set(study.factor_names) | {r.name for r in study.responses} | {"run"}
    used |= {c for r in study.responses for c in r.extra.get("columns") or ()}
    if study.block_column is not None:
        used.add(study.block_column)
    if study.whole_plot is not None:
        used.add(study.whole_plot)
    out = []
    for column in runs.columns:
        if column in used:
            continue
        might_be, key = _guess(str(column), runs[column], len(runs))
        out.append({"column": str(column), "might_be": might_be, "key": key})
    return out
