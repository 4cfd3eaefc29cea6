"""Nothing is lost, nothing from a user's file runs, the workbench stays on this computer.

- Every save goes through ``tradeoff.study.files.write_atomic`` (a temporary file in
  the same folder, then ``os.replace``): an interrupted save leaves the old
  file as it was and no temporary file behind.
- No ``eval``, ``exec``, ``compile``, ``__import__``, pickle, marshal, shelve
  or YAML loading anywhere in the library or the workbench (read from the
  source with Python's own parser, ``ast``); rules among factors are read by
  the library's small grammar, which refuses anything else.
- ``tradeoff app`` serves on 127.0.0.1 only and caps uploads at the library's
  table size limit.
"""
from __future__ import annotations

import ast
import hashlib
import os
from pathlib import Path

import pandas as pd
import pytest

from tradeoff import cli
from tradeoff.study.constraints import parse_rule
from tradeoff.errors import PlanError, StudyError, TradeoffError
from tradeoff.study.files import write_atomic
from tradeoff.study.intake import MAX_TABLE_BYTES
from tradeoff.report.write import write_report
from tradeoff.plan.runsheet import write_run_sheet
from tradeoff.study.spec import Factor
from tradeoff.derive.load import load_study

from conftest import DEMO

REPO = Path(__file__).resolve().parents[1]
SOURCES = sorted((REPO / "core").glob("*.py")) + sorted((REPO / "ui").rglob("*.py"))


def _digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


# --------------------------------------------------------------------------
# Atomic writes


def test_write_atomic_writes_and_replaces(tmp_path):
    target = tmp_path / "sheet.csv"
    write_atomic(target, "a,b\n1,2\n")
    assert target.read_bytes() == b"a,b\n1,2\n"
    write_atomic(target, b"new")
    assert target.read_bytes() == b"new"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["sheet.csv"]


@pytest.mark.parametrize("failure", [OSError(28, "No space left on device"),
                                     KeyboardInterrupt()])
def test_an_interrupted_write_keeps_the_old_file(tmp_path, monkeypatch, failure):
    target = tmp_path / "report.html"
    target.write_bytes(b"the old report")

    def fail(fd):  # the content is written, but the save stops before the rename
        raise failure

    monkeypatch.setattr("tradeoff.study.files.os.fsync", fail)
    expected = TradeoffError if isinstance(failure, OSError) else KeyboardInterrupt
    with pytest.raises(expected) as info:
        write_atomic(target, b"x" * 100_000)
    if expected is TradeoffError:
        assert str(info.value).startswith(f"{target}: cannot write the file (No space "
                                          "left on device)")
    assert target.read_bytes() == b"the old report"
    assert [p.name for p in tmp_path.iterdir()] == ["report.html"]


def test_write_atomic_refuses_a_folder_and_a_missing_folder(tmp_path):
    (tmp_path / "out.csv").mkdir()
    with pytest.raises(PlanError, match=r"out\.csv: that is a folder: give a file name"):
        write_atomic(tmp_path / "out.csv", b"x", error=PlanError)
    with pytest.raises(TradeoffError, match=r"the folder .*missing does not exist"):
        write_atomic(tmp_path / "missing" / "out.csv", b"x")


def test_an_interrupted_run_sheet_keeps_the_old_sheet(tmp_path, monkeypatch):
    sheet = tmp_path / "plan.xlsx"
    write_run_sheet(pd.DataFrame({"run": ["R1"], "protein": [20.0]}), sheet)
    before = _digest(sheet)

    def fail(src, dst):
        raise OSError(13, "Permission denied")

    monkeypatch.setattr("tradeoff.study.files.os.replace", fail)
    with pytest.raises(PlanError, match=r"plan\.xlsx: cannot write the file \(Permission "
                                        r"denied\)"):
        write_run_sheet(pd.DataFrame({"run": ["R1", "R2"], "protein": [20.0, 30.0]}),
                        sheet)
    assert _digest(sheet) == before
    assert [p.name for p in tmp_path.iterdir()] == ["plan.xlsx"]


def test_an_interrupted_report_keeps_the_old_report(tmp_path, monkeypatch):
    out = tmp_path / "report.html"
    out.write_bytes(b"<p>old</p>")
    study = load_study(DEMO)
    inputs = {p: _digest(p) for p in DEMO.parent.iterdir() if p.is_file()}

    def stop(fd):
        raise KeyboardInterrupt

    monkeypatch.setattr("tradeoff.study.files.os.fsync", stop)
    with pytest.raises(KeyboardInterrupt):
        write_report(study, out, top=1)
    assert out.read_bytes() == b"<p>old</p>"
    assert [p.name for p in tmp_path.iterdir()] == ["report.html"]
    assert {p: _digest(p) for p in inputs} == inputs  # the study's own files untouched


def test_every_save_goes_through_the_one_helper():
    """No module but core/files.py writes files or renames temporary files itself."""
    writers = {"os.replace", "os.rename", "tempfile.mkstemp",
               "tempfile.NamedTemporaryFile", "shutil.copy", "shutil.move"}
    found = []
    for path in SOURCES:
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if not isinstance(node, ast.Call):
                continue
            name = ast.unparse(node.func)
            if path.name != "files.py" and name in writers:
                found.append(f"{path.name}: {name}")
            # pandas and pathlib writers given a path (to a buffer is fine)
            if name.endswith((".write_text", ".write_bytes")):
                found.append(f"{path.name}: {name}")
            if name.endswith((".to_csv", ".to_excel")) and node.args and not (
                    isinstance(node.args[0], ast.Name)
                    and node.args[0].id in ("writer", "buffer")):
                found.append(f"{path.name}: {name}({ast.unparse(node.args[0])})")
            if name == "open" and len(node.args) > 1 and "w" in ast.unparse(node.args[1]):
                found.append(f"{path.name}: open for writing")
    assert found == []


