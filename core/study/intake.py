"""Reading lab tables (CSV or Excel) as they really arrive.

CSV files may be comma, semicolon or tab separated, use a decimal comma, and
start with a byte-order mark. Rows keep the number a spreadsheet shows (the
header is row 1), so every later message can point at the right row.
"""
from __future__ import annotations

import csv
import io
import math
import re
import unicodedata
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import DataError, where
from .limits import check_cell_count, check_csv_shape, check_workbook
from .safe_cells import restore_text

__all__ = ["RawTable", "read_table", "parse_number", "cell_text", "MAX_TABLE_BYTES"]

# Lab tables are small; a file this large is almost certainly the wrong file.
MAX_TABLE_BYTES = 50 * 1024 * 1024

_NUMBER = re.compile(r"^[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$")
_DECIMAL_COMMA = re.compile(r"^[+-]?\d*,\d+([eE][+-]?\d+)?$")


@dataclass(frozen=True)
class RawTable:
    """A table as read: header names, and cells by spreadsheet row number.

    ``rows`` holds ``(row_number, cells)`` pairs; cells are str, float or None
    (blank). Wholly blank rows are skipped. ``decimal_comma`` is True when the
    file uses ``12,5`` for twelve and a half.
    """

    source: Path
    header: list[str]
    rows: list[tuple[int, list]]
    decimal_comma: bool = False


def read_table(path: str | Path, *, sheet: str | int | None = None,
               data: bytes | None = None) -> RawTable:
    """Read a CSV or Excel file without changing it.

    ``data`` may carry the file's bytes (an upload); ``path`` then only names it.
    """
    path = Path(path)
    if data is None:
        if not path.exists():
            raise DataError(f"{path}: file not found: check the name and folder "
                            "(paths in a study file are relative to the study file)")
        if not path.is_file():
            raise DataError(f"{path}: that is a folder, not a data file: name the file "
                            "itself, for example runs.csv")
        if path.stat().st_size > MAX_TABLE_BYTES:
            raise DataError(f"{path.name}: the file is larger than "
                            f"{MAX_TABLE_BYTES // 2**20} MB: is it the right file?")
        try:
            data = path.read_bytes()
        except OSError as exc:
            raise DataError(f"{path}: cannot read the file ({exc.strerror or exc}): is "
                            "it open in another program, or not yours to read?") from None
    elif len(data) > MAX_TABLE_BYTES:
        raise DataError(f"{path.name}: the file is larger than "
                        f"{MAX_TABLE_BYTES // 2**20} MB: is it the right file?")
    suffix = path.suffix.lower()
    if suffix in (".xlsx", ".xlsm"):
        table = _read_excel(path, data, sheet)
    elif suffix in (".csv", ".txt", ".tsv", ""):
        table = _read_csv(path, data)
    else:
        raise DataError(f"{path.name}: cannot read '{suffix}' files: save the table "
                        "as .csv or .xlsx")
    if not table.header:
        raise DataError(f"{path.name}: the table is empty: expected a header row "
                        "naming the columns, then one row per run")
    _refuse_repeated_header(table)
    return table


def _refuse_repeated_header(table: RawTable) -> None:
    # Tables pasted one below another repeat their header; read as data, that
    # row would only give a puzzling "expected a number, found 'protein'".
    names = [h for h in table.header if h]
    if len(names) < 2:
        return
    for row_number, cells in table.rows:
        words = [c for c in cells if c is not None]
        if len(words) == len(names) and [str(c).strip() for c in words] == names:
            raise DataError(f"{where(table.source, row_number)}this row repeats the "
                            "column names of the header: delete it (were two tables "
                            "pasted one below the other?)")


def _decode(path: Path, data: bytes) -> str:
    if data[:2] in (b"\xff\xfe", b"\xfe\xff"):
        # "Unicode text" as some spreadsheet programs save it: UTF-16 with a BOM
        try:
            return data.decode("utf-16")
        except UnicodeDecodeError:
            pass
    for encoding in ("utf-8-sig", "cp1252"):
        try:
            return data.decode(encoding)
        except UnicodeDecodeError:
            continue
    return data.decode("latin-1")


