"""Drafting a study file from a data table: guessed roles, TOML text, problems listed."""
from __future__ import annotations

import csv
import io
import tomllib
from dataclasses import replace
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings, strategies as st

from tradeoff import load_study
from tradeoff.study.draft import (Draft, DraftColumn, draft_from_dict, draft_problems,
                                  draft_spec, draft_text, draft_to_dict, guess_draft,
                                  with_column)
from tradeoff.study.reader import build_study

from conftest import DEMO

ROOT = Path(__file__).resolve().parents[2]
FLOUR_CSV = ROOT / "demo_data" / "flour_blend_runs.csv"
SNACK_CSV = DEMO.parent / "snack_bar_runs.csv"


def _csv(rows: list[dict]) -> bytes:
    out = io.StringIO()
    writer = csv.DictWriter(out, fieldnames=list(rows[0]))
    writer.writeheader()
    writer.writerows(rows)
    return out.getvalue().encode()


def _generated_blend(seed: int, n: int = 12) -> list[dict]:
    """A generated test table: three parts of 100 (rounded to 0.1) and a measured value."""
    rng = np.random.default_rng(seed)
    rows = []
    for i in range(n):
        a, b = np.round(rng.uniform(10, 45, 2), 1)
        rows.append({"run": f"R{i + 1}", "oat": a, "barley": b,
                     "wheat": round(100 - a - b, 1), "speed": [40, 60][i % 2],
                     "firmness": round(float(rng.normal(5, 1)), 2)})
    return rows


def test_parts_that_add_up_are_components_not_responses():
    # independent computation: the rows' sums straight from the csv module
    data = FLOUR_CSV.read_bytes()
    rows = list(csv.DictReader(io.StringIO(data.decode())))
    flours = ["rice_flour", "sorghum_flour", "tapioca_starch"]
    sums = {round(sum(float(r[c]) for c in flours), 9) for r in rows}
    draft = guess_draft(FLOUR_CSV.name, data)
    roles = {c.column: c.role for c in draft.columns}
    assert sums == {100.0} and draft.total == 100.0
    assert [c for c, r in roles.items() if r == "component"] == flours
    assert roles["specific_volume"] == roles["crumb_hardness"] == "response"
    assert roles["bake_temp"] == roles["hydrocolloid"] == "factor"
    assert roles["run"] == "run" and roles["point"] == "notes"
    hydro = draft.column("hydrocolloid")
    assert sorted(hydro.levels) == sorted({r["hydrocolloid"] for r in rows})
    temps = [float(r["bake_temp"]) for r in rows]
    assert (draft.column("bake_temp").low, draft.column("bake_temp").high) == (
        min(temps), max(temps))


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_generated_blend_found_with_its_total(seed):
    rows = _generated_blend(seed)
    draft = guess_draft("blend.csv", _csv(rows))
    assert [c.column for c in draft.of_role("component")] == ["oat", "barley", "wheat"]
    assert draft.total == pytest.approx(100.0)
    assert [c.column for c in draft.of_role("response")] == ["firmness"]
    assert draft_problems(draft, _csv(rows)) == []


def test_numbers_that_do_not_add_up_stay_responses():
    rows = _generated_blend(4)
    for i, r in enumerate(rows):
        r["wheat"] = r["wheat"] + 3 * i  # the total now drifts from row to row
    draft = guess_draft("blend.csv", _csv(rows))
    assert draft.of_role("component") == [] and draft.total is None


def test_a_run_sheet_with_blank_responses_is_read_as_one():
    # a run sheet as the plan command leaves it: settings filled, results still blank
    data = b"run,temp,time,yield\nR1,150,10,\nR2,170,10,\nR3,150,20,\nR4,170,20,\n"
    draft = guess_draft("sheet.csv", data)
    assert {c.column: c.role for c in draft.columns} == {
        "run": "run", "temp": "factor", "time": "factor", "yield": "response"}
    assert draft.column("yield").low is None


def test_text_is_the_study_spec_and_the_reader_takes_it():
    draft = guess_draft(FLOUR_CSV.name, FLOUR_CSV.read_bytes())
    spec = tomllib.loads(draft_text(draft))
    assert spec == draft_spec(draft)
    study = build_study(spec, source=ROOT / "demo_data" / "drafted.toml")
    assert [f.name for f in study.factors] == [
        "rice_flour", "sorghum_flour", "tapioca_starch", "bake_temp", "hydrocolloid"]


