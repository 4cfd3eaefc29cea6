"""A study without factors in the workbench, driven headless with Streamlit's AppTest.

One product stored at 20, 30 and 40 degC (built here from a known rate plus
seeded noise, as in tests/report/test_one_product.py, which checks its numbers
against an independent Arrhenius fit): "Study and runs" shows the product and
its storage kinetics; the views about models, targets and recommendations say
in one line that there is nothing to model or search; the report and the
workbook can still be taken.
"""
from __future__ import annotations

import math
from importlib.resources import files

import numpy as np
import pytest

pytest.importorskip("streamlit")
from streamlit.testing.v1 import AppTest  # noqa: E402

APP = str(files("tradeoff_ui") / "app.py")
R_GAS = 8.314462618
STUDY = """[study]
name = "One bar (generated)"

[storage]
data = "storage.csv"
time = "week"
temperature = "temp_c"

[[responses]]
name = "life"
unit = "weeks"
derive = "shelf_life"
property = "hardness"
limit = 35
direction = "up"
at_temperature = 20
"""


def _storage() -> bytes:
    rng = np.random.default_rng(3)
    rows = ["run,week,temp_c,property,value", f"P1,0,,hardness,{12 + rng.normal(0, 0.3):.4f}"]
    for T, weeks in {20: (4, 8, 13, 26), 30: (2, 4, 8, 13), 40: (1, 2, 4, 6)}.items():
        k = math.exp(-80e3 / R_GAS * (1 / (T + 273.15) - 1 / 293.15))
        rows += [f"P1,{w},{T},hardness,{12 + k * w + rng.normal(0, 0.3):.4f}" for w in weeks]
    return ("\n".join(rows) + "\n").encode()


def _open() -> AppTest:
    at = AppTest.from_file(APP, default_timeout=120)
    at.run()
    at.switch_page("views/study.py").run()
    at.file_uploader[0].set_value([("one.toml", STUDY.encode(), "text/plain"),
                                   ("storage.csv", _storage(), "text/csv")]).run()
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
