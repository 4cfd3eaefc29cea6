"""Every workbench view, driven headless with Streamlit's AppTest on the demo study.

The numbers shown come from the library (tested in tests/maps/test_tables.py,
tests/test_search.py and others); here we check the views run, react to what
the user changes, and keep the study when an upload is bad.
"""
from __future__ import annotations

from importlib.resources import files

import pytest
from streamlit.testing.v1 import AppTest

from conftest import BASIC_RUNS, BASIC_STUDY, DEMO

APP = str(files("tradeoff_ui") / "app.py")
DEMO_NAME = "High-protein snack bar: texture, storage and liking (invented demo)"


def start(page: str | None = None) -> AppTest:
    at = AppTest.from_file(APP, default_timeout=30)
    at.run()
    if page is not None:
        at.switch_page(f"views/{page}.py")
        at.run()
    assert not at.exception, at.exception
    return at


def best_settings(at: AppTest) -> str:
    """The settings listed in the 'best settings now' panel (D left out)."""
    panel = next(m.value for m in at.sidebar.markdown if "Best settings now" in m.value)
    return panel.split("\n\n", 1)[1]


def headers(at: AppTest) -> list[str]:
    return [h.value for h in at.header]


# models: effects, half-normal, two interaction charts, three residual panels;
# results: the frontier, one map and one chart of the traces of every response and D
@pytest.mark.parametrize("page, charts", [("study", 0), ("models", 7), ("targets", 6),
                                          ("results", 3), ("downloads", 0)])
def test_each_view_runs_on_the_demo(page, charts):
    at = start(page)
    assert not at.error, [e.value for e in at.error]
    assert len(at.get("vega_lite_chart")) == charts
    if page == "study":
        assert DEMO_NAME in headers(at)
        runs = at.dataframe[2].value
        assert len(runs) == 20 and "mark" in runs.columns
        assert "protein coded" in at.dataframe[3].value.columns  # in the expander
    if page == "results":
        assert any("shelf-life" in i.value for i in at.info)  # the food caution
        solutions = at.dataframe[0].value
        assert list(solutions["solution"])[0] == "S1"
    if page == "downloads":
        assert len(at.get("download_button")) == 3


def test_changing_a_target_changes_the_best_settings():
    at = start("targets")
    before = best_settings(at)
    at.number_input(key="g1.hardness_fresh.target").set_value(14.0).run()
    assert not at.exception and not at.error
    after = best_settings(at)
    assert after != before
    # the new goal is kept when the user goes elsewhere and comes back
    at.switch_page("views/study.py").run()
    at.switch_page("views/targets.py").run()
    assert at.number_input(key="g1.hardness_fresh.target").value == 14.0
    assert best_settings(at) == after


def test_dropping_a_goal_changes_the_best_settings():
    at = start("targets")
    before = best_settings(at)
    at.selectbox(key="g1.cost.kind").set_value("none").run()
    assert not at.exception and not at.error
    assert best_settings(at) != before
    assert len(at.get("vega_lite_chart")) == 5  # no curve for a goal that is not used


def test_changing_a_weight_changes_the_best_settings():
    at = start("targets")
    before = best_settings(at)
    at.number_input(key="g1.cost.weight").set_value(8.0).run()
    assert not at.exception and not at.error
    assert best_settings(at) != before


def test_an_impossible_goal_shows_an_error_and_keeps_the_previous_goal():
    at = start("targets")
    before = best_settings(at)
    at.number_input(key="g1.liking.lower").set_value(9.0).run()
    assert any("'Unacceptable below' (9) must be below 'Fully met at or above' (7.5)"
               in e.value for e in at.error)
    assert at.number_input(key="g1.liking.lower").value == 9.0  # what was typed stays
    assert best_settings(at) == before


def test_a_bad_upload_shows_an_error_and_keeps_the_study():
    at = start("study")
    at.file_uploader[0].set_value(("broken.toml", b"[study\nname = 'x'",
                                   "application/toml")).run()
    assert not at.exception
    assert any("not a valid study file" in e.value for e in at.error)
    assert DEMO_NAME in headers(at)


@pytest.mark.parametrize("data, message", [
    (b"\n\n", "bars.csv: the table is empty"),
    (BASIC_RUNS.replace("\n3,", "\nrun,protein,binder,hardness\n3,").encode(),
     "bars.csv, row 4: this row repeats the column names")])
def test_an_empty_or_damaged_bare_table_is_named_on_upload(data, message):
    # read on 'Study and runs' as 'New study' reads it: one line, the study kept
    at = start("study")
    at.file_uploader[0].set_value(("bars.csv", data, "text/csv")).run()
    assert not at.exception
    (error,) = [e.value for e in at.error]
    assert error.startswith(f"Could not open the files: {message}") and "\n" not in error
    assert not any("New study" in i.value for i in at.info)
    assert DEMO_NAME in headers(at)


def test_uploading_a_study_with_its_data_opens_it():
    at = start("study")
    at.file_uploader[0].set_value([("study.toml", BASIC_STUDY.encode(), "application/toml"),
                                   ("runs.csv", BASIC_RUNS.encode(), "text/csv")]).run()
    assert not at.exception and not at.error
    assert "bars" in headers(at)
    assert len(at.dataframe[2].value) == 5


