"""Runs corrected by hand: checked as the command loads them, written only on save."""
from __future__ import annotations

import shutil

import pytest

from tradeoff import DataError, load_study
from tradeoff.derive.edited_runs import (check_edited, run_changes, runs_as_laid_out,
                                         save_edited)
from tradeoff.study.demo import demo_study_path

SNACK = demo_study_path()


@pytest.fixture
def snack(tmp_path):
    for path in SNACK.parent.glob("snack_bar*"):
        shutil.copy(path, tmp_path / path.name)
    return tmp_path / "snack_bar.toml"


def test_unchanged_table_loads_the_same_runs(snack):
    study = load_study(snack)
    table = runs_as_laid_out(study)
    assert list(table.index)[:2] == [2, 3]  # file rows: the header is row 1
    again = check_edited(study, table)
    assert again.runs[study.factor_names + study.response_names].equals(
        study.runs[study.factor_names + study.response_names])
    assert run_changes(table, table).empty


def test_a_corrected_cell_and_an_added_run(snack):
    study = load_study(snack)
    table = runs_as_laid_out(study)
    first = table.index[0]
    old = table.loc[first, "liking"]
    table.loc[first, "liking"] = "6.5"
    new = table.iloc[[0]].copy()
    new.index = [999]
    new.loc[999, "run"] = "R99"
    edited = __import__("pandas").concat([table, new])
    changes = run_changes(runs_as_laid_out(study), edited)
    assert changes.iloc[0][["row", "column", "before", "after", "change"]].tolist() == [
        2, "liking", old, "6.5", "changed"]
    assert changes.iloc[-1]["change"] == "added"
    before = (snack.parent / "snack_bar_runs.csv").read_bytes()
    loaded = check_edited(study, edited)  # checks, writes nothing
    assert (snack.parent / "snack_bar_runs.csv").read_bytes() == before
    assert len(loaded.runs) == len(study.runs) + 1
    save_edited(study, edited)
    saved = load_study(snack)
    assert saved.runs["liking"].iloc[0] == 6.5 and len(saved.runs) == len(study.runs) + 1


def test_a_wrong_cell_names_row_and_column_and_nothing_is_written(snack):
    study = load_study(snack)
    table = runs_as_laid_out(study)
    table.loc[table.index[2], "protein"] = "twenty"
    before = (snack.parent / "snack_bar_runs.csv").read_bytes()
    with pytest.raises(DataError, match=r"row 4, column 'protein'"):
        save_edited(study, table)
    assert (snack.parent / "snack_bar_runs.csv").read_bytes() == before
