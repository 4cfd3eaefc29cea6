"""Malformed input at every entry point: a correct reading or one clear line, never a traceback.

Each case writes a small study (study file, runs table, storage or panel
table) into a temporary folder, runs a ``tradeoff`` command on it, and checks
either the values read (acceptance) or the one ``error:`` line: exit status 2,
one line on stderr, naming the file, row and column where there is one. Every
input file is byte-for-byte the same afterwards (SHA-256 before and after).
The kinds of mess are those lab tables really arrive with (common practice:
spreadsheets exported in other locales, pasted tables, units typed into
cells); the expected readings are worked out by hand beside each case.
"""
from __future__ import annotations

import codecs
import hashlib
import io
import math
import re
import subprocess
import sys
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Callable

import numpy as np
import openpyxl
import pytest

from tradeoff import cli
from tradeoff.errors import TradeoffError
from tradeoff.inputs import study_from_files
from tradeoff.study.intake import MAX_TABLE_BYTES
from tradeoff.study.spec import MAX_STUDY_BYTES
from tradeoff.study.draft import draft_problems, draft_spec, guess_draft, with_column
from tradeoff.derive.load import load_study, study_from_dict

from conftest import BASIC_RUNS, BASIC_STUDY

HARDNESS = [18.5, 27.0, 16.0, 24.5, 21.0]  # the hardness column of BASIC_RUNS


def _xlsx(rows, *, title="runs") -> bytes:
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.title = title
    for row in rows:
        sheet.append(row)
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()


HEADER = ["run", "protein", "binder", "hardness"]
XROWS = [HEADER, [1, 20, "rice syrup", 18.5], [2, 30, "rice syrup", 27.0],
         [3, 20, "date paste", 16.0], [4, 30, "date paste", 24.5],
         [5, 25, "date paste", 21.0]]
XSTUDY = BASIC_STUDY.replace("runs.csv", "runs.xlsx")


def _with_row(row: list) -> list:
    """XROWS with its first run replaced."""
    return [HEADER, row] + XROWS[2:]


def _runs(old: str, new: str, text: str = BASIC_RUNS) -> str:
    assert old in text
    return text.replace(old, new, 1)


def _study(old: str, new: str, text: str = BASIC_STUDY) -> str:
    assert old in text
    return text.replace(old, new, 1)


# Storage and panel tables for derived responses (core/derived.py).
DERIVED_STUDY = """[study]
data = "runs.csv"
model = "main"
[storage]
data = "storage.csv"
time = "week"
[panel]
data = "panel.csv"
scale = [1, 9]
[[factors]]
name = "protein"
low = 20
high = 30
[[responses]]
name = "h4"
derive = "value_at"
property = "hardness"
at = 4
[[responses]]
name = "liking"
derive = "panel_mean"
attribute = "liking"
"""
DERIVED_RUNS = "run,protein\nR1,20\nR2,30\nR3,20\nR4,30\n"
STORAGE = ("run,week,property,value\n"
           "R1,0,hardness,10\nR1,4,hardness,12\nR2,0,hardness,20\nR2,4,hardness,24\n"
           "R3,0,hardness,15\nR3,4,hardness,16\nR4,0,hardness,18\nR4,4,hardness,19\n")
PANEL = ("run,assessor,attribute,score\n"
         "R1,A1,liking,7\nR2,A1,liking,5\nR3,A1,liking,6\nR4,A1,liking,8\n"
         "R1,A2,liking,8\nR2,A2,liking,6\nR3,A2,liking,5\nR4,A2,liking,7\n")


def _derived(storage: str | bytes = STORAGE, panel: str | bytes = PANEL) -> dict:
    return {"study.toml": DERIVED_STUDY, "runs.csv": DERIVED_RUNS,
            "storage.csv": storage, "panel.csv": panel}


def _basic(runs: str | bytes = BASIC_RUNS, study: str | bytes = BASIC_STUDY,
           data_name: str = "runs.csv") -> dict:
    return {"study.toml": study, data_name: runs}


@dataclass
class Case:
    """One malformed input: the files, the command, what must come of it.

    ``error`` is a regex the one ``error:`` line must match; otherwise
    ``accept`` checks the study as loaded (the command must then succeed).
    """

    id: str
    files: dict
    argv: tuple = ("check", "{study}")
    error: str | None = None
    accept: Callable | None = None
    dirs: tuple = ()
    execv: list = field(default_factory=list)