def _read_csv(path: Path, data: bytes) -> RawTable:
    text = _decode(path, data)
    if "\x00" in text[:4096]:
        raise DataError(f"{path.name}: this does not look like a text table "
                        "(it holds binary data): save it as CSV or .xlsx")
    lines = text.splitlines()
    first = next((l for l in lines if l.strip()), "")
    # The separator is whichever candidate splits the header into most columns.
    separator = max([",", ";", "\t"], key=first.count) if first else ","
    if first.count(separator) == 0:
        separator = ","
    check_csv_shape(path, lines, separator)
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=separator)
    header: list[str] | None = None
    rows: list[tuple[int, list]] = []
    count = 0
    try:
        for line_number, cells in enumerate(reader, start=1):
            count += len(cells)
            check_cell_count(path, count)
            # the apostrophe the tool's own exports put before "=1+2" comes off
            cells = [restore_text(c.strip()) for c in cells]
            if not any(cells):
                continue
            if header is None:
                header = cells
                header_row = line_number
                continue
            rows.append((line_number, [c if c != "" else None for c in cells]))
    except csv.Error as exc:
        raise DataError(f"{path.name}: cannot read the table ({exc}): is a quote (\") "
                        "left open? Save it again as CSV from the spreadsheet") from None
    if header is None:
        return RawTable(path, [], [], False)
    # A decimal comma can only be told apart when commas do not separate.
    decimal_comma = separator != "," and any(
        isinstance(c, str) and _DECIMAL_COMMA.match(c) for _, r in rows for c in r)
    return RawTable(path, _clean_header(path, header, header_row), rows, decimal_comma)


def _read_excel(path: Path, data: bytes, sheet) -> RawTable:
    # sizes and cell counts from the archive, before anything is expanded (or
    # even the workbook reader loaded)
    check_workbook(path, data)
    import openpyxl  # imported here: only Excel users pay for it

    try:
        book = openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises many kinds for a damaged file
        raise DataError(f"{path.name}: cannot open it as an Excel workbook ({exc}): "
                        "save it again as .xlsx or as CSV") from None
    try:
        if sheet is None:
            ws = book.worksheets[0]
        elif isinstance(sheet, int) and not isinstance(sheet, bool):
            # sheet = 0 is the first sheet, as in the study file's reference
            if not 0 <= sheet < len(book.worksheets):
                raise DataError(f"{path.name}: no sheet number {sheet}: the workbook "
                                f"has {len(book.worksheets)} sheet(s) {book.sheetnames}, "
                                "numbered from 0; or give the sheet's name")
            ws = book.worksheets[sheet]
        else:
            if sheet not in book.sheetnames:
                raise DataError(f"{path.name}: no sheet named '{sheet}'; the workbook "
                                f"has {book.sheetnames}")
            ws = book[sheet]
        # The sheet's stated size may claim a million rows and columns, which the
        # reader would fill with blanks: read only the cells that are there.
        ws.reset_dimensions()
        header = None
        rows: list[tuple[int, list]] = []
        count = width = 0
        for row_number, values in enumerate(ws.iter_rows(values_only=True), start=1):
            count += len(values)
            check_cell_count(path, count)
            width = max(width, len(values))
            cells = [None if v is None or (isinstance(v, str) and not v.strip())
                     else (restore_text(v.strip()) if isinstance(v, str) else v)
                     for v in values]
            if not any(c is not None for c in cells):
                continue
            if header is None:
                header = ["" if c is None else str(c) for c in cells]
                header_row = row_number
                continue
            rows.append((row_number, [float(c) if isinstance(c, (int, float))
                                      and not isinstance(c, bool) else
                                      (None if c is None else str(c)) for c in cells]))
    except DataError:
        raise
    except Exception as exc:  # a damaged sheet shows only while it is read
        raise DataError(f"{path.name}: cannot read the workbook ({exc}): save it again "
                        "as .xlsx or as CSV") from None
    finally:
        book.close()
    if header is None:
        return RawTable(path, [], [], False)
    # every row as wide as the widest, as a spreadsheet shows the sheet
    header += [""] * (width - len(header))
    rows = [(r, cells + [None] * (width - len(cells))) for r, cells in rows]
    # Excel keeps trailing empty header cells when a column was once used.
    while header and header[-1] == "":
        header.pop()
    header = _clean_header(path, header, header_row)
    blanks = {(r, j) for r, cells in rows for j, c in enumerate(cells[:len(header)])
              if c is None}
    if blanks:
        _refuse_unsaved_formulas(path, data, ws.title, blanks, header)
    return RawTable(path, header, rows, False)


