"""A blend in the workbench, driven headless with Streamlit's AppTest on the invented
flour blend demo: components read as amounts that add up, never as coded -1/+1
factors moved one at a time.

The numbers are tested in tests/maps/test_mixture_tables.py (Cox directions,
effects against statsmodels) and tests/model/test_amount_equation.py; here the
views show them, and the what-if panel keeps the total. Cox's direction
(Cornell (2002), Experiments with Mixtures, 3rd ed., sec. 5.8): setting
component i to x_i' moves every other component j to x_j (T - x_i') / (T - x_i).
"""
from __future__ import annotations

from importlib.resources import files

import pytest
from streamlit.testing.v1 import AppTest

from conftest import DEMO

APP = str(files("tradeoff_ui") / "app.py")
FLOUR = ("flour_blend.toml", "flour_blend_runs.csv")
NAMES = ("Rice flour", "Sorghum flour", "Tapioca starch")


def _open(page: str) -> AppTest:
    at = AppTest.from_file(APP, default_timeout=120)
    at.run()
    at.switch_page("views/study.py").run()
    at.file_uploader[0].set_value([(n, (DEMO.parent / n).read_bytes(), "text/plain")
                                   for n in FLOUR]).run()
    at.switch_page(f"views/{page}.py").run()
    assert not at.exception, at.exception
    assert not at.error, [e.value for e in at.error]
    return at


def _blend(at: AppTest) -> dict:
    return {n: next(b for b in at.number_input if b.label.startswith(n)).value
            for n in NAMES}


def test_the_models_view_reads_a_blend_along_cox_directions():
    at = _open("models")
    heads = [s.value for s in at.subheader]
    assert heads[:2] == ["What each part of the recipe does", "Cox traces"]
    # nothing that moves one flour while the others stay
    for gone in ("Effects, largest first", "Half-normal plot", "Interactions"):
        assert gone not in heads
    assert any("coefficients are not effects" in c.value for c in at.caption)
    coef = next(d.value for d in at.dataframe if "coefficient (as fitted)" in d.value.columns)
    rows = coef.set_index("term")
    for name in NAMES:  # terms in the study's labels
        assert rows.loc[name, "p-value"] == ""  # no test on a pure component
    assert rows.loc["Rice flour \u00d7 Sorghum flour", "p-value"] != ""
    assert any(m.value.startswith("The equation in amounts") for m in at.markdown)
    # every response, every held hydrocolloid: still no error
    at.selectbox(key="m_blend_hold.hydrocolloid").set_value("guar").run()
    at.selectbox(key="m_response").set_value("crust_lightness").run()
    assert not at.exception and not at.error


def test_the_what_if_blend_keeps_its_total():
    at = _open("results")
    before = _blend(at)
    assert sum(before.values()) == pytest.approx(100.0)
    rice = next(b for b in at.number_input if b.label.startswith("Rice flour"))
    rice.set_value(before["Rice flour"] + 10).run()
    after = _blend(at)
    assert sum(after.values()) == pytest.approx(100.0, abs=1e-9)
    rest = 100.0 - before["Rice flour"]
    for n in NAMES[1:]:  # x_j' = x_j (T - x_i') / (T - x_i)
        assert after[n] == pytest.approx(before[n] * (rest - 10) / rest, rel=1e-12)
    assert any(c.value.endswith("the blend's total is 100 %.") for c in at.caption)

    # an amount no blend of 100 % can hold: refused, the blend stays
    rice = next(b for b in at.number_input if b.label.startswith("Rice flour"))
    rice.set_value(110.0).run()
    assert _blend(at) == pytest.approx(after)
    assert any("cannot be part of a blend that totals 100 %" in w.value for w in at.warning)

    # others fixed, total changes: the study fixes the total, so the switch is refused
    at.toggle(key="r_whatif_free").set_value(True).run()
    assert at.toggle(key="r_whatif_free").value is False
    assert any("fixes the blend" in w.value and "total at 100 %" in w.value
               for w in at.warning)
    assert not at.exception and not at.error
