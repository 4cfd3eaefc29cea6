"""A study without factors in the workbench, driven headless with Streamlit's AppTest.

One product stored at 20, 30 and 40 degC (tests/study_kinds.py: a known rate
plus seeded noise; tests/report/test_one_product.py checks its numbers against
an independent Arrhenius fit): "Study and runs" shows the product and
its storage kinetics; the views about models, targets and recommendations say
in one line that there is nothing to model or search; the report and the
workbook can still be taken.
"""
from __future__ import annotations

import sys
from importlib.resources import files
from pathlib import Path

from streamlit.testing.v1 import AppTest

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
from study_kinds import ONE_PRODUCT_STUDY, one_product_storage  # noqa: E402

APP = str(files("tradeoff_ui") / "app.py")


def _open() -> AppTest:
    at = AppTest.from_file(APP, default_timeout=120)
    at.run()
    at.switch_page("views/study.py").run()
    at.file_uploader[0].set_value([("one.toml", ONE_PRODUCT_STUDY.encode(), "text/plain"),
                                   ("storage.csv", one_product_storage().encode(),
                                    "text/csv")]).run()
    assert not at.exception and not at.error, [e.value for e in at.error]
    return at


def test_the_workbench_shows_the_product_and_says_there_is_nothing_to_model():
    at = _open()
    assert any("nothing is varied between the products" in c.value for c in at.caption)
    assert any(s.value == "Storage kinetics" for s in at.subheader)
    table = next(d.value for d in at.dataframe if "per_temperature" in d.value.columns)
    assert list(table["run"]) == ["P1"] and table["lower"].notna().all()
    assert len(at.get("vega_lite_chart")) == 1    # the Arrhenius chart
    for page in ("models", "targets", "results"):
        at.switch_page(f"views/{page}.py").run()
        assert not at.exception and not at.error, (page, [e.value for e in at.error])
        assert any("varies no factor, so there is nothing to model or search" in i.value
                   for i in at.info), page
    at.switch_page("views/downloads.py").run()
    assert not at.exception and not at.error, [e.value for e in at.error]
    assert any("No results table" in c.value for c in at.caption)
    at.button(key="d_prepare").click().run(timeout=600)
    assert not at.exception and not at.error
    names = [b.label for b in at.get("download_button")]
    assert "Report (.html)" in names and "Results workbook (.xlsx)" in names
