"""Confirmation runs typed in are checked as ``tradeoff confirm`` checks them."""
from __future__ import annotations

import json
import shutil

import pandas as pd
import pytest

from tradeoff import DataError, load_study
from tradeoff.cli import main
from tradeoff.confirm.check import check_confirmations
from tradeoff.confirm.entered import (entered_study, entered_table, not_measured, typed_line,
                                      save_entered, study_file_addition)
from tradeoff.study.demo import demo_study_path

SNACK = demo_study_path()


@pytest.fixture
def snack(tmp_path):
    for name in ("snack_bar.toml", "snack_bar_runs.csv", "snack_bar_panel.csv"):
        if (SNACK.parent / name).exists():
            shutil.copy(SNACK.parent / name, tmp_path / name)
    return tmp_path / "snack_bar.toml"


TYPED = pd.DataFrame({
    "run": ["K1", "K2", "K3", None],
    "protein": [27, 27, 22, None], "glycerol": [6, 6, 9, None],
    "binder": ["date paste", "date paste", "rice syrup", None],
    "mix_temp": [45, 45, 55, None],
    "hardness_fresh": [17.4, 18.1, None, None], "liking": [7.2, None, 6.1, None]})


def test_typed_runs_give_the_command_numbers(snack, capsys):
    study = load_study(snack)
    changed, files = entered_study(study, TYPED)
    shown = check_confirmations(changed, files=files)
    before = snack.read_text()
    save_entered(study, TYPED)
    after = snack.read_text()
    assert after.startswith(before) and after.endswith(study_file_addition(study))
    # the reference: the command on the saved study
    capsys.readouterr()
    assert main(["confirm", str(snack), "--json"]) == 0
    told = json.loads(capsys.readouterr().out)
    mine = json.loads(json.dumps(shown.to_dict()))
    assert mine["checks"] == told["checks"] and mine["verdicts"] == told["verdicts"]
    assert len(mine["checks"]) >= 3  # two settings groups, measured responses
    # saved once, it is named once: saving again adds nothing to the study file
    assert study_file_addition(load_study(snack)) == ""


def test_a_wrong_cell_is_named_and_nothing_is_written(snack):
    study = load_study(snack)
    bad = TYPED.copy()
    bad.loc[1, "binder"] = "gelatin"
    before = snack.read_text()
    with pytest.raises(DataError, match=r"row 3.*binder.*gelatin"):
        save_entered(study, bad)
    assert snack.read_text() == before
    assert not (snack.parent / "snack_bar_confirmations.csv").exists()


def test_batches_not_measured_yet_are_left_out_and_named():
    """A batch sheet's second batch, not made yet, does not stop the first being
    compared (common practice: results come in one batch at a time)."""
    study = load_study(demo_study_path())
    r = study.response_names
    row = {"run": "C1", **{f.name: (f.levels[0] if f.is_categorical else f.low)
                           for f in study.factors}}
    typed = pd.DataFrame([{**row, r[0]: 1.0}, {**row, "run": "C2"}, {}],
                         columns=["run", *study.factor_names, *r]).astype(object)
    data = entered_table(study, typed).decode("utf-8").splitlines()
    assert len(data) == 2 and data[1].startswith("C1,")
    assert not_measured(study, typed) == ["C2"]


def test_a_row_of_the_saved_table_is_traced_to_its_typed_line():
    """The saved table leaves out rows not measured yet: its row 3 (header row 1)
    is the typed table's third line when the second waits for its result."""
    study = load_study(demo_study_path())
    r = study.response_names
    row = {f.name: (f.levels[0] if f.is_categorical else f.low) for f in study.factors}
    typed = pd.DataFrame([{"run": "C1", **row, r[0]: 1.0}, {"run": "C2", **row},
                          {"run": "C3", **row, r[0]: 2.0}],
                         columns=["run", *study.factor_names, *r]).astype(object)
    lines = entered_table(study, typed).decode("utf-8").splitlines()
    assert lines[2].startswith("C3,")  # row 3 of the file, header first
    assert typed_line(study, typed, 3) == (3, "C3")
    assert typed_line(study, typed, 2) == (1, "C1")
    assert typed_line(study, typed, 4) is None
