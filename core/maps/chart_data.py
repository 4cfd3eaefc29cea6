"""Chart data handed to the renderer as plain records, without the slow path.

Altair's default data step cleans every table column by column with pandas
before writing it out (about 20 ms a table, over a hundred tables in a
report). Our tables hold only numbers, text and true/false values, so one
pass over numpy arrays does the same job: missing and infinite numbers become
``null``, numpy scalars become Python ones. Any other column type (dates,
categories) goes through Altair's own step unchanged.
"""
from __future__ import annotations

import math

import numpy as np
import pandas as pd

__all__ = ["records", "use_records"]

NAME = "tradeoff_records"
_registered = False


def _column(values: pd.Series) -> list | None:
    kind = values.dtype.kind
    if kind == "f":
        arr = values.to_numpy(float)
        out = arr.tolist()
        for i in np.flatnonzero(~np.isfinite(arr)):
            out[i] = None
        return out
    if kind in "iub":
        return values.to_numpy().tolist()
    if kind == "O" and not isinstance(values.dtype, pd.CategoricalDtype):
        out = []
        for v in values:
            if isinstance(v, np.generic):
                v = v.item()
            if v is None or (isinstance(v, float) and not math.isfinite(v)):
                v = None
            elif not isinstance(v, (str, int, float, bool)):
                return None  # something unusual: let Altair handle the table
            out.append(v)
        return out
    return None


def records(data):
    """``{"values": [...]}`` for a DataFrame of numbers, text and flags.

    Anything else (a table with dates or categories, a URL, a non-table) is
    passed to Altair's default data step, which returns the same shape.
    """
    from altair.vegalite.data import default_data_transformer

    if isinstance(data, pd.DataFrame) and all(isinstance(c, str) for c in data.columns):
        columns = [_column(data[c]) for c in data.columns]
        if all(c is not None for c in columns):
            names = list(data.columns)
            return {"values": [dict(zip(names, row)) for row in zip(*columns)]}
    return default_data_transformer(data)


def use_records():
    """A context in which Altair writes chart data with ``records``."""
    import altair as alt

    global _registered
    if not _registered:  # asking the registry for its names reads installed packages
        alt.data_transformers.register(NAME, records)
        _registered = True
    return alt.data_transformers.enable(NAME)
