"""The panel view, driven headless with Streamlit's AppTest: the demo's raw study
(liking on a line scale, crunchiness on a 1-5 category scale in two sessions).
The numbers are the library's (tests/model/test_panel_anova.py checks them
against statsmodels and scipy); here the view must show them and say plainly
when a study has no panel."""
from __future__ import annotations

from importlib.resources import files

from streamlit.testing.v1 import AppTest

from conftest import DEMO

APP = str(files("tradeoff_ui") / "app.py")
RAW = ["snack_bar_raw.toml", "snack_bar_runs.csv", "snack_bar_storage.csv",
       "snack_bar_panel.csv"]


def test_panel_view_shows_each_attribute_and_the_typed_demo_has_none():
    at = AppTest.from_file(APP, default_timeout=120)
    at.run()
    at.switch_page("views/panel.py").run()
    assert not at.exception, at.exception
    assert any("no panel table" in i.value for i in at.info)
    at.switch_page("views/study.py").run()
    at.file_uploader[0].set_value([(n, (DEMO.parent / n).read_bytes(), "text/plain")
                                   for n in RAW]).run()
    assert not at.exception and not at.error, [e.value for e in at.error]
    at.switch_page("views/panel.py").run()
    assert not at.exception and not at.error, [e.value for e in at.error]
    assert at.selectbox(key="p_attribute").options == ["liking", "crunch"]
    anova = at.dataframe[0].value
    assert list(anova["source"]) == ["run", "assessor", "residual"]
    at.selectbox(key="p_attribute").set_value("crunch").run()
    anova = at.dataframe[0].value
    assert "run x assessor" in list(anova["source"])
    means = at.dataframe[1].value
    assert len(means) == 20 and "alike-set" in means.columns
    assert "own F for runs" in at.dataframe[2].value.columns


def test_models_view_shows_a_category_response():
    # The demo's crunch as a category response: the library's effects and
    # thresholds (tests/model/test_category_model.py checks them against
    # statsmodels OrderedModel) on the models page, and each category's chance.
    at = AppTest.from_file(APP, default_timeout=180)
    at.run()
    at.switch_page("views/study.py").run()
    at.file_uploader[0].set_value([(n, (DEMO.parent / n).read_bytes(), "text/plain")
                                   for n in RAW]).run()
    at.switch_page("views/models.py").run()
    at.selectbox(key="m_response").set_value("crunch_expected").run()
    assert not at.exception and not at.error, [e.value for e in at.error]
    effects, cuts, chances = (d.value for d in at.dataframe[:3])
    assert list(effects["term"]) == ["protein", "glycerol", "binder", "mix_temp"]
    assert list(cuts["between"]) == ["1|2", "2|3", "3|4", "4|5"]
    assert len(chances) == 20 and "5 (%)" in chances.columns