def _refuse_unsaved_formulas(path: Path, data: bytes, title: str, blanks: set,
                             header: list[str]) -> None:
    # A workbook written by a program (not saved by a spreadsheet) may hold
    # formulas without their computed values; read as values they look blank,
    # which would silently drop measurements.
    import openpyxl

    book = openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=False)
    try:
        ws = book[title]
        ws.reset_dimensions()
        for row_number, values in enumerate(ws.iter_rows(values_only=True), start=1):
            for j, v in enumerate(values):
                if (row_number, j) in blanks and isinstance(v, str) and v.startswith("="):
                    raise DataError(f"{where(path, row_number, header[j] or None)}the "
                                    f"cell holds the formula '{v}' but no computed "
                                    "value: open the workbook in a spreadsheet program "
                                    "and save it again, or type the value")
    except DataError:
        raise
    except Exception as exc:  # a damaged sheet shows only while it is read
        raise DataError(f"{path.name}: cannot read the workbook ({exc}): save it again "
                        "as .xlsx or as CSV") from None
    finally:
        book.close()


def _clean_header(path: Path, header: list[str], header_row: int) -> list[str]:
    # NFC: an accented name typed on one system matches the same name from another
    names = [unicodedata.normalize("NFC", h.strip()) for h in header]
    seen: dict[str, int] = {}
    for i, name in enumerate(names):
        if name and name in seen:
            raise DataError(f"{where(path, header_row, name)}the column name appears "
                            f"twice (columns {seen[name] + 1} and {i + 1}): "
                            "rename one of them")
        seen.setdefault(name, i)
    return names


def cell_text(cell) -> str:
    """A cell read as an id or a level name: a number typed as 3 or 3.0 is "3".

    Run ids, assessors and level names come back from a spreadsheet as floats
    when they look like numbers; every table reads them by this one rule, so
    run 3 of the runs table is run 3 of the storage and panel tables.
    """
    if isinstance(cell, float) and cell.is_integer():
        return str(int(cell))
    return str(cell).strip()


def parse_number(cell, *, decimal_comma: bool, location: str) -> float:
    """One cell -> float; blank -> NaN; anything else -> a clear DataError."""
    if cell is None:
        return math.nan
    if isinstance(cell, (int, float)) and not isinstance(cell, bool):
        value = float(cell)
    else:
        text = str(cell).strip().replace("\u2212", "-")
        if _NUMBER.match(text):
            value = float(text)
        elif _DECIMAL_COMMA.match(text):
            if not decimal_comma:
                raise DataError(f"{location}expected a number, found '{cell}': use a "
                                "decimal point, or separate columns with ';' when "
                                "writing decimals with a comma")
            value = float(text.replace(",", "."))
        else:
            hint = ("type the number only; units belong in the study file"
                    if re.match(r"^[+-]?[\d.,]+\s*\S+$", text)
                    else "type a number or leave the cell blank")
            raise DataError(f"{location}expected a number, found '{cell}': {hint}")
    if not np.isfinite(value):
        raise DataError(f"{location}expected a finite number, found '{cell}': "
                        "leave the cell blank if the value is missing")
    return value
