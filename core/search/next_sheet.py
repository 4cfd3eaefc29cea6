"""The run sheet of suggested runs: the data file's columns, responses blank.

Split from ``next_batch`` (which chooses the runs).
"""
from __future__ import annotations

import pandas as pd

__all__ = ["suggestion_sheet"]


def _next_ids(ids: list[str], count: int) -> list[str]:
    """Run ids continuing the study's numbering (R20 -> R21, 7 -> 8), else N1, N2, ..."""
    import re

    found = [re.fullmatch(r"(.*?)(\d+)", v) for v in ids]
    if ids and all(found) and len({m.group(1) for m in found}) == 1:
        prefix = found[0].group(1)
        width = max(len(m.group(2)) for m in found) if prefix else 1
        start = max(int(m.group(2)) for m in found) + 1
        return [f"{prefix}{start + i:0{width}d}" for i in range(count)]
    taken, out, i = set(ids), [], 0
    while len(out) < count:
        i += 1
        if f"N{i}" not in taken:
            out.append(f"N{i}")
    return out


def _data_columns(study) -> list[str]:
    """The data file's column names in its own order (the loaded runs' when the
    file cannot be read again)."""
    from ..errors import TradeoffError
    from ..study.runs import read_study_table

    try:
        header = read_study_table(study, study.data_path, sheet=study.sheet).header
    except (TradeoffError, OSError, TypeError):
        return list(study.runs.columns)
    names = [str(h) for h in header if h not in (None, "")]
    return names + [c for c in study.runs.columns if c not in names]


def suggestion_sheet(study, suggestions) -> pd.DataFrame:
    """The run sheet of suggestions: the data file's columns, responses blank,
    ``point`` = ``suggested``, run ids continuing the study's."""
    columns = _data_columns(study)
    if "point" not in columns:
        columns.append("point")
    ids = _next_ids([str(v) for v in study.runs["run"]], len(suggestions))
    block = study.block_column
    rows = []
    for rid, s in zip(ids, suggestions):
        row = {c: None for c in columns}
        row["run"] = rid
        row.update(s.settings)
        row["point"] = "suggested"
        if block is not None and block in columns:
            row[block] = "next"  # the suggestions are made together, as a new block
        rows.append(row)
    return pd.DataFrame(rows, columns=columns)
