"""The workbench's blend triangle, driven headless with Streamlit's AppTest.

Shown for a study with three components (the invented flour blend demo), not
for a study without a blend (the snack bar demo). The numbers drawn are
tested in tests/maps/test_ternary.py.
"""
from __future__ import annotations

from importlib.resources import files

from streamlit.testing.v1 import AppTest

from conftest import DEMO

APP = str(files("tradeoff_ui") / "app.py")


def _results(upload: tuple[str, ...] = ()) -> AppTest:
    at = AppTest.from_file(APP, default_timeout=60)
    at.run()
    if upload:
        at.switch_page("views/study.py").run()
        at.file_uploader[0].set_value([(n, (DEMO.parent / n).read_bytes(), "text/plain")
                                       for n in upload]).run()
        assert not at.exception and not at.error, [e.value for e in at.error]
    at.switch_page("views/results.py").run()
    assert not at.exception, at.exception
    assert not at.error, [e.value for e in at.error]
    return at


def test_the_flour_blend_shows_its_triangle():
    at = _results(("flour_blend.toml", "flour_blend_runs.csv"))
    assert "Blend triangle" in [s.value for s in at.subheader]
    # no square map over two flours (they must add up), and no empty section for it:
    # the triangle instead
    assert "Maps over two factors" not in [s.value for s in at.subheader]
    show = at.selectbox(key="r_tri_value")
    assert show.value == "limits"
    assert any("of the allowed blends" in c.value for c in at.caption)
    charts = len(at.get("vega_lite_chart"))
    show.set_value("crumb_hardness").run()
    assert not at.exception and not at.error
    assert len(at.get("vega_lite_chart")) == charts
    assert any("blends with the same predicted value" in c.value for c in at.caption)


def test_a_study_without_a_blend_has_no_triangle():
    at = _results()
    assert "Blend triangle" not in [s.value for s in at.subheader]
    assert not any("allowed blends" in c.value for c in at.caption)
