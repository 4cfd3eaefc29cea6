"""Studies built from uploaded bytes, goals typed in widgets.

A bare table drafted into a study is tested in tests/study/test_draft.py.
"""
from __future__ import annotations

import pandas as pd
import pytest

from tradeoff import StudyError, load_study
from tradeoff.inputs import checked_goal, study_from_files, with_response_model

from conftest import DEMO

DEMO_FILES = {"snack_bar.toml": DEMO.read_bytes(),
              "snack_bar_runs.csv": (DEMO.parent / "snack_bar_runs.csv").read_bytes()}


def test_uploaded_demo_equals_the_demo_read_from_disk():
    uploaded = study_from_files(DEMO_FILES)
    on_disk = load_study(DEMO)
    assert uploaded.factor_names == on_disk.factor_names
    pd.testing.assert_frame_equal(uploaded.runs, on_disk.runs)
    assert uploaded.response("liking").goal == on_disk.response("liking").goal


def test_study_file_without_its_data_file_is_refused():
    with pytest.raises(StudyError, match="names its data 'snack_bar_runs.csv': upload"):
        study_from_files({"snack_bar.toml": DEMO_FILES["snack_bar.toml"],
                          "other.csv": b"a,b\n1,2\n"})


def test_two_study_files_are_refused():
    with pytest.raises(StudyError, match="expected one study file"):
        study_from_files({"a.toml": b"", "b.toml": b"", "r.csv": b"a\n1\n"})


def test_unknown_file_kind_is_refused():
    with pytest.raises(StudyError, match=r"cannot use \['notes.docx'\]"):
        study_from_files({**DEMO_FILES, "notes.docx": b"x"})


def test_broken_toml_is_refused_in_one_line():
    with pytest.raises(StudyError, match="not a valid study file") as info:
        study_from_files({"s.toml": b"[study\nname = 1", "r.csv": b"a\n1\n"})
    assert "\n" not in str(info.value)


def test_study_file_naming_no_data_takes_the_single_upload(tmp_path):
    spec = DEMO_FILES["snack_bar.toml"].replace(b'data = "snack_bar_runs.csv"', b"")
    study = study_from_files({"s.toml": spec, "x.csv": DEMO_FILES["snack_bar_runs.csv"]})
    assert len(study.runs) == 20


def test_checked_goal_keeps_what_the_kind_uses():
    goal = checked_goal("liking", kind="maximize", lower=6, upper=7.5, target=7.0,
                        weight=2)
    assert (goal.kind, goal.lower, goal.upper, goal.target, goal.weight) == \
        ("maximize", 6, 7.5, None, 2)


@pytest.mark.parametrize("values, message", [
    (dict(kind="maximize", lower=8, upper=7), r"lower \(8\) is not below upper \(7\)"),
    (dict(kind="target", lower=1, upper=3, target=5), r"target \(5\) must lie strictly"),
    (dict(kind="minimize", lower=1, upper=3, weight=0), "weight must be above 0"),
    (dict(kind="most", lower=1, upper=3), "'most' is not a goal I know"),
])
def test_checked_goal_refuses_what_a_study_file_would(values, message):
    with pytest.raises(StudyError, match=message):
        checked_goal("cost", **values)


def test_with_response_model():
    study = load_study(DEMO)
    changed = with_response_model(study, "liking", ("protein", "glycerol"))
    assert changed.model_for(changed.response("liking")) == ("protein", "glycerol")
    assert changed.model_for(changed.response("cost")) == "interactions"
    back = with_response_model(changed, "liking", "main")
    assert back.model_for(back.response("liking")) == "main"
    with pytest.raises(StudyError, match="model 'cubic' is not one I know"):
        with_response_model(study, "liking", "cubic")
    with pytest.raises(StudyError, match="needs at least one term"):
        with_response_model(study, "liking", ())


def test_uploaded_study_with_raw_storage_and_panel_tables_opens_like_the_files():
    # Every table a study names may come with the upload (runs, storage, panel):
    # the uploaded study derives the same responses as the one read from disk.
    from conftest import REPO

    from tradeoff import load_study
    from tradeoff.inputs import study_from_files

    folder = REPO / "demo_data"
    names = ["snack_bar_raw.toml", "snack_bar_runs.csv", "snack_bar_storage.csv",
             "snack_bar_panel.csv"]
    uploaded = study_from_files({n: (folder / n).read_bytes() for n in names})
    on_disk = load_study(folder / "snack_bar_raw.toml")
    for r in on_disk.responses:
        assert uploaded.runs[r.name].to_numpy() == pytest.approx(
            on_disk.runs[r.name].to_numpy(), nan_ok=True)


def test_uploaded_study_missing_its_storage_table_says_which_file():
    from conftest import REPO

    from tradeoff.inputs import study_from_files

    folder = REPO / "demo_data"
    names = ["snack_bar_raw.toml", "snack_bar_runs.csv", "snack_bar_panel.csv"]
    with pytest.raises(Exception, match=r"snack_bar_storage.csv: the study names this table but it "
                                         r"was not uploaded.*upload it together"):
        study_from_files({n: (folder / n).read_bytes() for n in names})
