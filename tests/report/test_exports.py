"""Bytes of every workbench download, read back with independent readers."""
from __future__ import annotations

import io
import tomllib
from dataclasses import replace

import openpyxl
import pandas as pd
import pytest

from tradeoff import load_study
from tradeoff.report.exports import (CAUTION, results_csv_bytes,
                              solutions_table, study_toml_bytes)
from tradeoff.inputs import with_response_model
from tradeoff.model.study_fit import fit_study
from tradeoff.report.workbook import build_workbook
from tradeoff.search.search import optimize
from tradeoff.derive.load import study_from_dict

from conftest import DEMO


@pytest.fixture(scope="module")
def solved():
    study = load_study(DEMO)
    study = study.with_goal("liking", replace(study.response("liking").goal, weight=3.0))
    study = with_response_model(study, "cost", ("protein", "glycerol", "binder"))
    result = optimize(study, top=3, seed=0, fit=fit_study(study), draws=2000)
    return study, result


def test_study_file_keeps_the_users_targets_and_models(solved):
    study, _ = solved
    data = study_toml_bytes(study)
    spec = tomllib.loads(data.decode("utf-8"))
    liking = next(r for r in spec["responses"] if r["name"] == "liking")
    assert liking["weight"] == 3.0 and liking["goal"] == "maximize"
    cost = next(r for r in spec["responses"] if r["name"] == "cost")
    assert cost["terms"] == ["protein", "glycerol", "binder"]
    again = study_from_dict(spec, source=DEMO)  # opens again next to the demo data
    assert again.response("liking").goal == study.response("liking").goal
    assert again.model_for(again.response("cost")) == ("protein", "glycerol", "binder")
    pd.testing.assert_frame_equal(again.runs, study.runs)


def test_results_csv_is_the_tidy_table(solved):
    _, result = solved
    frame = pd.read_csv(io.BytesIO(results_csv_bytes(result)))
    expected = result.table()
    assert list(frame.columns) == list(expected.columns)
    assert len(frame) == len(result.solutions) * 5
    assert frame["predicted"].to_numpy() == pytest.approx(expected["predicted"].to_numpy())
    assert frame.loc[0, "D"] == pytest.approx(result.best.desirability)


def test_results_workbook_is_the_report_workbook_with_the_users_goals(solved):
    # One workbook builder serves the workbench and `tradeoff report --out x.xlsx`.
    study, result = solved
    book = build_workbook(study, result=result)
    sol = pd.read_excel(io.BytesIO(book), sheet_name="solutions")
    assert sol["D"].iloc[0] == pytest.approx(result.best.desirability, abs=1e-6)
    goals = pd.read_excel(io.BytesIO(book), sheet_name="goals")
    liking = goals[goals["name"] == "liking"]
    assert float(liking["weight"].iloc[0]) == 3.0


def test_solutions_table_columns(solved):
    study, result = solved
    table = solutions_table(result)
    assert list(table.columns) == ["solution", "rank", "D", "chance_all",
                                   *study.factor_names, "out_of_limits", "notes"]
    assert (table["D"].diff().dropna() <= 1e-12).all()  # best first by D