def _hardness(expected):
    def check(study):
        assert np.allclose(study.runs["hardness"].to_numpy(), expected, equal_nan=True)
    return check


def _accept_units_free(study):
    # hand check: 18,5 read as 18.5 (decimal comma with ';' separators)
    assert np.allclose(study.runs["hardness"], HARDNESS)
    assert list(study.runs["binder"][:2]) == ["rice syrup", "rice syrup"]


def _accept_blank_rows(study):
    # blank lines are skipped, but rows keep the numbers a spreadsheet shows:
    # a blank line 1, the header on line 2, runs on 3, 4, a blank 5, runs on 6-8
    assert list(study.runs.index) == [3, 4, 6, 7, 8]
    assert np.allclose(study.runs["hardness"], HARDNESS)


def _accept_constant_factor(study):
    assert (study.runs["protein"] == 20).all()
    assert any("factor 'protein' is 20 in every run" in n for n in study.notes)


def _accept_one_blank(study):
    assert math.isnan(study.runs["hardness"].iloc[1])
    assert any("run(s) 2 blank" in n for n in study.notes)


def _accept_nfd(study):
    # 'protéine' typed decomposed (e + combining accent) in the study file and
    # composed in the table: the same name once both are normalised (NFC)
    assert study.factor_names[0] == "prot\u00e9ine"
    assert np.allclose(study.runs["prot\u00e9ine"], [20, 30, 20, 30, 25])


def _accept_derived(study):
    runs = study.runs.set_index("run")
    # h4 = hardness at week 4, measured; liking = mean of the two assessors
    assert list(runs["h4"]) == [12, 24, 16, 19]
    assert np.allclose(runs["liking"], [7.5, 5.5, 5.5, 7.5])


def _accept_panel_comma(study):
    runs = study.runs.set_index("run")
    assert runs["liking"]["R1"] == pytest.approx((7.5 + 8) / 2)  # 7,5 read as 7.5


NFD = "prote\u0301ine"
NFC = "prot\u00e9ine"
UTF16 = codecs.BOM_UTF16_LE + BASIC_RUNS.replace(",", "\t").encode("utf-16-le")

