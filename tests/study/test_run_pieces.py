"""Several measurements of one batch in the runs table: rows sharing a run id, or
several columns of one row (``columns = [...]``), are pieces folded into the run mean."""
from __future__ import annotations

import numpy as np
import pytest

from tradeoff.cli import main
from tradeoff.derive.load import load_study
from tradeoff.errors import DataError, StudyError
from tradeoff.report.summary import study_summary

from conftest import BASIC_STUDY

# Three bars per batch; batch 5 and 6 are replicate runs at the centre. Row 9 has a
# blank bar, left out of batch 3's mean.
PIECE_RUNS = """\
run,protein,binder,hardness
1,20,rice syrup,18.0
1,20,rice syrup,19.0
1,20,rice syrup,20.0
2,30,rice syrup,27.0
2,30,rice syrup,26.0
2,30,rice syrup,28.0
3,20,date paste,16.0
3,20,date paste,
3,20,date paste,17.0
4,30,date paste,24.0
4,30,date paste,25.0
4,30,date paste,23.0
5,25,date paste,21.0
5,25,date paste,20.0
5,25,date paste,22.5
6,25,date paste,22.0
6,25,date paste,21.5
6,25,date paste,23.0
"""

WIDE_STUDY = BASIC_STUDY.replace('name = "hardness"\n',
                                 'name = "hardness"\ncolumns = ["bar_1", "bar_2", "bar_3"]\n')
WIDE_RUNS = """\
run,protein,binder,bar_1,bar_2,bar_3
1,20,rice syrup,18.0,19.0,20.0
2,30,rice syrup,27.0,26.0,28.0
3,20,date paste,16.0,,17.0
4,30,date paste,24.0,25.0,23.0
5,25,date paste,21.0,20.0,22.5
6,25,date paste,22.0,21.5,23.0
"""
# the run means, worked by hand: (18 + 19 + 20) / 3 = 19, ...; run 3 from two bars
MEANS = [19.0, 27.0, 16.5, 24.0, 21.166666666666668, 22.166666666666668]


def test_rows_sharing_a_run_id_are_pieces_of_one_run(write_study):
    study = load_study(write_study(runs=PIECE_RUNS))
    runs = study.runs
    assert list(runs["run"]) == ["1", "2", "3", "4", "5", "6"]
    # the run keeps its first row number, so messages still point at the file
    assert list(runs.index) == [2, 5, 8, 11, 14, 17]
    np.testing.assert_allclose(runs["hardness"], MEANS)
    assert list(runs["binder"]) == ["rice syrup"] * 2 + ["date paste"] * 4
    pieces = study.pieces
    assert len(pieces) == 17 and set(pieces["response"]) == {"hardness"}
    assert list(pieces.columns) == ["run", "response", "row", "column", "value"]
    assert list(pieces.loc[pieces["run"] == "3", "row"]) == [8, 10]
    assert any("6 run(s) measured in several pieces (17 pieces in all)" in n
               for n in study.notes)


def test_columns_under_a_response_give_the_same_run_means(write_study):
    study = load_study(write_study(WIDE_STUDY, WIDE_RUNS))
    np.testing.assert_allclose(study.runs["hardness"], MEANS)
    assert "bar_1" not in study.runs.columns  # pieces live in study.pieces
    assert sorted(set(study.pieces["column"])) == ["bar_1", "bar_2", "bar_3"]
    assert len(study.pieces) == 17


def test_a_study_without_pieces_has_none(write_study):
    assert load_study(write_study()).pieces is None


def test_check_reports_runs_with_pieces(write_study, capsys):
    path = write_study(runs=PIECE_RUNS)
    entry = study_summary(load_study(path))["responses"][0]
    assert entry["pieces"] == {"runs_with_several": 6, "pieces": 17, "most": 3, "fewest": 2}
    assert entry["measured"] == 6
    assert main(["check", str(path)]) == 0
    out = capsys.readouterr().out
    assert "pieces: 6 runs measured in several pieces (17 pieces, 2 to 3 each)" in out


@pytest.mark.parametrize("study, runs, error, message", [
    (BASIC_STUDY, PIECE_RUNS.replace("2,30,rice syrup,26.0", "2,20,rice syrup,26.0"),
     DataError, r"^runs\.csv, rows 5 and 6, column 'protein': run '2' has two settings "
                r"\(30 and 20\): rows with the same run id are pieces of one batch"),
    (BASIC_STUDY, PIECE_RUNS.replace("4,30,date paste,23.0", "4,30,rice syrup,23.0"),
     DataError, r"^runs\.csv, rows 11 and 13, column 'binder': run '4' has two settings "
                r"\('date paste' and 'rice syrup'\)"),
    (WIDE_STUDY, WIDE_RUNS.replace("bar_3", "bar3"),
     DataError, r"^runs\.csv: no column 'bar_3' for response 'hardness' \(listed in its "
                r"columns\).*did you mean 'bar3'"),
    (WIDE_STUDY, WIDE_RUNS.replace("bar_3\n", "bar_3,hardness\n"),
     DataError, r"^runs\.csv: response 'hardness' is a column of its own and also listed "
                r"in columns"),
    (BASIC_STUDY.replace('name = "hardness"\n', 'name = "hardness"\ncolumns = "bar_1"\n'),
     WIDE_RUNS, StudyError, r"^study\.toml: \[\[responses\]\] 'hardness': columns must "
                            r"list the data columns"),
])
def test_bad_pieces_are_one_line_errors(write_study, study, runs, error, message):
    with pytest.raises(error, match=message):
        load_study(write_study(study, runs))


def test_pieces_in_different_blocks_are_refused(write_study):
    runs = PIECE_RUNS.replace("run,protein,binder,hardness", "run,protein,binder,hardness,block")
    lines = runs.splitlines()
    lines = [lines[0]] + [f"{line},{'day2' if i == 2 else 'day' + str(1 + (i > 9))}"
                          for i, line in enumerate(lines[1:], start=1)]
    with pytest.raises(DataError, match=r"^runs\.csv, rows 2 and 3, column 'block': run "
                                        r"'1' has two blocks \('day1' and 'day2'\)"):
        load_study(write_study(runs="\n".join(lines) + "\n"))


def test_cli_exits_2_and_leaves_the_files_alone(write_study, capsys):
    bad = PIECE_RUNS.replace("2,30,rice syrup,26.0", "2,20,rice syrup,26.0")
    path = write_study(runs=bad)
    before = {p.name: p.read_bytes() for p in path.parent.iterdir()}
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: runs.csv, rows 5 and 6, column 'protein'")
    assert "Traceback" not in err and len(err.strip().splitlines()) == 1
    assert {p.name: p.read_bytes() for p in path.parent.iterdir()} == before
