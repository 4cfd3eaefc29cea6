"""The workbench's session file and saving choices back into a study file, comments kept."""
from __future__ import annotations

import tomllib
from dataclasses import replace
from pathlib import Path

import pytest

from tradeoff import load_study
from tradeoff.errors import StudyError
from tradeoff.study.session import read_session, session_text
from tradeoff.study.session_save import text_diff, updated_study_text
from tradeoff.study.spec import Goal

ROOT = Path(__file__).resolve().parents[2]
FLOUR = ROOT / "demo_data" / "flour_blend.toml"


def test_session_round_trip():
    goals = {"v": Goal("maximize", 2.0, 3.0, weight=2.5),
             "h": Goal("target", 4.0, 8.0, target=5.0, shape_below=0.5)}
    text = session_text(study={"kind": "path", "path": "/lab/x.toml"}, goals=goals,
                        models={"v": "quadratic", "h": ("A", "B", "A:B")},
                        reduce={"v"}, top=3, rank_by="chance", aim="production",
                        spread={"A": 1.5}, chosen=2, draft={"draft": {"name": "n"}})
    back = read_session(text, "x.session.json")
    assert back["goals"] == goals
    assert back["models"] == {"v": "quadratic", "h": ("A", "B", "A:B")}
    assert back["reduce"] == {"v"} and back["top"] == 3 and back["chosen"] == 2
    assert (back["rank_by"], back["aim"], back["spread"]) == ("chance", "production",
                                                              {"A": 1.5})
    assert back["draft"] == {"draft": {"name": "n"}}
    # the same session writes the same bytes (no needless rewrites)
    assert text == session_text(study={"kind": "path", "path": "/lab/x.toml"},
                                goals=dict(reversed(goals.items())),
                                models={"h": ("A", "B", "A:B"), "v": "quadratic"},
                                reduce=["v"], top=3, rank_by="chance", aim="production",
                                spread={"A": 1.5}, chosen=2,
                                draft={"draft": {"name": "n"}})


@pytest.mark.parametrize("text, match", [
    ("not json", "not a workbench session file"),
    ('{"kind": "other"}', "not a workbench session file"),
    ('{"kind": "tradeoff workbench session", "version": 7}', "version 7"),
    ('{"kind": "tradeoff workbench session", "version": 1, "study": {"kind": "x"}}',
     "where the study is"),
    ('{"kind": "tradeoff workbench session", "version": 1, "study": {"kind": "path"},'
     ' "draft": [1]}', "the study being drafted"),
    ('{"kind": "tradeoff workbench session", "version": 1, "study": {"kind": "path"},'
     ' "goals": {"v": {"goal": "maximize", "lower": 3, "upper": 2}}}', "did you swap"),
    ('{"kind": "tradeoff workbench session", "version": 1, "study": {"kind": "path"},'
     ' "models": {"v": "cubic"}}', "model of 'v'"),
    ('{"kind": "tradeoff workbench session", "version": 1, "study": {"kind": "path"},'
     ' "top": -1}', '"top" must be a whole number'),
])
def test_bad_session_files_say_so(text, match):
    with pytest.raises(StudyError, match=match):
        read_session(text, "x.session.json")


def test_saving_back_keeps_comments_and_changes_only_the_choices():
    original = FLOUR.read_text()
    study = load_study(FLOUR)
    volume = study.response("specific_volume")
    new = replace(volume, goal=replace(volume.goal, weight=3.0), model="quadratic")
    study = replace(study, responses=tuple(new if r.name == volume.name else r
                                           for r in study.responses))
    text = updated_study_text(original, study, FLOUR.name)
    # every comment line of the original is still there, in the same order
    comments = [line for line in original.splitlines() if "#" in line]
    assert [line for line in text.splitlines() if "#" in line] == comments
    # tomllib, the reference reader: only the two keys changed
    before, after = tomllib.loads(original), tomllib.loads(text)
    assert after["responses"][0] == {**before["responses"][0], "weight": 3,
                                     "model": "quadratic"}
    assert {k: v for k, v in after.items() if k != "responses"} == {
        k: v for k, v in before.items() if k != "responses"}
    assert after["responses"][1:] == before["responses"][1:]
    diff = text_diff(original, text, FLOUR.name)
    changed = [line for line in diff.splitlines()
               if line[:1] in "+-" and not line.startswith(("+++", "---"))]
    assert changed == ["+weight = 3", "+model = \"quadratic\""]


def test_unchanged_choices_write_the_file_unchanged():
    original = FLOUR.read_text()
    assert updated_study_text(original, load_study(FLOUR)) == original
    assert text_diff(original, original, "x") == ""


