"""Size limits checked before a shared file is expanded.

An Excel workbook is a zip archive: a file of a few hundred kilobytes can
unpack to gigabytes (a compressed "bomb"), and a worksheet can claim a
million rows. A lab study has at most a few thousand cells, so the limits
here sit far above any real study and far below what would slow the machine:
a file beyond them is refused with one line, in well under a second, before
anything is unpacked into memory.
"""
from __future__ import annotations

import io
import re
import zipfile
from pathlib import Path

from ..errors import DataError

__all__ = ["MAX_UNPACKED_BYTES", "MAX_CELLS", "MAX_COLUMNS", "check_workbook",
           "check_cell_count", "check_csv_shape"]

# 200 MB unpacked: a workbook of a million cells of text stays well below it.
MAX_UNPACKED_BYTES = 200 * 1024 * 1024
# One million cells: a thousand runs with a thousand columns.
MAX_CELLS = 1_000_000
# The widest sheet a spreadsheet program makes (16,384 columns, XFD).
MAX_COLUMNS = 16_384
# Members of a workbook archive: a real one holds a few dozen.
MAX_MEMBERS = 10_000

# A cell element (<c ...>) and a shared-string entry (<si>), counted on the
# unpacked stream chunk by chunk; a literal count is fast, and the pattern is
# only run where a namespace prefix (<x:c ...>) may be in use.
_CELL = (b"c", re.compile(rb"<\w{1,20}:c[\s/>]"))
_STRING = (b"si", re.compile(rb"<\w{1,20}:si[\s/>]"))
_OVERLAP = 32
_CHUNK = 1 << 20


def _refuse(path: Path, what: str) -> DataError:
    return DataError(f"{path.name}: {what}, far beyond any real study: is it the right "
                     "file? (limits: 200 MB unpacked, 1 million cells)")


def check_workbook(path: str | Path, data: bytes) -> None:
    """Refuse a workbook beyond the limits, from its zip directory and a count of
    its cells, before a workbook reader expands it.

    Raises
    ------
    DataError
        Not a zip archive (not an .xlsx workbook), more than ``MAX_UNPACKED_BYTES``
        unpacked, or more than ``MAX_CELLS`` cells or shared texts.
    """
    path = Path(path)
    try:
        archive = zipfile.ZipFile(io.BytesIO(data))
    except (zipfile.BadZipFile, OSError, ValueError):
        raise DataError(f"{path.name}: cannot open it as an Excel workbook (it is not "
                        "a zip archive, as an .xlsx file is): save it again as .xlsx or "
                        "as CSV") from None
    with archive:
        members = archive.infolist()
        if len(members) > MAX_MEMBERS:
            raise _refuse(path, f"the workbook holds {len(members):,} parts")
        # The sizes in the zip directory are what the reader will unpack (it
        # stops at the stated size), so they can be trusted before unpacking.
        unpacked = sum(m.file_size for m in members)
        if unpacked > MAX_UNPACKED_BYTES:
            raise _refuse(path, f"the workbook unpacks to {unpacked / 2**20:,.0f} MB")
        for member in members:
            name = member.filename.lower()
            if name.startswith("xl/worksheets/") and name.endswith(".xml"):
                pattern, what = _CELL, "cells in one sheet"
            elif name.endswith("sharedstrings.xml"):
                pattern, what = _STRING, "different texts"
            else:
                continue
            count = _count(archive, member, pattern)
            if count > MAX_CELLS:
                raise _refuse(path, f"the workbook holds more than {MAX_CELLS:,} {what}")


def _count(archive: zipfile.ZipFile, member: zipfile.ZipInfo, pattern) -> int:
    """Occurrences of ``pattern`` in one member, unpacked a chunk at a time
    (memory stays at one chunk), stopping once past ``MAX_CELLS``."""
    count = 0
    tail = b""
    try:
        with archive.open(member) as stream:
            while chunk := stream.read(_CHUNK):
                buffer = tail + chunk
                # Matches that start in the last few bytes are counted with the
                # next chunk (a match is shorter than the overlap kept).
                tail = buffer[-_OVERLAP:]
                count += _occurrences(buffer, pattern) - _occurrences(tail, pattern)
                if count > MAX_CELLS:
                    return count
        count += _occurrences(tail, pattern)
    except (zipfile.BadZipFile, OSError, EOFError, NotImplementedError, RuntimeError):
        return count  # a damaged part: the workbook reader reports it in its words
    return count


def _occurrences(buffer: bytes, pattern) -> int:
    tag, prefixed = pattern
    # "<c" also starts the rare <col>, <cfRule> ...: counting them too can only
    # make the count larger, never let a bigger sheet through.
    count = buffer.count(b"<" + tag)
    if b":" + tag in buffer:
        count += len(prefixed.findall(buffer))
    return count


def check_cell_count(path: str | Path, cells: int) -> None:
    """Refuse a table once more than ``MAX_CELLS`` cells have been read."""
    if cells > MAX_CELLS:
        raise _refuse(Path(path), f"the table holds more than {MAX_CELLS:,} cells")


def check_csv_shape(path: str | Path, lines: list[str], separator: str) -> None:
    """Refuse a text table with a line of more cells than any sheet can have,
    before it is split into cells (one line of commas would otherwise become
    millions of empty cells in memory)."""
    widest = max((line.count(separator) + 1 for line in lines), default=0)
    if widest > MAX_COLUMNS:
        raise _refuse(Path(path), f"one line holds {widest:,} cells (a sheet has at "
                                  f"most {MAX_COLUMNS:,} columns)")
