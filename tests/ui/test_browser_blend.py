"""The blend's what-if panel in a real browser: it keeps the sum, and its row is one recipe.

Starts ``tradeoff app`` on the invented flour blend demo, opens the results view
in Debian's chromium (1400 px, then 1280 px), types a new amount of rice flour
and checks what a user sees:

- the other flours follow along Cox's direction, x_j' = x_j (T - x_i') / (T - x_i)
  (Cornell (2002), Experiments with Mixtures, 3rd ed., sec. 5.8), so the boxes
  still add up to 100 %;
- the D and the d's printed beside the boxes are those of the blend in the boxes,
  recomputed here from the published formulas written out (Derringer & Suich
  (1980), Derringer (1994): tests/reference_desirability.py);
- 110 % of one flour is refused with a message, and the boxes keep their blend.

Needs /usr/bin/chromium and the playwright package (see test_browser.py).
"""
from __future__ import annotations

import re

import pytest

from conftest import DEMO
from reference_desirability import study_D, study_d
from test_browser import _require_browser
from test_browser_views import _check, _shoot
from tradeoff_ui.drive import (CONNECTED, launch_chromium, settle, start_workbench,
                               stop_workbench)

FLOUR = DEMO.parent / "flour_blend.toml"
NAMES = ("Rice flour (%)", "Sorghum flour (%)", "Tapioca starch (%)")


@pytest.fixture(scope="module")
def page(tmp_path_factory):
    _require_browser()
    from playwright.sync_api import sync_playwright

    proc, port = start_workbench([str(FLOUR)],
                                 log=tmp_path_factory.mktemp("app") / "server.log")
    try:
        with sync_playwright() as pw:
            browser = launch_chromium(pw)
            try:
                p = browser.new_page(viewport={"width": 1400, "height": 2400})
                p.goto(f"http://127.0.0.1:{port}/results", timeout=120_000)
                p.wait_for_selector(CONNECTED, timeout=120_000)
                p.get_by_text("What if I make it like this?").first.wait_for(
                    timeout=120_000)
                settle(p)
                yield p
            finally:
                browser.close()
    finally:
        stop_workbench(proc)


def _box(page, label: str):
    return page.locator(f'input[aria-label="{label}"]').last


def _blend(page) -> dict:
    return {n: float(_box(page, n).input_value()) for n in NAMES}


def _type(page, label: str, value: float) -> None:
    box = _box(page, label)
    box.fill(f"{value:g}")
    box.press("Enter")
    page.wait_for_timeout(300)
    settle(page)


def _what_if_table(page) -> dict:
    """response label -> (predicted, desirability) as shown in the what-if table."""
    grid = page.locator('[data-testid="stDataFrame"]').filter(has_text="limits").last
    rows = [r.locator("th, td").all_inner_texts() for r in grid.locator("table tr").all()]
    head = [h.strip() for h in rows[0]]
    out = {}
    for row in rows[1:]:
        cells = dict(zip(head, [c.strip() for c in row]))
        out[cells["response"]] = (cells["predicted"], cells["d"])
    return out


def test_the_blend_what_if_keeps_the_sum_and_one_recipe(page):
    import tradeoff
    from tradeoff.study.coding import to_coded
    from tradeoff_ui.shown import num

    study = tradeoff.load_study(FLOUR)
    fit = tradeoff.fit_study(study)
    for width in (1400, 1280):
        page.set_viewport_size({"width": width, "height": 2400})
        settle(page)
        before = _blend(page)
        assert sum(before.values()) == pytest.approx(100.0, abs=1e-6)
        rice = before[NAMES[0]] + (5.0 if width == 1400 else -5.0)
        _type(page, NAMES[0], rice)
        after = _blend(page)
        assert after[NAMES[0]] == pytest.approx(rice)
        rest = 100.0 - before[NAMES[0]]
        for n in NAMES[1:]:  # shown to 4 significant digits
            assert after[n] == pytest.approx(before[n] * (100.0 - rice) / rest, rel=1e-3)
        # D and the d's on the row are those of the blend in the boxes
        main = page.locator('[data-testid="stMain"]').inner_text()
        shown_d = float(re.search(r"D = ([\d.]+); chance that every response", main).group(1))
        settings = {"rice_flour": rice, "bake_temp": float(_box(page, "Bake temperature (C)")
                                                         .input_value())}
        rest_after = 100.0 - rice
        settings["sorghum_flour"] = before[NAMES[1]] * rest_after / rest
        settings["tapioca_starch"] = before[NAMES[2]] * rest_after / rest
        hydro = re.search(r"Hydrocolloid = (\w+)\.", main).group(1)
        settings["hydrocolloid"] = hydro
        X = to_coded(study.factors, {k: [v] for k, v in settings.items()})
        # the bake temperature box shows 4 significant digits: D moves at most 1e-3
        assert shown_d == pytest.approx(float(study_D(study, fit, X)[0]), abs=2e-3)
        names, d = study_d(study, fit, X)
        table = _what_if_table(page)
        for i, name in enumerate(names):
            predicted, shown = table[study.response(name).display()]
            assert float(shown) == pytest.approx(d[0, i], abs=2e-3), name
            assert float(predicted) == pytest.approx(float(fit.models[name].predict(X)[0]),
                                                     rel=2e-3), name
        _check(page, f"what-if after a blend edit at {width} px")
        _shoot(page, f"workbench_blend_whatif_{width}")

    # 110 % of one flour: refused with a message, the blend unchanged
    kept = _blend(page)
    _type(page, NAMES[0], 110.0)
    assert _blend(page) == pytest.approx(kept)
    main = page.locator('[data-testid="stMain"]').inner_text()
    assert "cannot be part of a blend that totals 100 %" in main
    assert num(sum(kept.values())) == "100"
