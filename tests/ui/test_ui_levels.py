"""A choice among three options in the workbench: the flour blend demo's hydrocolloid
(psyllium, xanthan, guar), driven headless with Streamlit's AppTest.

The hydrocolloid is offered as a selectbox of its levels on the targets view
(which level's best settings the curves mark), in the what-if panel and in the
slices of the results view; it is shown by its level's name everywhere, never
as "None" or a coded number. The numbers themselves are tested in
tests/maps/test_level_slices.py and tests/search/test_mixture_search.py.
"""
from __future__ import annotations

import re
from importlib.resources import files

from streamlit.testing.v1 import AppTest

from conftest import DEMO

APP = str(files("tradeoff_ui") / "app.py")
LEVELS = ["psyllium", "xanthan", "guar"]
FILES = ("flour_blend.toml", "flour_blend_runs.csv")


def _open(page: str) -> AppTest:
    at = AppTest.from_file(APP, default_timeout=120)
    at.run()
    at.switch_page("views/study.py").run()
    at.file_uploader[0].set_value([(n, (DEMO.parent / n).read_bytes(), "text/plain")
                                   for n in FILES]).run()
    assert not at.exception and not at.error, [e.value for e in at.error]
    at.switch_page(f"views/{page}.py").run()
    assert not at.exception, at.exception
    assert not at.error, [e.value for e in at.error]
    return at


def _texts(at: AppTest) -> list[str]:
    return ([m.value for m in at.markdown] + [c.value for c in at.caption]
            + [w.value for w in at.warning] + [m.value for m in at.sidebar.markdown])


def _no_none_or_coded_level(at: AppTest) -> None:
    for text in _texts(at):
        assert "None" not in text, text
        assert not re.search(r"hydrocolloid[^.\n]{0,40}coded", text, re.I), text
    for frame in at.dataframe:
        shown = frame.value.astype(str)
        assert not (shown == "None").any().any(), frame.value
        assert "hydrocolloid coded" not in frame.value.columns


def _selectbox(at: AppTest, label: str):
    return next(s for s in at.selectbox if s.label.startswith(label))


def test_targets_offer_the_hydrocolloid_and_mark_each_levels_best():
    at = _open("targets")
    box = _selectbox(at, "Hydrocolloid: mark the best settings with")
    assert list(box.options)[1:] == LEVELS
    panel = next(m.value for m in at.sidebar.markdown if "Best settings now" in m.value)
    best = re.search(r"Hydrocolloid: \*\*(\w+)\*\*", panel).group(1)
    assert best in LEVELS
    other = next(level for level in LEVELS if level != best)
    box.set_value(other).run()
    assert not at.exception and not at.error
    marked = next(c.value for c in at.caption if c.value.startswith("The curves mark"))
    assert f"Hydrocolloid = {other}" in marked  # the factor's label, not its column name
    # the sidebar still names the best of all, by its level's name
    panel = next(m.value for m in at.sidebar.markdown if "Best settings now" in m.value)
    assert f"Hydrocolloid: **{best}**" in panel
    _no_none_or_coded_level(at)


def test_results_offer_the_hydrocolloid_in_slices_and_what_if():
    at = _open("results")
    solutions = at.dataframe[0].value
    # the column is headed by the factor's label, not its column name
    assert set(solutions["Hydrocolloid"]) <= set(LEVELS)
    assert len(set(solutions["Hydrocolloid"])) == 3   # the best with each hydrocolloid
    what_if = _selectbox(at, "Hydrocolloid")
    assert list(what_if.options) == LEVELS
    _no_none_or_coded_level(at)
    # another hydrocolloid in the what-if panel: new predictions, no warning of a
    # setting outside the tested range (a level is never outside it)
    what_if = _selectbox(at, "Hydrocolloid")
    before = at.dataframe[-1].value["predicted"].tolist()
    what_if.set_value(next(v for v in LEVELS if v != what_if.value)).run()
    assert not at.exception and not at.error
    assert at.dataframe[-1].value["predicted"].tolist() != before
    assert not any("Outside the tested range" in w.value for w in at.warning)


def test_the_study_view_names_the_levels():
    at = _open("study")
    # the flours first, as amounts that add up (never coded -1/+1), then the process
    components = at.dataframe[0].value.set_index("component")
    assert list(components.index) == ["rice_flour", "sorghum_flour", "tapioca_starch"]
    assert not any("coded" in c for c in components.columns)
    assert components.loc["tapioca_starch", "highest"] == "45"  # 50 cannot be reached
    assert any("components add up to 100 % in every run" in m.value for m in at.markdown)
    factors = at.dataframe[1].value.set_index("factor")
    assert list(factors.index) == ["bake_temp", "hydrocolloid"]
    assert factors.loc["hydrocolloid", "levels"] == ", ".join(LEVELS)
    runs = at.dataframe[3].value
    assert set(runs["hydrocolloid"]) == set(LEVELS)
    _no_none_or_coded_level(at)