def test_flour_draft_declared_like_the_shipped_file_loads_the_same_study(tmp_path):
    """Typed as the shipped demo's file declares it, the draft loads the same study."""
    shipped = tomllib.loads((ROOT / "demo_data" / "flour_blend.toml").read_text())
    draft = guess_draft(FLOUR_CSV.name, FLOUR_CSV.read_bytes())
    draft.model = shipped["study"]["model"]
    for table in shipped["components"] + shipped["factors"] + shipped["responses"]:
        keys = {k: v for k, v in table.items() if k != "name"}
        if "levels" in keys:
            keys["levels"] = list(keys["levels"])
        draft = with_column(draft, table["name"], **keys)
    (tmp_path / FLOUR_CSV.name).write_bytes(FLOUR_CSV.read_bytes())
    (tmp_path / "drafted.toml").write_text(draft_text(draft))
    ours = load_study(tmp_path / "drafted.toml")
    theirs = load_study(ROOT / "demo_data" / "flour_blend.toml")
    assert ours.factors == theirs.factors and ours.responses == theirs.responses
    assert ours.mixture == theirs.mixture and ours.model == theirs.model
    assert ours.runs.equals(theirs.runs)


# -- the snack bar table: a two-level design with centre points and a text factor ----

def test_snack_bar_table_roles_are_guessed():
    data = SNACK_CSV.read_bytes()
    frame = pd.read_csv(io.BytesIO(data))  # independent reading of the same table
    draft = guess_draft(SNACK_CSV.name, data)
    roles = {c.column: c.role for c in draft.columns}
    # Factors of a two-level design with centre points take 3 settings (common practice).
    assert [c for c, r in roles.items() if r == "factor"] == \
        ["protein", "glycerol", "binder", "mix_temp"]
    assert all(frame[c].nunique() <= 3 for c in ["protein", "glycerol", "mix_temp"])
    assert [c for c, r in roles.items() if r == "response"] == \
        ["hardness_fresh", "hardness_12w", "water_activity", "liking", "cost"]
    assert roles["run"] == "run" and roles["std_order"] == "notes"
    # a text factor's levels in the order the table first lists them
    assert draft.column("binder").levels == list(frame["binder"].unique())
    assert sorted(draft.column("binder").levels) == ["date paste", "rice syrup"]


def test_drafted_study_spans_the_tested_settings(tmp_path):
    data = SNACK_CSV.read_bytes()
    frame = pd.read_csv(io.BytesIO(data))  # independent reading of the same table
    draft = guess_draft("runs.csv", data)
    for name in ["glycerol", "hardness_fresh", "hardness_12w", "water_activity", "cost"]:
        draft = with_column(draft, name, role="notes")
    factors = {f["name"]: f for f in draft_spec(draft)["factors"]}
    assert list(factors) == ["protein", "binder", "mix_temp"]
    assert factors["protein"]["low"] == frame["protein"].min()
    assert factors["protein"]["high"] == frame["protein"].max()
    assert factors["mix_temp"]["low"] == frame["mix_temp"].min()
    assert factors["mix_temp"]["high"] == frame["mix_temp"].max()
    assert sorted(factors["binder"]["levels"]) == sorted(frame["binder"].unique())
    assert draft_problems(draft, data) == []
    (tmp_path / "runs.csv").write_bytes(data)
    (tmp_path / "runs.toml").write_text(draft_text(draft))
    study = load_study(tmp_path / "runs.toml")
    assert np.allclose(study.runs["liking"], frame["liking"])
    assert study.response("liking").goal.kind == "none"


