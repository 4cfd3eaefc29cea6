"""Tables leave the tool as data, never as formulas.

Study files and data tables travel between labs by e-mail, so a run id, a
label or a level name may hold anything, including text that a spreadsheet
program would run as a formula (``=1+2``, ``@SUM(A1)``, ``-2+3``: the
formula-injection payloads that OWASP lists under "CSV Injection"). Every
table the tool writes goes through this one module:

* ``csv_bytes`` writes CSV with the usual leading apostrophe before text
  that begins with ``=``, ``+``, ``-``, ``@``, a tab or a carriage return;
  numbers (negative ones included) are written as numbers.
* ``workbook_bytes`` writes an Excel workbook whose text cells are stored as
  text, never as formulas (and marked with the "quote prefix" a spreadsheet
  sets when a user types a leading apostrophe, so editing the cell keeps it
  text).
* ``restore_text`` undoes the apostrophe when the tool reads a table back, so
  a run sheet written, filled in and loaded again comes back exactly.
"""
from __future__ import annotations

import io
import re

__all__ = ["FORMULA_STARTS", "inert_text", "restore_text", "inert_frame", "csv_bytes",
           "workbook_bytes", "table_bytes", "TABLE_SUFFIXES"]

# The characters OWASP's "CSV Injection" page lists as starting a formula:
# equals, plus, minus, at, tab (0x09) and carriage return (0x0D).
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
# Written with an apostrophe: text whose first character starts a formula,
# possibly after apostrophes already there (so "'=x" comes back as "'=x"),
# and its full-width look-alikes, which some spreadsheet programs also accept.
_NEEDS_QUOTE = re.compile("^'*[=+\\-@\t\r\uff1d\uff0b\uff0d\uff20]")
_QUOTED = re.compile("^'+[=+\\-@\t\r\uff1d\uff0b\uff0d\uff20]")
# A plain number written as text ("-5", "+1.5e3") is a number to every
# spreadsheet program, not a formula: it stays as it is.
_PLAIN_NUMBER = re.compile(r"^[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$")

TABLE_SUFFIXES = (".csv", ".xlsx")


def inert_text(value):
    """``value`` as it is written to a CSV cell: text that could start a formula
    gets a leading apostrophe; everything else (numbers, blanks) is unchanged."""
    if isinstance(value, str) and _NEEDS_QUOTE.match(value) \
            and not _PLAIN_NUMBER.match(value):
        return "'" + value
    return value


def restore_text(value):
    """Undo ``inert_text`` on a cell read back: one leading apostrophe before a
    formula character is removed; any other text is returned unchanged."""
    if isinstance(value, str) and _QUOTED.match(value):
        return value[1:]
    return value


def inert_frame(frame):
    """A copy of ``frame`` whose text cells and column names pass ``inert_text``.

    Number columns are left alone (a numeric column has no text in it);
    columns of mixed content are checked cell by cell.
    """
    out = frame.copy()
    for column in out.columns:
        out[column] = _each_text(out[column], inert_text)
    out.columns = [inert_text(str(c)) if isinstance(c, str) else c for c in out.columns]
    return out


def _each_text(series, change):
    """``change`` applied to every cell of a column that may hold text."""
    import pandas as pd

    types = pd.api.types
    if (types.is_numeric_dtype(series) and not isinstance(series.dtype, pd.CategoricalDtype)) \
            or types.is_bool_dtype(series) or types.is_datetime64_any_dtype(series):
        return series  # no text in a number, true/false or date column
    return series.astype(object).map(change, na_action="ignore")


def csv_bytes(frame, *, index: bool = False) -> bytes:
    """``frame`` as UTF-8 CSV, text that could start a formula neutralised."""
    if index:  # the index becomes ordinary columns, checked like the others
        frame = frame.reset_index()
    # Lines end in CR LF (RFC 4180), so the writer quotes any cell holding a
    # carriage return or a line feed: text cannot start a row of its own.
    return inert_frame(frame).to_csv(index=False, lineterminator="\r\n").encode("utf-8")


def workbook_bytes(sheets: dict, *, widths: bool = True, cap: int = 60) -> bytes:
    """Sheets (name -> DataFrame) as an Excel workbook whose text is only text.

    Parameters
    ----------
    sheets : dict
        Sheet name -> DataFrame, written in order without the index.
    widths : bool
        Give each column a readable width (from its longest entry, at least
        10 and at most ``cap`` characters).

    Notes
    -----
    The workbook writer stores any text that begins with ``=`` as a formula;
    here every such cell is turned back into text after writing, and every
    text cell that begins like a formula carries the quote prefix.
    """
    import pandas as pd

    buffer = io.BytesIO()
    with pd.ExcelWriter(buffer, engine="openpyxl") as writer:
        for name, frame in sheets.items():
            frame = _printable_frame(frame)
            frame.to_excel(writer, sheet_name=_sheet_name(name), index=False)
            sheet = writer.sheets[_sheet_name(name)]
            for column in sheet.iter_cols():
                for cell in column:
                    _keep_text(cell)
                if widths:
                    width = max((len(str(c.value)) for c in column if c.value is not None),
                                default=0)
                    sheet.column_dimensions[column[0].column_letter].width = \
                        min(max(10, width + 2), cap)
    return buffer.getvalue()


def table_bytes(frame, suffix: str, *, sheet: str = "runs") -> bytes:
    """``frame`` as a CSV file or a one-sheet workbook, chosen by ``suffix``."""
    suffix = suffix.lower()
    if suffix == ".csv":
        return csv_bytes(frame)
    if suffix == ".xlsx":
        return workbook_bytes({sheet: frame})
    raise ValueError(f"no table format for {suffix!r}: use one of {TABLE_SUFFIXES}")


def _printable_frame(frame):
    # A workbook cannot hold control characters (other than tab and line
    # breaks); shown as the replacement mark instead of failing the export.
    from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

    def printable(value):
        return ILLEGAL_CHARACTERS_RE.sub("\ufffd", value) if isinstance(value, str) \
            else value

    out = frame.copy()
    for column in out.columns:
        out[column] = _each_text(out[column], printable)
    out.columns = [printable(c) for c in out.columns]
    return out


def _keep_text(cell) -> None:
    value = cell.value
    if not isinstance(value, str):
        return
    if cell.data_type == "f":
        # the writer took the text for a formula: store it as the text it is
        cell.data_type = "s"
    if _NEEDS_QUOTE.match(value) and not _PLAIN_NUMBER.match(value):
        cell.quotePrefix = True


def _sheet_name(name: str) -> str:
    # sheet names are at most 31 characters and cannot hold []:*?/\
    return re.sub(r"[\[\]:*?/\\]", "_", str(name))[:31] or "sheet"
