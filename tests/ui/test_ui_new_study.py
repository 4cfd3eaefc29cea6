"""The new-study view and keeping work, driven headless with Streamlit's AppTest.

The study file's text and problems come from tradeoff.study.draft (tested in
tests/study/test_draft.py); here we check that the view drafts from a table,
reaches the same recommendation as the shipped flour blend study file, and that a
reload (the same page address in a new session) loses nothing.
"""
from __future__ import annotations

import tomllib
from importlib.resources import files

import pandas as pd
from streamlit.testing.v1 import AppTest

from conftest import DEMO

APP = str(files("tradeoff_ui") / "app.py")
DATA = DEMO.parent
FLOUR_CSV = DATA / "flour_blend_runs.csv"
FLOUR = DATA / "flour_blend.toml"


def start(page: str | None = None, session: str | None = None) -> AppTest:
    at = AppTest.from_file(APP, default_timeout=60)
    if session is not None:
        at.query_params["session"] = session
    at.run()
    if page is not None:
        at.switch_page(f"views/{page}.py").run()
    assert not at.exception, at.exception
    return at


def widget(at: AppTest, kind: str, ending: str):
    """The one widget of a kind whose key ends with ``ending`` (keys carry a draft nonce)."""
    found = [w for w in getattr(at, kind) if w.key and w.key.endswith(ending)]
    assert len(found) == 1, (ending, [w.key for w in getattr(at, kind)])
    return found[0]


def upload_flour(at: AppTest) -> None:
    at.file_uploader(key="ns_upload").set_value(
        ("flour_blend_runs.csv", FLOUR_CSV.read_bytes(), "text/csv")).run()
    assert not at.exception and not at.error


def declare_as_shipped(at: AppTest) -> None:
    """Type what the shipped study file declares: ranges, model, labels, units and goals."""
    shipped = tomllib.loads(FLOUR.read_text())
    widget(at, "selectbox", "_study_model").set_value(shipped["study"]["model"]).run()
    for table in shipped["components"] + shipped["factors"] + shipped["responses"]:
        name = table["name"]
        if "label" in table:
            widget(at, "text_input", f"label_{name}").input(table["label"]).run()
        if "unit" in table:
            widget(at, "text_input", f"unit_{name}").input(table["unit"]).run()
        for limit in ("low", "high"):
            if limit in table:
                widget(at, "number_input", f"{limit}_{name}").set_value(
                    float(table[limit])).run()
        if "goal" in table:
            widget(at, "selectbox", f"goal_{name}").set_value(table["goal"]).run()
            for limit in ("lower", "target", "upper"):
                if limit in table:
                    widget(at, "number_input", f"{limit}_{name}").set_value(
                        float(table[limit])).run()
    assert not at.exception and not at.error


def solutions(at: AppTest) -> pd.DataFrame:
    at.switch_page("views/results.py").run()
    assert not at.exception and not at.error, [e.value for e in at.error]
    return at.dataframe[0].value


def test_flour_blend_from_its_bare_table_reaches_the_shipped_recommendation():
    at = start("new_study")
    upload_flour(at)
    toml = at.code[0].value
    spec = tomllib.loads(toml)
    # the flours are offered as components, with the total they add up to
    assert [c["name"] for c in spec["components"]] == [
        "rice_flour", "sorghum_flour", "tapioca_starch"]
    assert spec["mixture"]["total"] == 100
    assert [r["name"] for r in spec["responses"]] == [
        "specific_volume", "crumb_hardness", "crust_lightness"]
    declare_as_shipped(at)
    assert any("reads without a problem" in s.value for s in at.success)
    at.button(key="ns_open").click().run()
    assert not at.exception and not at.error
    assert "flour_blend_runs.toml" in at.sidebar.caption[0].value  # named at once
    ours = solutions(at)

    shipped = start("study")
    shipped.file_uploader(key="upload_widget").set_value(
        [("flour_blend.toml", FLOUR.read_bytes(), "application/toml"),
         ("flour_blend_runs.csv", FLOUR_CSV.read_bytes(), "text/csv")]).run()
    theirs = solutions(shipped)
    pd.testing.assert_frame_equal(ours, theirs)


def test_the_study_file_downloads_with_its_problems_listed():
    at = start("new_study")
    upload_flour(at)
    widget(at, "selectbox", "role_point").set_value("batch").run()
    widget(at, "selectbox", "goal_crumb_hardness").set_value("minimize").run()
    problems = at.warning[0].value
    assert "no factor is hard to change" in problems and "'crumb_hardness'" in problems
    assert at.get("download_button")  # valid or not, it downloads
    assert not any(b.key == "ns_open" for b in at.button)
    # a reader's message, word for word as the command line gives it
    widget(at, "selectbox", "role_point").set_value("notes").run()
    widget(at, "selectbox", "goal_crumb_hardness").set_value("none").run()
    widget(at, "number_input", "low_bake_temp").set_value(300.0).run()
    assert "low (300) is not below high (205)" in at.warning[0].value