def test_what_a_column_cannot_be_is_said_in_one_line():
    data = SNACK_CSV.read_bytes()
    draft = guess_draft(SNACK_CSV.name, data)
    # nothing set: named before anything is read
    unset = draft
    for col in draft.of_role("factor"):
        unset = with_column(unset, col.column, role="notes")
    assert draft_problems(unset, data) == [
        "no factor or component: mark at least one column as what you set"]
    # a column is one thing: the form gives each one role; a damaged session file
    # holding a column twice meets the reader's check
    twice = replace(draft, columns=[*draft.columns,
                                    replace(draft.column("protein"), role="response")])
    assert draft_problems(twice, data) == [
        "study.toml: the name 'protein' is used twice among factors and responses: "
        "each needs its own name"]
    # a text column as a response: the first cell that is not a number, row and column
    text = with_column(draft, "binder", role="response", levels=None)
    first = pd.read_csv(io.BytesIO(data))["binder"].iloc[0]
    assert draft_problems(text, data) == [
        f"snack_bar_runs.csv, row 2, column 'binder': expected a number, found "
        f"'{first}': type a number or leave the cell blank"]
    # run ids as a factor: far more than the 12 levels a text factor may have
    (problem,) = draft_problems(with_column(draft, "run", role="factor"), data)
    assert problem.startswith("study.toml: [[factors]] 'run': a categorical factor needs "
                              "2 to 12 levels") and "'R20'" in problem


def test_a_factor_held_at_one_setting_is_named():
    data = b"run,protein,hardness\n1,20,18.5\n2,20,27.0\n3,20,16.0\n"
    draft = with_column(guess_draft("bars.csv", data), "protein", role="factor")
    assert draft_problems(draft, data) == [
        "'protein': its lowest and highest setting are both 20: a factor must be varied "
        "to be studied (type the range tested, or mark the column as notes)"]


def test_missing_things_are_listed_all_at_once():
    draft = Draft(name="x", data="x.csv", columns=[
        DraftColumn("a", role="component", low=0, high=1),
        DraftColumn("b", role="factor"),
        DraftColumn("y", role="notes"),
        DraftColumn("r1", role="run"), DraftColumn("r2", role="run")])
    problems = draft_problems(draft, None)
    assert any("only one component" in p for p in problems)
    assert any("total is blank" in p for p in problems)
    assert any("no response" in p for p in problems)
    assert any("2 columns marked as run id" in p for p in problems)
    assert any("'b': type its lowest and highest" in p for p in problems)


def test_problems_are_the_command_lines_messages(tmp_path):
    data = FLOUR_CSV.read_bytes()
    draft = with_column(guess_draft(FLOUR_CSV.name, data), "bake_temp", low=210.0)
    (tmp_path / FLOUR_CSV.name).write_bytes(data)
    (tmp_path / "study.toml").write_text(draft_text(draft))
    with pytest.raises(Exception) as cli:
        load_study(tmp_path / "study.toml")
    assert draft_problems(draft, data, study_file="study.toml") == [str(cli.value)]


def test_goal_limits_reach_the_file():
    data = FLOUR_CSV.read_bytes()
    draft = with_column(guess_draft(FLOUR_CSV.name, data), "crust_lightness",
                        goal="target", lower=52.0, target=58.0, upper=64.0, weight=2.0)
    table = draft_spec(draft)["responses"][2]
    assert table == {"name": "crust_lightness", "goal": "target", "lower": 52.0,
                     "target": 58.0, "upper": 64.0, "weight": 2.0}
    half = with_column(draft, "crust_lightness", target=None)
    assert any("needs its limits" in p for p in draft_problems(half, data))


def test_dict_round_trip():
    draft = guess_draft(FLOUR_CSV.name, FLOUR_CSV.read_bytes())
    assert draft_from_dict(draft_to_dict(draft)) == draft


@settings(max_examples=60, derandomize=True)
@given(label=st.text(min_size=1, max_size=30), unit=st.text(max_size=8))
def test_any_label_survives_the_text(label, unit):
    # tomllib is the reference reader: whatever a user types comes back unchanged
    draft = Draft(name=label, data="x.csv", columns=[
        DraftColumn("a", role="factor", low=0.5, high=1e-7, label=label, unit=unit)])
    spec = tomllib.loads(draft_text(draft))
    assert spec["study"]["name"] == label
    assert spec["factors"][0].get("label", "a") == (label if label != "a" else "a")
    assert spec["factors"][0].get("unit", "") == unit
    assert (spec["factors"][0]["low"], spec["factors"][0]["high"]) == (0.5, 1e-7)
