"""Loading and validating study files: every error a lab user can make.

The rules checked here are common practice for two-level designs (coded -1 at
low, +1 at high) and for Derringer-Suich goals (lower < target < upper).
"""
from __future__ import annotations

import numpy as np
import pytest

import tradeoff
from tradeoff import DataError, StudyError, load_study
from tradeoff.study.writer import study_to_dict

from conftest import BASIC_RUNS, BASIC_STUDY, DEMO


def test_basic_study_loads(write_study):
    study = load_study(write_study())
    assert study.factor_names == ["protein", "binder"]
    assert study.response_names == ["hardness"]
    assert list(study.runs["run"]) == ["1", "2", "3", "4", "5"]
    # rows keep the spreadsheet numbering: header is row 1
    assert list(study.runs.index) == [2, 3, 4, 5, 6]
    assert study.response("hardness").goal.kind == "minimize"
    assert study.factor("binder").levels == ("rice syrup", "date paste")


def test_demo_study_loads_clean():
    study = load_study(DEMO)
    assert len(study.runs) == 20
    assert study.notes == ()
    assert len(study.factors) == 4 and len(study.responses) == 5


@pytest.mark.parametrize("edit, message", [
    (("low = 20", "low = 40"), r"low \(40\) is not below high \(30\) for|low \(40\) is not below high \(30\): did you swap them"),
    (('goal = "minimize"', 'goal = "minimise"'), r"goal = 'minimise' is not a goal I know.*did you mean 'minimize'"),
    (("lower = 15", "lower = 40"), r"lower \(40\) is not below upper \(35\): did you swap them"),
    (('goal = "minimize"', 'goal = "target"\ntarget = 50'), r"target \(50\) must lie strictly between lower \(15\) and upper \(35\)"),
    (('unit = "N"', 'unit = "N"\nweigth = 2'), r"unknown key 'weigth' \(did you mean 'weight'\?\)"),
    (('name = "bars"', 'name = "bars"\nmodle = "main"'), r"unknown key 'modle' \(did you mean 'model'\?\)"),
    (('name = "binder"', 'name = "protein"'), r"the name 'protein' is used twice"),
    (('levels = ["rice syrup", "date paste"]', 'levels = ["rice syrup"]'), r"needs 2 to 12 levels"),
    (('levels = ["rice syrup", "date paste"]', 'levels = ["oat", "rice", "oat"]'),
     r"level 'oat' is named twice"),
    (('levels = ["rice syrup", "date paste"]', 'levels = [' + ', '.join(f'"l{i}"' for i in range(13)) + ']'),
     r"needs 2 to 12 levels"),
    (('goal = "minimize"', 'goal = "maximize"\nshape = -1'), r"shape must be above 0"),
    (("high = 30", 'high = "thirty"'), r"high must be a number, found 'thirty'"),
    (('data = "runs.csv"', 'data = "runs.csv"\nmodel = "cubic"'), r"model = 'cubic' is not a model I know"),
    (('goal = "minimize"', 'goal = "maximize"\ntarget = 20'), r"target is only used with goal = 'target'"),
    (('levels = ["rice syrup", "date paste"]',
      'levels = ["rice syrup", "date paste"]\nhold = "date pasta"'),
     r"hold = 'date pasta' is not one of the levels \['rice syrup', 'date paste'\] "
     r"\(did you mean 'date paste'\?\)"),
    (("high = 30", 'high = 30\nhold = "20"'), r"hold names a level of a categorical factor"),
])
def test_study_file_errors(write_study, edit, message):
    text = BASIC_STUDY.replace(*edit)
    assert text != BASIC_STUDY
    with pytest.raises(StudyError, match=message):
        load_study(write_study(text))


def test_missing_goal_limit(write_study):
    with pytest.raises(StudyError, match=r"goal = 'minimize' needs upper = <number>"):
        load_study(write_study(BASIC_STUDY.replace("upper = 35\n", "")))


def test_broken_toml_names_file(write_study):
    with pytest.raises(StudyError, match=r"study.toml: not a valid study file"):
        load_study(write_study(BASIC_STUDY.replace("low = 20", "low = ")))


def test_missing_study_file(tmp_path):
    with pytest.raises(StudyError, match="study file not found"):
        load_study(tmp_path / "nope.toml")


