"""Coded units: -1 at a factor's low setting, +1 at its high, 0 at the centre.

Two-level categorical factors code their first level as -1 and their second
as +1. A categorical factor with three or more levels is coded by its level's
position in ``levels`` (0, 1, 2, ...); the model turns that position into
sum-to-zero columns (``tradeoff.model.terms``). Everything here is vectorised:
whole columns or (n, k) arrays at once.
"""
from __future__ import annotations

import difflib
from typing import Sequence

import numpy as np
import pandas as pd

from ..errors import DataError

__all__ = ["code_values", "decode_values", "to_coded", "to_natural", "level_codes",
           "nearest_level"]


def level_codes(factor) -> np.ndarray:
    """The coded value of each level of a categorical factor, in level order:
    -1, +1 for two levels; 0, 1, 2, ... for three or more."""
    n = len(factor.levels)
    return np.array([-1.0, 1.0]) if n == 2 else np.arange(n, dtype=float)


def nearest_level(text: str, levels: Sequence[str]) -> str:
    """The level most like ``text`` (for messages about a misspelt cell)."""
    lowered = {v.lower(): v for v in levels}
    if str(text).strip().lower() in lowered:
        return lowered[str(text).strip().lower()]
    close = difflib.get_close_matches(str(text), list(levels), n=1, cutoff=0.0)
    return close[0] if close else levels[0]


def code_values(factor, values) -> np.ndarray:
    """Natural settings of one factor -> coded values (float array)."""
    if factor.is_categorical:
        values = np.asarray(values, dtype=object)
        coded = np.full(values.shape, np.nan)
        for level, code in zip(factor.levels, level_codes(factor)):
            coded[values == level] = code
        unknown = np.isnan(coded)
        if unknown.any():
            bad = values[unknown][0]
            raise DataError(
                f"factor '{factor.name}': '{bad}' is not one of its levels "
                f"{list(factor.levels)} (nearest: '{nearest_level(bad, factor.levels)}'): "
                "check the spelling or add the level")
        return coded
    values = np.asarray(values, dtype=float)
    return (values - factor.centre) / factor.half_range


def decode_values(factor, coded) -> np.ndarray:
    """Coded values of one factor -> natural settings.

    A two-level categorical factor takes its first level for coded values below
    0 and its second level otherwise; one with more levels takes the level at
    the (rounded, clipped) position.
    """
    coded = np.asarray(coded, dtype=float)
    if factor.is_categorical:
        if len(factor.levels) == 2:
            return np.where(coded < 0, factor.levels[0], factor.levels[1]).astype(object)
        index = np.clip(np.rint(coded), 0, len(factor.levels) - 1).astype(int)
        return np.asarray(factor.levels, dtype=object)[index]
    return factor.centre + coded * factor.half_range


def to_coded(factors: Sequence, table: pd.DataFrame | dict) -> np.ndarray:
    """Natural settings (columns named after factors) -> coded (n, k) array."""
    if isinstance(table, dict):
        table = pd.DataFrame({k: np.atleast_1d(v) for k, v in table.items()})
    columns = [code_values(f, table[f.name].to_numpy()) for f in factors]
    return np.column_stack(columns) if columns else np.empty((len(table), 0))


def to_natural(factors: Sequence, coded) -> pd.DataFrame:
    """Coded (n, k) array -> DataFrame of natural settings, one column per factor."""
    coded = np.atleast_2d(np.asarray(coded, dtype=float))
    return pd.DataFrame({f.name: decode_values(f, coded[:, j])
                         for j, f in enumerate(factors)})
