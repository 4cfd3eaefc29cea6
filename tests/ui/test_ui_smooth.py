"""The workbench with a smooth model, the model comparison and 'Make next' (AppTest)."""
from __future__ import annotations

from importlib.resources import files

from streamlit.testing.v1 import AppTest

APP = str(files("tradeoff_ui") / "app.py")


def start(page: str) -> AppTest:
    at = AppTest.from_file(APP, default_timeout=180)
    at.run()
    at.switch_page(f"views/{page}.py")
    at.run()
    assert not at.exception, at.exception
    return at


def test_smooth_model_shows_length_scales_and_the_comparison_switches_models():
    at = start("models")
    at.selectbox(key="m_response").set_value("liking").run()
    at.selectbox(key="m_model.liking").set_value("smooth").run()
    assert not at.exception and not at.error, [e.value for e in at.error]
    labels = [m.label for m in at.metric]
    assert "Leave-one-out R²" in labels and "Terms" not in labels
    assert len(at.get("vega_lite_chart")) == 2  # length scales, runs predicted
    at.button(key="m_compare.liking").click().run()
    assert not at.exception and not at.error
    table = next(d.value for d in at.dataframe if "model" in d.value.columns)
    assert set(table["model"]) == {"main", "interactions", "quadratic", "smooth"}
    at.selectbox(key="m_compare_pick.liking").set_value("main").run()
    at.button(key="m_compare_use.liking").click().run()
    assert not at.exception
    assert at.session_state["models"]["liking"] == "main"
    assert [m.value for m in at.metric if m.label == "Terms"][0] == "5"


def test_make_next_suggests_runs_with_a_run_sheet():
    at = start("results")
    at.number_input(key="r_next_n").set_value(3).run()
    at.button(key="r_next_go").click().run()
    assert not at.exception and not at.error, [e.value for e in at.error]
    table = next(d.value for d in at.dataframe if "expected gain in D" in d.value.columns)
    assert len(table) == 3 and {"expected gain in D", "Protein content (%)"} <= set(table)
    assert list(table["run"]) == ["R21", "R22", "R23"]
    assert any(b.label.startswith("Run sheet") for b in at.get("download_button"))