def test_a_removed_goal_leaves_the_file():
    original = FLOUR.read_text()
    study = load_study(FLOUR).with_goal("crumb_hardness", Goal())
    after = tomllib.loads(updated_study_text(original, study))
    assert after["responses"][1] == {"name": "crumb_hardness",
                                     "label": "Crumb hardness, day 1", "unit": "N"}


def test_pins_typed_tables_and_batch_choices_round_trip():
    import numpy as np
    import pandas as pd

    typed = pd.DataFrame({"run": ["C1", None], "temp": [np.float64(182.5), np.nan],
                          "flour": ["rice", "rice"], "volume": [pd.NA, np.int64(3)]}
                         ).astype(object)
    pins = {"S1": {"temp": np.float64(182.5), "flour": "rice", "time": 20.0,
                   "batches": np.int64(2)}}
    batch = {"size_g": 750.0, "step_g": 1.0, "batches": 2, "seed": 3, "left_out": [],
             "percent": ["temp"], "rest": "rest of the recipe"}
    text = session_text(study={"kind": "path", "path": "/lab/x.toml"}, goals={},
                        models={}, pins=pins, typed={"confirm": typed, "data": None},
                        batch=batch)
    back = read_session(text, "x.session.json")
    assert back["pins"] == {"S1": {"temp": 182.5, "flour": "rice", "time": 20.0,
                                   "batches": 2}}
    # whole floats stay floats (a recipe reads the same after a reload)
    assert {k: type(v) for k, v in back["pins"]["S1"].items()} == {
        "temp": float, "flour": str, "time": float, "batches": int}
    assert back["batch"] == batch
    # blanks of every kind come back as null; numbers as numbers
    assert back["typed"] == {"confirm": {"columns": ["run", "temp", "flour", "volume"],
                                         "rows": [["C1", 182.5, "rice", None],
                                                  [None, None, "rice", 3]]}}


@pytest.mark.parametrize("extra, match", [
    ('"pins": {"S1": {"t": [1]}}', '"pins" must give'),
    ('"typed": {"confirm": {"columns": ["a"], "rows": [[1, 2]]}}', "as many cells"),
    ('"batch": {"size_g": "big"}', "\"size_g\" cannot be 'big'"),
    ('"batch": {"colour": 1}', "\"colour\" cannot be 1"),
])
def test_bad_kept_tables_and_choices_say_so(extra, match):
    text = ('{"kind": "tradeoff workbench session", "version": 1, "study": {"kind": "path"},'
            f' {extra}}}')
    with pytest.raises(StudyError, match=match):
        read_session(text, "x.session.json")


@pytest.mark.parametrize("table", [
    {"goal": "maximize", "lower": 2.0, "upper": 3.0, "shape": 2.0, "weight": 3.0},
    {"goal": "minimize", "lower": 4.0, "upper": 8.0},
    {"goal": "target", "lower": 52.0, "upper": 64.0, "target": 58.0, "shape_above": 0.5},
    {"goal": "range", "lower": 1.0, "upper": 2.0},
])
def test_a_goal_written_as_keys_reads_back_the_same(table):
    """Written with or without the defaults, the study reader's goal check reads
    back the same goal (one conversion serves the study file, the session file and
    saving back)."""
    from tradeoff.study.reader import _goal

    goal = _goal(table, "x.toml", "goal")
    for defaults in (True, False):
        assert _goal(goal.keys(defaults=defaults), "x.toml", "goal") == goal
    assert goal.keys(defaults=False).get("weight", 1.0) == table.get("weight", 1.0)
    assert Goal().keys() == {}


def test_plan_what_if_and_asked_for_round_trip():
    text = session_text(study={"kind": "path", "path": "/lab/x.toml"}, goals={}, models={},
                        plan={"a_design": "optimal", "a_n": 16, "compare": True,
                              "a_cent": ["edges", "overall"]},
                        whatif={"from": "S1", "settings": {"temp": 181.0, "flour": "rice"}},
                        asked={"next_runs": 4, "compare_shown": {"v", "h"}, "report": True,
                               "frontier": ["h", "v"]})
    back = read_session(text, "x.session.json")
    assert back["plan"] == {"a_design": "optimal", "a_n": 16, "compare": True,
                            "a_cent": ["edges", "overall"]}
    assert back["whatif"] == {"from": "S1", "settings": {"temp": 181.0, "flour": "rice"}}
    assert back["asked"] == {"next_runs": 4, "compare_shown": {"v", "h"}, "report": True,
                             "frontier": ["h", "v"]}
    with pytest.raises(StudyError, match='"asked" must say'):
        read_session(text.replace('"next_runs": 4', '"next_runs": 40'), "x.session.json")
    with pytest.raises(StudyError, match="which two goals the frontier shows"):
        read_session(text.replace('"frontier": [', '"frontier": ["w", '), "x.session.json")