@pytest.mark.parametrize("runs, message", [
    (BASIC_RUNS.replace("hardness", "hardnes"),
     r"runs.csv: no column 'hardness' for response 'hardness'.*did you mean 'hardnes'"),
    (BASIC_RUNS.replace("2,30,rice", "2,3O,rice"),
     r"runs.csv, row 3, column 'protein': expected a number, found '3O'"),
    (BASIC_RUNS.replace("4,30,date paste,24.5", "4,30,date paste,24.5 N"),
     r"runs.csv, row 5, column 'hardness': expected a number, found '24.5 N': type the number only"),
    (BASIC_RUNS.replace("3,20,date paste", "3,20,date pasta"),
     r"runs.csv, row 4, column 'binder': found 'date pasta', expected one of the levels"),
    (BASIC_RUNS.replace("run,protein,binder,hardness", "run,protein,binder,hardness,protein"),
     r"runs.csv, row 1, column 'protein': the column name appears twice"),
    (BASIC_RUNS.replace("5,25", "4,25"),
     # a repeated id is a second piece of that batch: its settings must agree
     r"runs.csv, rows 5 and 6, column 'protein': run '4' has two settings \(30 and 25\)"),
    ("run,protein,binder,hardness\n", r"runs.csv: the table has a header but no runs"),
    ("", r"runs.csv: the table is empty"),
    (BASIC_RUNS.replace("18.5", "").replace("27.0", "").replace("16.0", "")
     .replace("24.5", "").replace("21.0", ""),
     r"runs.csv, column 'hardness': every cell is blank"),
    (BASIC_RUNS.replace("2,30,rice syrup", "2,,rice syrup"),
     r"runs.csv, row 3, column 'protein': blank factor setting"),
    (BASIC_RUNS.replace("18.5", "inf"),
     r"runs.csv, row 2, column 'hardness': expected a number, found 'inf'"),
])
def test_data_file_errors(write_study, runs, message):
    with pytest.raises(DataError, match=message):
        load_study(write_study(runs=runs))


def test_missing_data_file(write_study):
    with pytest.raises(DataError, match=r"runs.csv: file not found"):
        load_study(write_study(runs=None))


def test_blank_response_cell_drops_run_for_that_response_only(write_study):
    study = load_study(write_study(runs=BASIC_RUNS.replace("24.5", "")))
    assert np.isnan(study.runs["hardness"].iloc[3])
    assert any("run(s) 4 blank, left out of its model only" in n for n in study.notes)


def test_runs_outside_the_box_are_reported(write_study):
    study = load_study(write_study(runs=BASIC_RUNS.replace("5,25", "5,35")))
    assert any("lie outside 20..30 (rows 6)" in n for n in study.notes)


def test_input_files_unchanged(write_study):
    path = write_study()
    before = path.read_bytes(), (path.parent / "runs.csv").read_bytes()
    load_study(path)
    assert (path.read_bytes(), (path.parent / "runs.csv").read_bytes()) == before


def test_hold_is_read_and_written_back(write_study):
    text = BASIC_STUDY.replace('levels = ["rice syrup", "date paste"]',
                               'levels = ["rice syrup", "date paste"]\nhold = "date paste"')
    study = load_study(write_study(text))
    assert study.factor("binder").hold == "date paste"
    assert study_to_dict(study)["factors"][1]["hold"] == "date paste"


def test_round_trip_through_dict(write_study):
    import tomllib

    import tomli_w

    study = load_study(write_study())
    again = tradeoff.study_from_dict(tomllib.loads(tomli_w.dumps(study_to_dict(study))),
                                     source=study.source)
    assert again.factors == study.factors and again.responses == study.responses


def test_with_goal_replaces_one_goal(write_study):
    study = load_study(write_study())
    goal = tradeoff.Goal(kind="maximize", lower=10, upper=20, weight=3)
    changed = study.with_goal("hardness", goal)
    assert changed.response("hardness").goal == goal
    assert study.response("hardness").goal.kind == "minimize"


def test_a_label_and_its_unit_take_one_pair_of_brackets():
    # common practice: "Liking (9-point hedonic) (points)" reads as a slip
    from tradeoff.study.spec import with_unit

    assert with_unit("Hardness", "N") == "Hardness (N)"
    assert with_unit("Liking (9-point hedonic)", "points") == "Liking (9-point hedonic, points)"
    assert with_unit("Cost", "") == "Cost"