def test_a_bare_data_table_is_opened_after_naming_its_columns():
    at = start("study")
    data = (DEMO.parent / "snack_bar_runs.csv").read_bytes()
    at.file_uploader[0].set_value(("snack_bar_runs.csv", data, "text/csv")).run()
    assert not at.exception
    # the study view sends the bare table on to the new-study view
    assert any("New study" in i.value for i in at.info)
    at.switch_page("views/new_study.py").run()
    at.button(key="ns_open").click().run()
    assert not at.exception and not at.error
    at.switch_page("views/study.py").run()
    assert "snack bar runs" in headers(at)
    # a drafted study has no goals yet: the targets view says so in one line
    at.switch_page("views/targets.py").run()
    assert not at.exception and not at.error
    assert any("No result has a goal yet" in i.value for i in at.info)


def test_model_choice_and_reduction():
    at = start("models")
    at.selectbox(key="m_response").set_value("liking").run()
    terms_before = [m.value for m in at.metric if m.label == "Terms"][0]
    at.checkbox(key="m_reduce.liking").check().run()
    assert not at.exception and not at.error
    assert any("Reduction dropped" in i.value for i in at.info)
    terms_after = [m.value for m in at.metric if m.label == "Terms"][0]
    assert int(terms_after) < int(terms_before)
    at.selectbox(key="m_model.liking").set_value("main").run()
    assert [m.value for m in at.metric if m.label == "Terms"][0] == "5"


def test_what_if_outside_the_tested_range_is_flagged():
    at = start("results")
    protein = next(n for n in at.number_input if n.key.endswith(".protein"))
    protein.set_value(34.0).run()
    assert not at.exception
    # named by its label, as the boxes are
    assert any("Outside the tested range: Protein content" in w.value for w in at.warning)


def test_the_report_is_offered_after_preparing_it():
    at = start("downloads")
    # the report draws some twenty charts: allow a slow, shared machine (no timing here)
    at.button(key="d_prepare").click().run(timeout=600)
    assert not at.exception and not at.error
    assert len(at.get("download_button")) == 4


def test_uploaded_report_fingerprints_the_named_data_file(monkeypatch):
    # Provenance hashes the data file the study names, not another table uploaded
    # with it (common practice: the fingerprint identifies the data used).
    import hashlib

    import tradeoff.report.workbook

    seen = {}
    build = tradeoff.report.workbook.build_workbook

    def spy(*args, **kwargs):
        seen["data_bytes"] = kwargs.get("data_bytes")
        return build(*args, **kwargs)

    monkeypatch.setattr(tradeoff.report.workbook, "build_workbook", spy)
    other = b"run,note\n1,first batch\n"
    at = start("study")
    at.file_uploader[0].set_value([("study.toml", BASIC_STUDY.encode(), "application/toml"),
                                   ("notes.csv", other, "text/csv"),
                                   ("runs.csv", BASIC_RUNS.encode(), "text/csv")]).run()
    assert not at.exception and not at.error, [e.value for e in at.error]
    at.switch_page("views/downloads.py")
    at.run()
    assert not at.exception and not at.error
    assert hashlib.sha256(seen["data_bytes"]).hexdigest() == \
        hashlib.sha256(BASIC_RUNS.encode()).hexdigest()


def test_storage_kinetics_show_a_table_and_an_arrhenius_chart():
    # The invented three-temperature demo, uploaded with its tables.
    at = start("study")
    names = ("snack_bar_shelf.toml", "snack_bar_runs.csv", "snack_bar_storage_temps.csv")
    at.file_uploader[0].set_value([(n, (DEMO.parent / n).read_bytes(), "text/plain")
                                   for n in names]).run()
    assert not at.exception and not at.error
    assert any(s.value == "Storage kinetics" for s in at.subheader)
    table = next(d.value for d in at.dataframe if "per_temperature" in d.value.columns)
    assert len(table) == 20 and {"lower", "upper", "flag"} <= set(table.columns)
    assert len(at.get("vega_lite_chart")) == 1
    assert any("microbial safety" in i.value for i in at.info)


def test_goal_boxes_say_what_their_limits_mean():
    # Derringer & Suich (1980): a smaller-is-better goal is fully met (d = 1) at or
    # below its lower limit and unacceptable (d = 0) at or above its upper limit
    at = start("targets")
    by_key = {n.key: n.label for n in at.number_input}
    goals = {"hardness_fresh": "target", "water_activity": "minimize",
             "liking": "maximize"}
    study_goals = {k: v for k, v in goals.items() if f"g1.{k}.lower" in by_key}
    assert study_goals, by_key
    words = {"minimize": ("Fully met at or below", "Unacceptable above"),
             "maximize": ("Unacceptable below", "Fully met at or above"),
             "target": ("Unacceptable below", "Unacceptable above")}
    import tradeoff

    study = tradeoff.load_study(DEMO)
    for name in study_goals:
        kind = study.response(name).goal.kind
        assert (by_key[f"g1.{name}.lower"], by_key[f"g1.{name}.upper"]) == words[kind]
    assert "Lower limit" not in by_key.values() and "Upper limit" not in by_key.values()


def test_an_error_reads_as_one_sentence():
    at = start("targets")
    at.number_input(key="g1.liking.lower").set_value(9.0).run()
    message = at.error[0].value
    assert "?." not in message and ": ." not in message and ".." not in message
    assert "Unacceptable below" in message or "Fully met" in message
