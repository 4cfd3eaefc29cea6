"""The library's errors: one root, a few kinds, messages in a lab user's words.

Every message is one line that says what was expected, what was found, where
(file, row as a spreadsheet numbers it, column) and how to fix it. The CLI
prints it after ``error:`` and exits with status 2; the front end shows it.
"""
from __future__ import annotations

import difflib
from pathlib import Path

__all__ = [
    "TradeoffError",
    "StudyError",
    "DataError",
    "ModelError",
    "SearchError",
    "PlanError",
    "where",
    "did_you_mean",
]


class TradeoffError(Exception):
    """Root of every error the library raises on purpose."""


class StudyError(TradeoffError):
    """The study file (TOML) is missing, malformed or inconsistent."""


class DataError(TradeoffError):
    """A data table (runs, storage or panel scores) cannot be used as it is."""


class ModelError(TradeoffError):
    """A response's model cannot be fitted or used as asked."""


class SearchError(TradeoffError):
    """The best-settings search cannot run as asked."""


class PlanError(TradeoffError):
    """The requested experimental plan is not possible."""


def where(file: str | Path | None = None, row: int | None = None,
          column: str | None = None) -> str:
    """Format a location prefix such as ``bar_runs.csv, row 7, column 'protein': ``.

    ``row`` is the row number a spreadsheet user sees (the header is row 1).
    """
    parts = []
    if file is not None:
        parts.append(Path(file).name)
    if row is not None:
        parts.append(f"row {row}")
    if column is not None:
        parts.append(f"column '{column}'")
    return (", ".join(parts) + ": ") if parts else ""


def did_you_mean(word, options) -> str:
    """A hint such as `` (did you mean 'protein'?)`` for a near miss, else "".

    Appended to messages about an unknown name, key or choice, so every
    module suggests the same way.
    """
    close = difflib.get_close_matches(str(word), list(options), n=1, cutoff=0.6)
    return f" (did you mean '{close[0]}'?)" if close else ""
