"""How numbers and blanks look in the workbench's tables (formatting only).

Streamlit prints a missing cell as a grey "None" and a float in full
(0.000000000000000004); tables pass through these helpers first so a blank
stays blank and every number reads like the report's.
"""
from __future__ import annotations

import math

import pandas as pd

__all__ = ["num", "span", "blank_none", "p_text", "text_px", "table_px", "NARROW_PX",
           "significant"]

# The main column at 1280 px (818 px, less the table's border): a wider table would hide
# columns behind a scroll on a laptop screen.
NARROW_PX = 815


def num(x, digits: int = 4) -> str:
    """A number with ``digits`` significant digits; blank when missing."""
    if x is None or isinstance(x, str):
        return x or ""
    x = float(x)
    return "" if not math.isfinite(x) else f"{x:.{digits}g}"


def span(low, high, digits: int = 4) -> str:
    """An interval as 'low .. high', both ends to the same decimals ('20.09 .. 26.00',
    never '20.09 .. 26'); an open end is left blank."""
    from tradeoff.search.result import pair_text

    return pair_text(low, high, digits)


def p_text(p) -> str:
    """A p-value as the report prints it: 4 decimals, '< 0.0001' below that."""
    from tradeoff.report.data import _p

    if p is None or (isinstance(p, float) and not math.isfinite(p)):
        return ""
    return _p(float(p))


def blank_none(table: pd.DataFrame) -> pd.DataFrame:
    """Empty text instead of None/NaN in text columns (numbers are left alone)."""
    out = table.copy()
    for col in out.columns:
        if out[col].dtype == object:
            out[col] = out[col].map(lambda v: "" if v is None or (isinstance(v, float)
                                                                  and math.isnan(v)) else v)
    return out


def text_px(texts) -> int:
    """Pixels a table column needs for its longest text (header or cell): about 6.2 px
    a character in the table's 14 px font, plus the cell's padding."""
    longest = max((len(str(t)) for t in texts), default=0)
    return int(6.2 * longest) + 18


def table_px(table: pd.DataFrame) -> int:
    """Pixels a table needs to show every column whole (no index)."""
    return sum(text_px([c, *table[c].tolist()]) for c in table.columns)


def significant(table: pd.DataFrame, digits: int = 4) -> pd.DataFrame:
    """Float columns to ``digits`` significant digits (44.3878 -> 44.39), as the report
    prints them; the cells stay numbers, so they sort and align as numbers."""
    out = table.copy()
    for col in out.columns:
        if pd.api.types.is_float_dtype(out[col]):
            out[col] = out[col].map(lambda v: v if not math.isfinite(v)
                                    else float(f"{v:.{digits}g}"))
    return out