CASES = [
    # ---- runs table (CSV) read correctly --------------------------------------
    Case("csv-bom", _basic("\ufeff" + BASIC_RUNS), accept=_hardness(HARDNESS)),
    Case("csv-semicolon-decimal-comma",
         _basic(BASIC_RUNS.replace(",", ";").replace("18.5", "18,5")
                .replace("24.5", "24,5")), accept=_accept_units_free),
    Case("tsv-tabs", _basic(BASIC_RUNS.replace(",", "\t"), _study("runs.csv", "runs.tsv"),
                            "runs.tsv"), accept=_hardness(HARDNESS)),
    Case("csv-utf16-unicode-text", _basic(UTF16), accept=_hardness(HARDNESS)),
    Case("csv-cp1252-accented-level",
         _basic(BASIC_RUNS.replace("rice syrup", "r\u00eds").encode("cp1252"),
                _study("rice syrup", "r\u00eds")),
         accept=lambda s: list(s.runs["binder"][:2]) == ["r\u00eds", "r\u00eds"]),
    Case("csv-spaces-around-names", _basic(_runs("run,protein,binder,hardness",
                                                 " run , protein ,binder,  hardness ")),
         accept=_hardness(HARDNESS)),
    Case("csv-unicode-name-nfd-vs-nfc",
         _basic(BASIC_RUNS.replace("protein", NFC), BASIC_STUDY.replace('"protein"',
                                                                       f'"{NFD}"')),
         accept=_accept_nfd),
    Case("csv-blank-rows", _basic(BASIC_RUNS.replace("\n3,", "\n\n3,")
                                  .replace("run,", "\nrun,", 1)), accept=_accept_blank_rows),
    Case("csv-factor-never-changes",
         _basic(BASIC_RUNS.replace(",30,", ",20,").replace(",25,", ",20,")),
         accept=_accept_constant_factor),
    Case("csv-one-blank-response", _basic(_runs("27.0", "")), accept=_accept_one_blank),
    # ---- runs table (CSV) refused in one line ---------------------------------
    Case("csv-repeated-header", _basic(_runs("\n3,", "\nrun,protein,binder,hardness\n3,")),
         error=r"^runs\.csv, row 4: this row repeats the column names"),
    Case("csv-merged-title-row", _basic("Factors,,,Responses\n" + BASIC_RUNS),
         error=r"^runs\.csv, row 2: the column names seem to be in this row"),
    Case("csv-units-in-cell", _basic(_runs("18.5", "12 N")),
         error=r"^runs\.csv, row 2, column 'hardness': expected a number, found '12 N': "
               r"type the number only"),
    Case("csv-empty-file", _basic(""), error=r"^runs\.csv: the table is empty"),
    Case("csv-header-only", _basic("run,protein,binder,hardness\n"),
         error=r"^runs\.csv: the table has a header but no runs"),
    Case("csv-nan", _basic(_runs("27.0", "NaN")),
         error=r"^runs\.csv, row 3, column 'hardness': expected a number, found 'NaN'"),
    Case("csv-inf", _basic(_runs("27.0", "inf")),
         error=r"^runs\.csv, row 3, column 'hardness': expected a number, found 'inf'"),
    Case("csv-overflow", _basic(_runs("27.0", "1e400")),
         error=r"^runs\.csv, row 3, column 'hardness': expected a finite number"),
    Case("csv-response-all-blank",
         _basic("\n".join(line.rsplit(",", 1)[0] + ("," if i else ",hardness")
                          for i, line in enumerate(BASIC_RUNS.splitlines())) + "\n"),
         error=r"^runs\.csv, column 'hardness': every cell is blank"),
    Case("csv-duplicate-columns", _basic(_runs("binder,hardness", "binder,protein")),
         error=r"^runs\.csv, row 1, column 'protein': the column name appears twice"),
    Case("csv-is-binary", _basic(bytes(range(256)) * 8),
         error=r"^runs\.csv: this does not look like a text table"),
    Case("csv-ragged-row", _basic(_runs("18.5", "18.5,,7")),
         error=r"^runs\.csv, row 2: the row has more cells than the header has names"),
    Case("csv-level-typo", _basic(_runs("3,20,date paste", "3,20,Date Paste")),
         error=r"^runs\.csv, row 4, column 'binder': found 'Date Paste', expected one of"),
    Case("csv-blank-factor", _basic(_runs("2,30,", "2,,")),
         error=r"^runs\.csv, row 3, column 'protein': blank factor setting"),
    Case("csv-duplicate-run-id", _basic(_runs("\n3,", "\n2,")),
         error=r"^runs\.csv, rows 3 and 4, column 'protein': run '2' has two settings "
               r"\(30 and 20\)"),
    Case("csv-decimal-comma-with-comma-separator",
         _basic(_runs("18.5", '"18,5"')),
         error=r"^runs\.csv, row 2, column 'hardness': expected a number, found '18,5': "
               r"use a decimal point"),
    Case("csv-wrong-kind-ods", _basic(BASIC_RUNS, _study("runs.csv", "runs.ods"), "runs.ods"),
         error=r"^runs\.ods: cannot read '\.ods' files"),
    Case("csv-missing-file", {"study.toml": BASIC_STUDY},
         error=r"runs\.csv: file not found"),
    Case("data-is-a-folder", {"study.toml": _study('data = "runs.csv"', 'data = "runs"')},
         dirs=("runs",), error=r"runs: that is a folder, not a data file"),
    # built when the case runs, not held in memory by the test module
    Case("csv-huge", _basic(lambda: b"run,protein,binder,hardness\n"
                            + b"1,20,rice syrup,18.5\n" * (MAX_TABLE_BYTES // 21 + 1)),
         error=r"^runs\.csv: the file is larger than 50 MB"),
    # ---- runs table (Excel) ----------------------------------------------------
    Case("xlsx-read", _basic(_xlsx(XROWS), XSTUDY, "runs.xlsx"), accept=_hardness(HARDNESS)),
    Case("xlsx-empty-sheet", _basic(_xlsx([]), XSTUDY, "runs.xlsx"),
         error=r"^runs\.xlsx: the table is empty"),
    Case("xlsx-no-such-sheet",
         _basic(_xlsx(XROWS), _study('data = "runs.xlsx"', 'data = "runs.xlsx"\n'
                                     'sheet = "Data"', XSTUDY), "runs.xlsx"),
         error=r"^runs\.xlsx: no sheet named 'Data'; the workbook has \['runs'\]"),
    Case("xlsx-sheet-number-out-of-range",
         _basic(_xlsx(XROWS), _study('data = "runs.xlsx"', 'data = "runs.xlsx"\nsheet = 3',
                                     XSTUDY), "runs.xlsx"),
         error=r"^runs\.xlsx: no sheet number 3: the workbook has 1 sheet"),
    Case("xlsx-formula-without-value",
         _basic(_xlsx(_with_row([1, 20, "rice syrup", "=B2*0.9"])), XSTUDY, "runs.xlsx"),
         error=r"^runs\.xlsx, row 2, column 'hardness': the cell holds the formula "
               r"'=B2\*0\.9' but no computed value"),
    Case("xlsx-date-in-number-cell",
         _basic(_xlsx(_with_row([1, 20, "rice syrup", "2024-03-01"])), XSTUDY, "runs.xlsx"),
         error=r"^runs\.xlsx, row 2, column 'hardness': expected a number, found "
               r"'2024-03-01'"),
    Case("xlsx-error-value",
         _basic(_xlsx(_with_row([1, 20, "rice syrup", "#DIV/0!"])), XSTUDY, "runs.xlsx"),
         error=r"^runs\.xlsx, row 2, column 'hardness': expected a number, found '#DIV/0!'"),
    Case("xlsx-title-row", _basic(_xlsx([["Snack bar trial, March"]] + XROWS), XSTUDY,
                                  "runs.xlsx"),
         error=r"^runs\.xlsx, row 2: the column names seem to be in this row"),
    Case("xlsx-that-is-really-csv", _basic(BASIC_RUNS, XSTUDY, "runs.xlsx"),
         error=r"^runs\.xlsx: cannot open it as an Excel workbook"),
    # ---- study file --------------------------------------------------------------
    Case("toml-bom", _basic(study="\ufeff" + BASIC_STUDY), accept=_hardness(HARDNESS)),
    Case("toml-syntax", _basic(study="[study\nname = 'x'\n"),
         error=r"^study\.toml: not a valid study file \(.*line 1.*\): check quotes"),
    Case("toml-binary", _basic(study=bytes(range(256))),
         error=r"^study\.toml: the study file is not UTF-8 text"),
    Case("toml-number-as-text", _basic(study=_study("low = 20", 'low = "20"')),
         error=r"^study\.toml: \[\[factors\]\] 'protein' low must be a number, found '20'"),
    Case("toml-low-above-high", _basic(study=_study("high = 30", "high = 10")),
         error=r"^study\.toml: \[\[factors\]\] 'protein': low \(20\) is not below high "
               r"\(10\): did you swap them\?"),
    Case("toml-key-typo", _basic(study=_study("upper = 35", "uper = 35")),
         error=r"unknown key 'uper' \(did you mean 'upper'\?\)"),
    Case("toml-negative-seed", _basic(study=_study('name = "bars"', 'name = "bars"\nseed = -3')),
         error=r"^study\.toml: \[study\] seed must be a whole number, 0 or more, found -3"),
    Case("toml-same-name-twice", _basic(study=_study('name = "binder"', 'name = "protein"')),
         error=r"the name 'protein' is used twice among factors and responses"),
    Case("toml-name-with-operator", _basic(study=_study('name = "binder"', 'name = "a*b"')),
         error=r"name 'a\*b' contains one of"),
    Case("toml-empty", _basic(study=""), error=r"^study\.toml: no factors"),
    Case("toml-rule-is-not-python",
         _basic(study=BASIC_STUDY + '[[constraints]]\nrule = "__import__(\'os\') <= 1"\n'),
         error=r"'__import__' is not a factor of the study"),
    Case("toml-huge", _basic(study="# " + "x" * MAX_STUDY_BYTES + "\n" + BASIC_STUDY),
         error=r"^study\.toml: the file is larger than 1 MB"),
    Case("toml-is-a-folder", {"runs.csv": BASIC_RUNS}, argv=("check", "{dir}/study.toml"),
         dirs=("study.toml",), error=r"study\.toml: that is a folder, not a study file"),
    Case("toml-missing", {}, error=r"study\.toml: study file not found"),
    # ---- storage and panel tables ------------------------------------------------
    Case("derived-read", _derived(), accept=_accept_derived),
    Case("storage-semicolons", _derived(storage=STORAGE.replace(",", ";")),
         accept=_accept_derived),
    Case("storage-units-in-cell", _derived(storage=STORAGE.replace("R1,4,hardness,12",
                                                                   "R1,4,hardness,12 N")),
         error=r"^storage\.csv, row 3, column 'value': expected a number, found '12 N'"),
    Case("storage-negative-time", _derived(storage=STORAGE.replace("R2,4,", "R2,-4,")),
         error=r"^storage\.csv, row 5, column 'week': negative storage time"),
    Case("storage-repeated-header",
         _derived(storage=STORAGE.replace("R3,0,", "run,week,property,value\nR3,0,")),
         error=r"^storage\.csv, row 6: this row repeats the column names"),
    Case("storage-unknown-run", _derived(storage=STORAGE.replace("R4,0,", "R9,0,")),
         error=r"^storage\.csv, row 8, column 'run': run 'R9' is not in the runs table"),
    Case("panel-decimal-comma", _derived(panel=PANEL.replace(",", ";")
                                         .replace("R1;A1;liking;7", "R1;A1;liking;7,5")),
         accept=_accept_panel_comma),
    Case("panel-score-outside-scale", _derived(panel=PANEL.replace("R2,A2,liking,6",
                                                                   "R2,A2,liking,60")),
         error=r"^panel\.csv, row 7, column 'score': \w+ score 60 is outside its scale 1 to 9"),
    Case("panel-same-score-twice", _derived(panel=PANEL.replace("R2,A1,", "R1,A1,")),
         error=r"^panel\.csv, row 3, column 'assessor': assessor 'A1' scored 'liking' "
               r"of run 'R1' again \(first at row 2\)"),
    Case("panel-header-case", _derived(panel=PANEL.replace("score", "Score")),
         error=r"^panel\.csv: no column 'score' in the panel table"),
    # ---- command-line arguments ------------------------------------------------
    Case("cli-unknown-option", _basic(), argv=("check", "{study}", "--bogus"),
         error=r"^unrecognized arguments: --bogus: see 'tradeoff --help'"),
    Case("cli-unknown-command", _basic(), argv=("best", "{study}"),
         error=r"^argument COMMAND: invalid choice: 'best'"),
    Case("cli-top-zero", _basic(), argv=("optimize", "{study}", "--top", "0"),
         error=r"^argument --top: expected a whole number, 1 or more, found 0: see 'tradeoff optimize "),
    Case("cli-seed-negative", _basic(), argv=("optimize", "{study}", "--seed", "-1"),
         error=r"^argument --seed: expected a whole number, 0 or more, found -1"),
    Case("cli-seed-text", _basic(), argv=("report", "{study}", "--seed", "x", "--out",
                                          "{dir}/r.html"),
         error=r"^argument --seed: expected a whole number, found 'x'"),
    Case("cli-plan-without-out", _basic(), argv=("plan", "{study}"),
         error=r"^the following arguments are required: --out"),
    Case("cli-plan-out-kind", _basic(), argv=("plan", "{study}", "--out", "{dir}/p.txt"),
         error=r"^p\.txt: a run sheet is written as \.csv or \.xlsx"),
    Case("cli-plan-out-missing-folder", _basic(),
         argv=("plan", "{study}", "--out", "{dir}/no/p.csv"),
         error=r"no/p\.csv: the folder .*no does not exist"),
    Case("cli-plan-over-the-data", _basic(), argv=("plan", "{study}", "--out", "{dir}/runs.csv"),
         error=r"^runs\.csv is the study's data file, which already exists"),
    Case("cli-plan-out-is-a-folder", _basic(), dirs=("sheet.csv",),
         argv=("plan", "{study}", "--out", "{dir}/sheet.csv"),
         error=r"sheet\.csv: that is a folder: give a file name"),
    Case("cli-plan-over-an-unreadable-sheet",
         {**_basic(), "old.csv": "run,hardness\n1,18\nrun,hardness\n2,19\n"},
         argv=("plan", "{study}", "--out", "{dir}/old.csv"),
         error=r"^old\.csv already exists and cannot be read as a run sheet"),
    Case("cli-plan-infinite-effect", _basic(),
         argv=("plan", "{study}", "--effect", "inf", "--sd", "1", "--out", "{dir}/p.csv"),
         error=r"^the effect size to detect must be above 0 and finite, found inf"),
    Case("cli-report-kind", _basic(), argv=("report", "{study}", "--out", "{dir}/r.pdf"),
         error=r"^r\.pdf: a report is written as \.html"),
    Case("cli-fit-unknown-response", _basic(),
         argv=("fit", "{study}", "--response", "hardnes"),
         error=r"^no response named 'hardnes' \(did you mean 'hardness'\?\)"),
    Case("cli-confirm-without-runs", _basic(), argv=("confirm", "{study}"),
         error=r"^study\.toml: the study lists no confirmation runs"),
    Case("cli-app-port", _basic(), argv=("app", "{study}", "--port", "80"),
         error=r"^argument --port: expected a port number from 1024 to 65535"),
]


def _write(folder: Path, case: Case) -> dict[str, str]:
    for name in case.dirs:
        (folder / name).mkdir()
    for name, content in case.files.items():
        content = content() if callable(content) else content
        data = content.encode("utf-8") if isinstance(content, str) else content
        (folder / name).write_bytes(data)
    return _hashes(folder)


def _hashes(folder: Path) -> dict[str, str]:
    return {p.name: hashlib.sha256(p.read_bytes()).hexdigest()
            for p in folder.iterdir() if p.is_file()}


def test_there_are_at_least_forty_cases():
    assert len(CASES) >= 40
    assert len({c.id for c in CASES}) == len(CASES)


@pytest.mark.parametrize("case", CASES, ids=[c.id for c in CASES])
def test_malformed_input(case, tmp_path, capsys, monkeypatch):
    monkeypatch.setattr("os.execv", lambda *a: case.execv.append(a))
    before = _write(tmp_path, case)
    argv = [a.format(study=tmp_path / "study.toml", dir=tmp_path) for a in case.argv]
    status = cli.main(argv)
    out, err = capsys.readouterr()
    assert "Traceback" not in err + out
    if case.error is not None:
        assert status == 2, out
        assert err.startswith("error: ") and err.endswith("\n")
        line = err[len("error: "):-1]
        assert "\n" not in line, err
        assert re.search(case.error, line), line
    else:
        assert status == 0, err
        study = load_study(tmp_path / "study.toml")
        if case.accept is not None:
            assert case.accept(study) is not False
    # the input files are byte-for-byte as they were, and nothing was added
    # beside them except what the command was asked to write
    after = _hashes(tmp_path)
    assert {k: after[k] for k in before} == before
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]
    assert case.execv == []


def test_the_installed_command_prints_one_line_and_no_traceback(tmp_path):
    # The real entry point, in a separate process: a units-in-cell mistake.
    (tmp_path / "study.toml").write_text(BASIC_STUDY)
    (tmp_path / "runs.csv").write_text(_runs("18.5", "12 N"))
    exe = Path(sys.executable).with_name("tradeoff")
    done = subprocess.run([str(exe), "check", str(tmp_path / "study.toml")],
                          capture_output=True, text=True, timeout=120)
    assert done.returncode == 2
    assert done.stderr.count("\n") == 1 and "Traceback" not in done.stderr
    assert done.stderr.startswith("error: runs.csv, row 2, column 'hardness': expected "
                                  "a number, found '12 N'")


# --------------------------------------------------------------------------
# Front-end uploads: the library functions the workbench calls


UPLOAD_CASES = [
    ("upload-oversized-data",
     lambda: study_from_files({"s.toml": BASIC_STUDY.encode(),
                               "runs.csv": b"x" * (MAX_TABLE_BYTES + 1)}),
     r"^runs\.csv: the file is 50\.0 MB, more than the 50 MB allowed for a data file"),
    ("upload-oversized-study",
     lambda: study_from_files({"s.toml": b"#" * (MAX_STUDY_BYTES + 1),
                               "runs.csv": BASIC_RUNS.encode()}),
     r"^s\.toml: the file is 1\.0 MB, more than the 1 MB allowed for a study file"),
    ("upload-xlsx-that-is-binary",
     lambda: study_from_files({"s.toml": XSTUDY.encode(), "runs.xlsx": bytes(range(256))}),
     r"^runs\.xlsx: cannot open it as an Excel workbook"),
    # a bare table is read as the new-study form drafts it
    ("upload-empty-table", lambda: guess_draft("bars.csv", b"\n\n"),
     r"^bars\.csv: the table is empty"),
    ("upload-repeated-header",
     lambda: guess_draft("bars.csv", _runs("\n3,", "\nrun,protein,binder,hardness\n3,")
                         .encode()),
     r"^bars\.csv, row 4: this row repeats the column names"),
]


@pytest.mark.parametrize("call, message", [c[1:] for c in UPLOAD_CASES],
                         ids=[c[0] for c in UPLOAD_CASES])
def test_upload_errors_are_one_line(call, message):
    with pytest.raises(TradeoffError, match=message) as info:
        call()
    assert "\n" not in str(info.value)


# A bare table whose columns are then declared on the new-study form: what stops
# the drafted study is listed, one line each (draft_problems lists, never raises).
UPLOAD_DRAFT_CASES = [
    # the guess leaves a column with text as notes; declared a response, its first
    # cell that is not a number is named by row and column
    ("upload-units-in-a-response", _runs("27.0", "27 N"), {"hardness": "response"},
     r"^bars\.csv, row 3, column 'hardness': expected a number, found '27 N': type the "
     r"number only; units belong in the study file$"),
    ("upload-factor-never-changes",
     BASIC_RUNS.replace(",30,", ",20,").replace(",25,", ",20,"), {"protein": "factor"},
     r"^'protein': its lowest and highest setting are both 20: a factor must be varied "
     r"to be studied"),
]


@pytest.mark.parametrize("runs, roles, message", [c[1:] for c in UPLOAD_DRAFT_CASES],
                         ids=[c[0] for c in UPLOAD_DRAFT_CASES])
def test_upload_draft_problems_are_one_line(runs, roles, message):
    data = runs.encode()
    draft = guess_draft("bars.csv", data)
    for column, role in roles.items():
        draft = with_column(draft, column, role=role, levels=None)
    (problem,) = draft_problems(draft, data)
    assert re.search(message, problem) and "\n" not in problem


def test_upload_semicolon_table_is_read_like_the_comma_one():
    comma = guess_draft("a.csv", BASIC_RUNS.encode())
    semi_bytes = BASIC_RUNS.replace(",", ";").replace("18.5", "18,5").encode()
    semi = guess_draft("b.csv", semi_bytes)
    assert semi == replace(comma, name="b", data="b.csv")
    assert [c.role for c in comma.columns] == ["run", "factor", "factor", "response"]
    # the decimal comma is read as the point: the hardness read equals the comma table's
    study = study_from_dict(draft_spec(semi), source=Path("b.toml"), data_bytes=semi_bytes)
    assert list(study.runs["hardness"]) == HARDNESS


def test_workbench_upload_of_a_damaged_workbook_keeps_the_open_study():
    from importlib.resources import files

    from streamlit.testing.v1 import AppTest

    at = AppTest.from_file(str(files("tradeoff_ui") / "app.py"), default_timeout=30)
    at.run()
    header = [h.value for h in at.header]
    at.file_uploader[0].set_value([("s.toml", XSTUDY.encode(), "application/toml"),
                                   ("runs.xlsx", BASIC_RUNS.encode(), "application/xlsx")]
                                  ).run()
    assert not at.exception
    errors = [e.value for e in at.error]
    assert any("runs.xlsx: cannot open it as an Excel workbook" in e for e in errors)
    assert [h.value for h in at.header] == header  # the demo study stays open
    # a bare table goes on to 'New study', and the open study stays
    data = _runs("27.0", "27 N").encode()
    at.file_uploader[0].set_value(("bars.csv", data, "text/csv")).run()
    assert not at.exception
    assert any("bars.csv is a data table without a study file" in i.value for i in at.info)
    assert [h.value for h in at.header] == header
    # there, a unit typed into a response cell is named by row and column
    from tradeoff.study.draft import draft_problems, guess_draft, with_column

    draft = with_column(guess_draft("bars.csv", data), "hardness", role="response")
    assert any("bars.csv, row 3, column 'hardness': expected a number, found '27 N'" in p
               for p in draft_problems(draft, data))