def test_from_scratch_columns_are_added_by_name():
    at = start("new_study")
    at.button(key="ns_scratch").click().run()
    for name, role in (("temp", "factor"), ("time", "factor"), ("yield", "response")):
        widget(at, "text_input", "_new_name").input(name)
        widget(at, "selectbox", "_new_role").set_value(role)
        next(b for b in at.button if b.label == "Add the column").click().run()
    assert not at.exception
    spec = tomllib.loads(at.code[0].value)
    assert [f["name"] for f in spec["factors"]] == ["temp", "time"]
    assert "'temp': type its lowest and highest setting" in at.warning[0].value
    for name, low, high in (("temp", 150.0, 170.0), ("time", 10.0, 20.0)):
        widget(at, "number_input", f"low_{name}").set_value(low).run()
        widget(at, "number_input", f"high_{name}").set_value(high).run()
    assert not at.warning and any("no runs yet" in i.value for i in at.info)


def test_a_reload_keeps_the_draft_and_the_open_study():
    at = start("new_study")
    upload_flour(at)
    widget(at, "selectbox", "goal_specific_volume").set_value("maximize").run()
    widget(at, "number_input", "lower_specific_volume").set_value(2.2).run()
    widget(at, "number_input", "upper_specific_volume").set_value(2.9).run()
    sid = at.query_params["session"]
    sid = sid[0] if isinstance(sid, list) else sid
    before = at.code[0].value
    again = start("new_study", session=sid)  # a new browser session, same address
    assert again.code[0].value == before
    again.button(key="ns_open").click().run()
    weight = widget(again, "number_input", "weight_specific_volume")
    assert weight.value == 1.0
    # the open study and its goals survive the next reload too
    third = start("targets", session=sid)
    assert "flour_blend_runs.toml" in third.sidebar.caption[0].value
    assert not third.error and not any("No result has a goal" in i.value
                                       for i in third.info)


def test_choices_survive_a_restart_beside_a_study_file(tmp_path, monkeypatch):
    study = tmp_path / "bread.toml"
    study.write_text(FLOUR.read_text())
    (tmp_path / FLOUR_CSV.name).write_bytes(FLOUR_CSV.read_bytes())
    monkeypatch.setattr("sys.argv", ["app.py", str(study)])
    at = start("models")
    at.selectbox(key="m_response").set_value("crumb_hardness").run()
    beside = tmp_path / "bread.session.json"
    assert beside.is_file()
    kept = beside.read_text()
    assert '"path": "' in kept and "bread.toml" in kept
    assert study.read_text() == FLOUR.read_text()  # the user's file is untouched
    # a restart: no page address, the study argument again
    at2 = start("targets")
    assert at2.session_state["goals"] == at.session_state["goals"]


def test_save_study_file_shows_the_differences_and_keeps_comments(tmp_path, monkeypatch):
    study = tmp_path / "bread.toml"
    study.write_text(FLOUR.read_text())
    (tmp_path / FLOUR_CSV.name).write_bytes(FLOUR_CSV.read_bytes())
    monkeypatch.setattr("sys.argv", ["app.py", str(study)])
    at = start("downloads")
    assert any("nothing to save" in m.value for m in at.markdown)
    from tradeoff.study.spec import Goal
    goals = dict(at.session_state["goals"])
    goals["crumb_hardness"] = Goal("minimize", 4.0, 7.0)
    at.session_state["goals"] = goals
    at.run()
    diff = next(c.value for c in at.code if c.language == "diff")
    assert "-upper = 8" in diff and "+upper = 7" in diff
    assert study.read_text() == FLOUR.read_text()  # nothing written before asking
    next(b for b in at.button if b.key == "save_button").click().run()
    saved = study.read_text()
    assert saved.count("#") == FLOUR.read_text().count("#")
    assert tomllib.loads(saved)["responses"][1]["upper"] == 7


def test_one_factor_study_has_no_factor_named_none():
    runs = "run,temp,firmness\n1,150,3.1\n2,170,4.0\n3,160,3.4\n4,150,3.0\n5,170,4.2\n"
    at = start("study")
    at.file_uploader(key="upload_widget").set_value(
        ("one.csv", runs.encode(), "text/csv")).run()
    at.switch_page("views/new_study.py").run()
    assert not at.warning, [w.value for w in at.warning]
    at.button(key="ns_open").click().run()
    at.switch_page("views/models.py").run()
    assert not at.exception and not at.error
    assert any("it takes two factors" in c.value for c in at.caption)
    assert not any("None" in e.value for e in at.error)
    at.switch_page("views/results.py").run()
    assert not at.error and any("No result has a goal yet" in i.value for i in at.info)
    at.switch_page("views/downloads.py").run()
    assert not at.error
