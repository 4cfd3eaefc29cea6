"""CSV dialects and Excel files as labs send them (common practice)."""
from __future__ import annotations

import pytest

from tradeoff import load_study
from tradeoff.study.intake import read_table

from conftest import BASIC_RUNS

EXPECTED = [18.5, 27.0, 16.0, 24.5, 21.0]


def semicolon_decimal_comma(text: str) -> str:
    return text.replace(",", ";").replace(".", ",")


@pytest.mark.parametrize("runs", [
    BASIC_RUNS,
    BASIC_RUNS.encode("utf-8-sig"),                       # byte-order mark
    semicolon_decimal_comma(BASIC_RUNS),                  # European export
    semicolon_decimal_comma(BASIC_RUNS).encode("utf-8-sig"),
    BASIC_RUNS.replace(",", "\t"),                        # tab separated
    BASIC_RUNS.replace("\n", "\r\n"),                     # Windows line ends
    BASIC_RUNS.replace("3,20,date", "\n\n3,20,date"),     # blank lines
    BASIC_RUNS.encode("cp1252"),                          # legacy Windows encoding
])
def test_csv_dialects_read_the_same(write_study, runs):
    study = load_study(write_study(runs=runs))
    assert list(study.runs["hardness"]) == EXPECTED
    assert list(study.runs["binder"])[:2] == ["rice syrup", "rice syrup"]


def test_blank_lines_keep_spreadsheet_row_numbers(write_study):
    runs = BASIC_RUNS.replace("3,20,date", "\n3,20,date").replace("4,30,date paste,24.5",
                                                                  "4,30,date paste,oops")
    with pytest.raises(Exception, match=r"row 6, column 'hardness'"):
        load_study(write_study(runs=runs))


def test_excel_reads_like_csv(write_study, tmp_path):
    import openpyxl

    book = openpyxl.Workbook()
    sheet = book.active
    for line in BASIC_RUNS.strip().splitlines():
        cells = line.split(",")
        sheet.append([float(c) if c.replace(".", "").isdigit() else c for c in cells])
    book.save(tmp_path / "runs.xlsx")
    study_text = open(write_study(runs=None)).read().replace("runs.csv", "runs.xlsx")
    study = load_study(write_study(study_text, runs=None))
    assert list(study.runs["hardness"]) == EXPECTED
    assert list(study.runs["run"]) == ["1", "2", "3", "4", "5"]


def test_decimal_comma_in_comma_file_is_refused(write_study):
    runs = BASIC_RUNS.replace("18.5", '"18,5"')
    with pytest.raises(Exception, match=r"row 2, column 'hardness': expected a number, "
                                         r"found '18,5': use a decimal point"):
        load_study(write_study(runs=runs))


def test_binary_file_is_refused(tmp_path):
    path = tmp_path / "runs.csv"
    path.write_bytes(b"\x00\x01\x02binary")
    with pytest.raises(Exception, match="binary data"):
        read_table(path)


def test_unknown_suffix(tmp_path):
    path = tmp_path / "runs.ods"
    path.write_bytes(b"x")
    with pytest.raises(Exception, match=r"cannot read '.ods' files"):
        read_table(path)
