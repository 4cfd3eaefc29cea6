"""The workbench in a real browser: start ``tradeoff app``, change a target, look.

Needs Debian's chromium (/usr/bin/chromium) and the playwright Python package
(never a browser downloaded by playwright). Without them the test is skipped
on a workstation but fails in CI (environment variable CI set), so CI cannot
pass by silently skipping it.
"""
from __future__ import annotations

import importlib.util
import os
import re
import time
from pathlib import Path

import pytest

from tradeoff_ui.drive import (CHROMIUM, CONNECTED, launch_chromium, start_workbench,
                               stop_workbench)


def _require_browser() -> None:
    missing = [what for what, ok in ((f"chromium ({CHROMIUM})", Path(CHROMIUM).exists()),
                                     ("the playwright package",
                                      importlib.util.find_spec("playwright") is not None))
               if not ok]
    if missing:
        message = " and ".join(missing) + " not installed: apt-get install -y chromium"
        if os.environ.get("CI"):
            pytest.fail(f"browser test cannot run in CI: {message}")
        pytest.skip(message)


def _best_now(page) -> str:
    text = page.locator(".st-key-best_now").inner_text(timeout=60_000)
    return text.split("\n", 1)[1]  # the settings, without the D line


def test_change_a_target_in_a_real_browser(tmp_path):
    _require_browser()
    from playwright.sync_api import sync_playwright

    proc, port = start_workbench([], log=tmp_path / "server.log")
    try:
        with sync_playwright() as pw:
            browser = launch_chromium(pw)
            try:
                page = browser.new_page(viewport={"width": 1400, "height": 1100})
                page.goto(f"http://127.0.0.1:{port}/targets", timeout=60_000)
                page.wait_for_selector(CONNECTED, timeout=60_000)
                page.get_by_text("Best settings now").wait_for(timeout=60_000)
                page.get_by_text("Hardness, fresh (N)").first.wait_for(timeout=60_000)
                before = _best_now(page)
                assert re.search(r"Protein content: \d", before)

                target = page.locator('input[aria-label="Best at"]').first
                target.fill("14")
                target.press("Enter")
                deadline = time.monotonic() + 60
                after = before
                while after == before and time.monotonic() < deadline:
                    page.wait_for_timeout(300)
                    after = _best_now(page)
                assert after != before, "the best settings did not change"
                page.wait_for_timeout(500)  # let the charts settle for the screenshot
                assert page.locator('[data-testid="stException"]').count() == 0
                page.screenshot(path=str(tmp_path / "workbench_targets.png"), full_page=True)
                shots = os.environ.get("TRADEOFF_SCREENSHOTS")
                if shots:  # keep a copy to look at (developers)
                    page.screenshot(path=str(Path(shots) / "workbench_targets.png"),
                                    full_page=True)
            finally:
                browser.close()
    finally:
        stop_workbench(proc)
