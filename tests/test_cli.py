"""The command line: summaries, exit status 2 with one error line, no traceback."""
from __future__ import annotations

import json
import subprocess
import sys

from tradeoff.cli import main

from conftest import BASIC_STUDY, DEMO


def run(*args):
    return subprocess.run([sys.executable, "-m", "tradeoff.cli", *map(str, args)],
                          capture_output=True, text=True)


def test_version_and_help():
    out = run("--version")
    assert out.returncode == 0 and out.stdout.startswith("tradeoff ")
    assert "check" in run("--help").stdout


def test_check_demo_prints_summary(capsys):
    assert main(["check", str(DEMO)]) == 0
    text = capsys.readouterr().out
    assert "Runs:  20" in text
    assert "protein" in text and "coded -1 .. +1" in text


def test_check_json(capsys):
    assert main(["check", str(DEMO), "--json"]) == 0
    summary = json.loads(capsys.readouterr().out)
    assert summary["runs"] == 20
    binder = next(f for f in summary["factors"] if f["name"] == "binder")
    assert binder["levels"] == {"rice syrup": 10, "date paste": 10}


def test_bad_study_exits_2_with_one_line(write_study):
    path = write_study(BASIC_STUDY.replace("low = 20", "low = 40"))
    out = run("check", path)
    assert out.returncode == 2
    assert out.stderr.startswith("error: study.toml: [[factors]] 'protein': low (40)")
    assert len(out.stderr.strip().splitlines()) == 1
    assert "Traceback" not in out.stderr


def test_bad_data_exits_2(write_study):
    out = run("check", write_study(runs="run,protein,binder,hardness\n1,20,x,3\n"))
    assert out.returncode == 2
    assert "row 2, column 'binder'" in out.stderr and "Traceback" not in out.stderr
