"""Hard-to-change factors and the whole-plot column: reading, checking, refusing."""
from __future__ import annotations

import hashlib

import pytest

from tradeoff.cli import main
from tradeoff.derive.load import load_study
from tradeoff.errors import DataError, StudyError
from tradeoff.report.summary import study_summary, summary_text

STUDY = """\
[study]
name = "loaves"
data = "runs.csv"
whole_plot = "dough"

[[factors]]
name = "recipe"
levels = ["rye", "spelt"]
hard_to_change = true

[[factors]]
name = "oven"
low = 180
high = 220

[[responses]]
name = "volume"
goal = "maximize"
lower = 400
upper = 600
"""

# a dough of one recipe, divided and baked at two oven temperatures; run 7 is
# measured in two pieces (two loaves of one run), dough d4 has a single run
RUNS = """\
run,dough,recipe,oven,volume
1,d1,rye,180,420
2,d1,rye,220,455
3,d2,spelt,180,510
4,d2,spelt,220,560
5,d3,rye,180,431
6,d3,rye,220,470
7,d5,spelt,180,520
7,d5,spelt,180,524
8,d5,spelt,220,575
9,d4,rye,200,450
"""


def test_keys_are_read_and_the_check_reports_the_whole_plots(write_study):
    study = load_study(write_study(STUDY, RUNS))
    assert study.whole_plot == "dough"
    assert [f.hard_to_change for f in study.factors] == [True, False]
    # pieces still fold into their run; the run keeps its whole plot
    assert list(study.runs["dough"]) == ["d1", "d1", "d2", "d2", "d3", "d3", "d5", "d5",
                                         "d4"]
    summary = study_summary(study)
    wp = summary["whole_plots"]
    assert wp["count"] == 5
    assert wp["runs"] == {"d1": 2, "d2": 2, "d3": 2, "d5": 2, "d4": 1}
    assert wp["single"] == ["d4"]
    assert any("'d4'" in w and "single run" in w for w in summary["warnings"])
    text = summary_text(summary)
    assert "Whole plots (column 'dough'): 5 whole plots, 1 to 2 runs each" in text
    # the whole-plot column is used, so it is not listed as an unused column
    assert not any(u["column"] == "dough" for u in summary.get("unused", []))


def _cli_refuses(write_study, capsys, study: str, runs: str, words: str):
    path = write_study(study, runs)
    before = {p.name: hashlib.sha256(p.read_bytes()).hexdigest()
              for p in path.parent.iterdir()}
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err.strip()
    assert "Traceback" not in err and len(err.splitlines()) == 1
    assert words in err
    after = {p.name: hashlib.sha256(p.read_bytes()).hexdigest()
             for p in path.parent.iterdir()}
    assert after == before  # no file is changed
    return err


def test_missing_whole_plot_column(write_study, capsys):
    err = _cli_refuses(write_study, capsys, STUDY.replace('"dough"', '"batch"'), RUNS,
                       "no column 'batch' for the whole plots")
    assert "[study] whole_plot" in err


def test_hard_to_change_factor_varying_within_a_whole_plot(write_study, capsys):
    bad = RUNS.replace("6,d3,rye,220,470", "6,d3,spelt,220,470")
    err = _cli_refuses(write_study, capsys, STUDY, bad, "whole plot 'd3'")
    assert "rows 6 and 7" in err and "'recipe'" in err and "hard-to-change" in err


def test_every_run_its_own_whole_plot(write_study, capsys):
    runs = "\n".join(line if i == 0 else line.replace(",d", f",x{i}d", 1)
                     for i, line in enumerate(RUNS.splitlines())) + "\n"
    # the two pieces of run 7 must stay in one whole plot
    runs = runs.replace("x8d5", "x7d5")
    _cli_refuses(write_study, capsys, STUDY, runs, "this is no split plot")


def test_pieces_of_one_run_in_two_whole_plots(write_study):
    bad = RUNS.replace("7,d5,spelt,180,524", "7,d2,spelt,180,524")
    with pytest.raises(DataError, match="run '7' has two whole plots"):
        load_study(write_study(STUDY, bad))


def test_hard_to_change_without_a_whole_plot_column(write_study):
    with pytest.raises(StudyError, match="hard to change but the study names no column"):
        load_study(write_study(STUDY.replace('whole_plot = "dough"\n', ""), RUNS))


def test_bad_keys(write_study):
    with pytest.raises(StudyError, match="hard_to_change must be true or false"):
        load_study(write_study(STUDY.replace("hard_to_change = true",
                                             'hard_to_change = "yes"'), RUNS))
    with pytest.raises(StudyError, match="is a factor or response"):
        load_study(write_study(STUDY.replace('whole_plot = "dough"',
                                             'whole_plot = "oven"'), RUNS))


def test_blank_whole_plot(write_study):
    with pytest.raises(DataError, match="row 4, column 'dough': blank whole plot"):
        load_study(write_study(STUDY, RUNS.replace("3,d2,", "3,,")))


def test_the_keys_travel_when_the_study_is_written_back(write_study):
    from tradeoff.study.writer import study_to_dict

    study = load_study(write_study(STUDY, RUNS))
    out = study_to_dict(study)
    assert out["study"]["whole_plot"] == "dough"
    assert [f.get("hard_to_change", False) for f in out["factors"]] == [True, False]
