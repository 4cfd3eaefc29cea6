"""The loop's views in a real browser (Debian's chromium): plan, compare, batch
sheet, runs and confirmation runs, at 1400 and 1280 px, on both demos. Each view
runs to its end with no exception, no table cut off, no "None" shown.
Needs /usr/bin/chromium and the playwright package (see test_browser.py).
"""
from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from conftest import DEMO
from test_browser_views import _check, _shoot, browser  # noqa: F401 (fixture)
from tradeoff_ui.drive import CONNECTED, settle, start_workbench, stop_workbench

STUDIES = ("snack_bar.toml", "flour_blend.toml")


@pytest.mark.parametrize("name", STUDIES)
def test_loop_views_in_the_browser(browser, tmp_path, name):
    for path in DEMO.parent.iterdir():  # a copy: saving must never touch the demo
        if path.is_file():
            shutil.copy(path, tmp_path / path.name)
    proc, port = start_workbench([str(tmp_path / name)], log=tmp_path / "server.log")
    try:
        for width in (1400, 1280):
            page = browser.new_page(viewport={"width": width, "height": 2400})
            page.goto(f"http://127.0.0.1:{port}/", timeout=120_000)
            page.wait_for_selector(CONNECTED, timeout=120_000)
            settle(page)

            def go(link: str):
                page.get_by_role("link", name=link).first.click()
                settle(page)

            tag = f"{Path(name).stem}_{width}"
            go("Plan the runs")
            _check(page, f"plan {tag}")
            _shoot(page, f"loop_plan_{tag}")
            # the second width starts where the first left off (the session file
            # beside the study keeps the plan choices): the comparison may be on already
            if not page.get_by_text("Side by side").count():
                page.get_by_text("Compare with a second plan").click()
                settle(page)
            _check(page, f"plan compare {tag}")
            assert page.get_by_text("Side by side").count() == 1
            _shoot(page, f"loop_plan_compare_{tag}")
            go("Recommended settings")
            page.get_by_role("button", name="Pin S1 to compare").click()
            settle(page)
            go("Compare recipes")
            _check(page, f"compare {tag}")
            _shoot(page, f"loop_compare_{tag}")
            go("Batch sheet")
            _check(page, f"batch {tag}")
            assert page.get_by_text("Make in this order").count() == 1
            _shoot(page, f"loop_batch_{tag}")
            go("Add or correct runs")
            _check(page, f"data {tag}")
            _shoot(page, f"loop_data_{tag}")
            go("Confirmation runs")
            _check(page, f"confirm {tag}")
            _shoot(page, f"loop_confirm_{tag}")
            page.close()
    finally:
        stop_workbench(proc)