# --------------------------------------------------------------------------
# Nothing from a user's file is executed


def test_no_eval_exec_or_unpickling_anywhere():
    banned_calls = {"eval", "exec", "compile", "__import__", "execfile", "input"}
    banned_modules = {"pickle", "cPickle", "marshal", "shelve", "yaml", "dill", "joblib"}
    banned_attrs = {"read_pickle", "eval", "query", "system", "popen", "load"}
    found = []
    for path in SOURCES:
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.Call):
                func = node.func
                if isinstance(func, ast.Name) and func.id in banned_calls:
                    found.append(f"{path.name}: {func.id}()")
                if isinstance(func, ast.Attribute) and func.attr in banned_attrs:
                    # json.load is the one 'load' allowed (it cannot run code)
                    if not (func.attr == "load" and ast.unparse(func.value) == "json"):
                        found.append(f"{path.name}: .{func.attr}()")
                for kw in node.keywords:
                    if kw.arg in ("allow_pickle", "shell") and ast.unparse(kw.value) != "False":
                        found.append(f"{path.name}: {kw.arg}=")
            elif isinstance(node, ast.Import):
                found += [f"{path.name}: import {a.name}" for a in node.names
                          if a.name.split(".")[0] in banned_modules]
            elif isinstance(node, ast.ImportFrom) and node.module:
                if node.module.split(".")[0] in banned_modules:
                    found.append(f"{path.name}: from {node.module}")
    assert found == []


FACTORS = (Factor(name="protein", label="protein", low=20, high=30),
           Factor(name="glycerol", label="glycerol", low=4, high=10))


@pytest.mark.parametrize("rule, message", [
    ("__import__('os').system('x') <= 1", r"'__import__' is not a factor of the study"),
    ("protein.__class__ <= 1", r"unexpected character '\.' at position 8"),
    ("(lambda: 1)() <= 2", r"'lambda' is not a factor of the study"),
    ("protein if 1 else 2 <= 3", r"'if' is not a factor of the study"),
    ("protein ** 2 <= 600", r"powers are not allowed: a rule must be linear"),
    ("open('x') <= 1", r"'open' is not a factor of the study"),
])
def test_rules_go_through_the_small_grammar(rule, message):
    with pytest.raises(StudyError, match=message) as info:
        parse_rule(rule, FACTORS)
    assert "\n" not in str(info.value)


def test_a_rule_is_read_not_run():
    rule = parse_rule("protein + 2*glycerol <= 36", FACTORS)
    assert rule.coefficients == {"protein": 1.0, "glycerol": 2.0} and rule.bound == 36


# --------------------------------------------------------------------------
# The workbench listens on this computer only, and caps uploads


def test_the_workbench_listens_on_this_computer_only(monkeypatch, capsys):
    calls = []
    monkeypatch.setattr("os.execv", lambda exe, argv: calls.append(argv))
    assert cli.main(["app"]) == 0
    (argv,), = [calls]
    options = dict(zip(argv[5:-2:2], argv[6:-2:2]))
    assert options["--server.address"] == "127.0.0.1"
    assert "0.0.0.0" not in argv
    # uploads above the library's table limit are refused by the browser page
    assert int(options["--server.maxUploadSize"]) * 2**20 == MAX_TABLE_BYTES
    assert "http://127.0.0.1:8501" in capsys.readouterr().out


def test_nothing_in_the_source_opens_the_server_to_the_network():
    for path in SOURCES:
        text = path.read_text(encoding="utf-8")
        assert "0.0.0.0" not in text, path.name
        assert "enableCORS" not in text and "enableXsrfProtection" not in text, path.name


def test_the_size_limits_are_checked_before_reading(tmp_path, monkeypatch):
    # a file over the limit is refused from its size alone, never read
    big = tmp_path / "runs.csv"
    with big.open("wb") as handle:
        handle.truncate(MAX_TABLE_BYTES + 1)  # a sparse file: no time to write it
    from tradeoff.errors import DataError
    from tradeoff.study.intake import read_table

    monkeypatch.setattr(Path, "read_bytes", lambda self: pytest.fail("file was read"))
    with pytest.raises(DataError, match=r"^runs\.csv: the file is larger than 50 MB"):
        read_table(big)
    assert os.path.getsize(big) == MAX_TABLE_BYTES + 1


def test_saved_files_get_the_usual_permissions(tmp_path):
    # A report saved for colleagues must not be private to its writer: the mode
    # is what a plain open() would give (0666 less the umask; POSIX, common practice).
    import os
    import stat

    from tradeoff.study.files import write_atomic

    mask = os.umask(0o022)
    try:
        path = write_atomic(tmp_path / "report.html", "<p>hi</p>")
    finally:
        os.umask(mask)
    assert stat.S_IMODE(path.stat().st_mode) == 0o644
