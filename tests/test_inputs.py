"""Studies built from uploaded bytes, drafted from a bare table, goals typed in widgets."""
from __future__ import annotations

import io

import numpy as np
import pandas as pd
import pytest

from tradeoff import StudyError, load_study
from tradeoff.inputs import (checked_goal, draft_spec, study_from_files, table_columns,
                             with_response_model)
from tradeoff.derive.load import study_from_dict

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


def test_bare_table_column_roles():
    cols = table_columns("snack_bar_runs.csv", DEMO_FILES["snack_bar_runs.csv"])
    roles = dict(zip(cols["column"], cols["role"]))
    # Factors of a two-level design with centre points take 3 settings (common practice).
    assert [c for c, r in roles.items() if r == "factor"] == \
        ["protein", "glycerol", "binder", "mix_temp"]
    assert [c for c, r in roles.items() if r == "response"] == \
        ["hardness_fresh", "hardness_12w", "water_activity", "liking", "cost"]
    assert roles["run"] == "other" and roles["std_order"] == "other"
    binder = cols.set_index("column").at["binder", "levels"]
    assert binder == ["date paste", "rice syrup"]


def test_drafted_study_spans_the_tested_settings():
    data = DEMO_FILES["snack_bar_runs.csv"]
    spec = draft_spec("runs.csv", data, ["protein", "binder", "mix_temp"], ["liking"])
    frame = pd.read_csv(io.BytesIO(data))  # independent reading of the same table
    factors = {f["name"]: f for f in spec["factors"]}
    assert factors["protein"]["low"] == frame["protein"].min()
    assert factors["mix_temp"]["high"] == frame["mix_temp"].max()
    assert factors["binder"]["levels"] == sorted(frame["binder"].unique())
    study = study_from_dict(spec, source="runs.toml", data_bytes=data)
    assert np.allclose(study.runs["liking"], frame["liking"])
    assert study.response("liking").goal.kind == "none"


def test_draft_errors():
    data = DEMO_FILES["snack_bar_runs.csv"]
    with pytest.raises(StudyError, match="choose at least one factor"):
        draft_spec("r.csv", data, [], ["liking"])
    with pytest.raises(StudyError, match="chosen as factor and as response"):
        draft_spec("r.csv", data, ["protein"], ["protein"])
    with pytest.raises(StudyError, match="response column 'binder' holds text"):
        draft_spec("r.csv", data, ["protein"], ["binder"])
    with pytest.raises(StudyError, match="'run' holds 20 different words"):
        draft_spec("r.csv", data, ["run"], ["liking"])


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
