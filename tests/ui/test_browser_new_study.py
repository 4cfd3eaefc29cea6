"""The flour blend built from its bare table by clicking, in a real browser.

Upload the runs, accept the components the view offers (the flours add up to
100 in every row), type the total, the ranges, the model of the process
factors, the labels and the goals, open the study: the best settings must be
those of the shipped study file. A reload at each step must lose nothing. Needs
Debian's chromium (skipped without it, except under CI).
"""
from __future__ import annotations

import hashlib
import os
import shutil
import subprocess
import sys
import tomllib
from pathlib import Path

from conftest import DEMO
from test_browser import (ARGS, CHROMIUM, _best_now, _free_port, _require_browser,
                          _wait_healthy, stop_server)
from test_browser_views import _check, _settle

DATA = DEMO.parent
FLOUR_CSV = DATA / "flour_blend_runs.csv"
FLOUR = DATA / "flour_blend.toml"
CONNECTED = '[data-testid="stApp"][data-test-connection-state="CONNECTED"]'


def _shoot(page, name: str) -> None:
    shots = os.environ.get("TRADEOFF_SCREENSHOTS")
    if shots:  # keep copies at both widths to look at (developers)
        for width in (1400, 1280):
            page.set_viewport_size({"width": width, "height": 1100})
            _settle(page)
            page.screenshot(path=str(Path(shots) / f"{name}_{width}.png"), full_page=True)
        page.set_viewport_size({"width": 1400, "height": 1100})


def _reload(page) -> None:
    page.reload(timeout=120_000)
    page.wait_for_selector(CONNECTED, timeout=120_000)
    page.get_by_text("New study").first.wait_for(timeout=120_000)
    _settle(page)


def _code(page) -> str:
    return page.locator('[data-testid="stCode"]').first.inner_text()


def test_flour_blend_from_its_bare_table_by_clicking(tmp_path):
    _require_browser()
    from playwright.sync_api import sync_playwright

    folder = tmp_path / "lab"
    folder.mkdir()
    shutil.copy(FLOUR, folder / FLOUR.name)
    shutil.copy(FLOUR_CSV, folder / FLOUR_CSV.name)
    upload = tmp_path / "upload" / FLOUR_CSV.name  # the bare table, alone in its folder
    upload.parent.mkdir()
    shutil.copy(FLOUR_CSV, upload)
    data = FLOUR_CSV.read_bytes()
    nonce = hashlib.sha256(FLOUR_CSV.name.encode() + b"\0" + data).hexdigest()[:8]
    shipped = tomllib.loads(FLOUR.read_text())

    port = _free_port()
    log = tmp_path / "server.log"
    tradeoff = Path(sys.executable).with_name("tradeoff")
    env = {**os.environ, "TRADEOFF_SESSIONS": str(tmp_path / "sessions")}
    with log.open("wb") as out:
        proc = subprocess.Popen([str(tradeoff), "app", "--port", str(port),
                                 str(folder / FLOUR.name)], stdout=out, env=env,
                                stderr=subprocess.STDOUT, start_new_session=True)
    try:
        _wait_healthy(proc, port, log)
        with sync_playwright() as pw:
            browser = pw.chromium.launch(executable_path=str(CHROMIUM), headless=True,
                                         args=ARGS)
            try:
                page = browser.new_page(viewport={"width": 1400, "height": 1100})
                page.goto(f"http://127.0.0.1:{port}/targets", timeout=120_000)
                page.wait_for_selector(CONNECTED, timeout=120_000)
                page.get_by_text("Best settings now").wait_for(timeout=120_000)
                _settle(page)
                reference = _best_now(page)

                def choose(key: str, option: str) -> None:
                    box = page.locator(f".st-key-ns_{nonce}_{key} input")
                    box.click()
                    if not page.get_by_role("option").count():
                        box.press("ArrowDown")  # focused but closed: open the list
                    page.get_by_role("option", name=option, exact=True).click()
                    _settle(page)

                def type_in(key: str, value) -> None:
                    box = page.locator(f".st-key-ns_{nonce}_{key} input")
                    box.fill(str(value))
                    box.press("Enter")
                    _settle(page)

                page.goto(f"http://127.0.0.1:{port}/new_study", timeout=120_000)
                page.wait_for_selector(CONNECTED, timeout=120_000)
                _settle(page)
                page.locator(".st-key-ns_upload input[type=file]").set_input_files(
                    str(upload))
                page.get_by_text("1. What each column is").wait_for(timeout=120_000)
                _settle(page)
                # the flours are offered as the parts of a blend, with their total
                for flour in ("rice_flour", "sorghum_flour", "tapioca_starch"):
                    assert "blend component" in page.locator(
                        f".st-key-ns_{nonce}_role_{flour} input").input_value()
                assert page.locator(f".st-key-ns_{nonce}_total input").input_value() == "100"
                _reload(page)
                assert "[[components]]" in _code(page) and "?session=" in page.url

                type_in("name", shipped["study"]["name"])
                choose("study_model", "main effects")
                for step, table in enumerate(
                        shipped["components"] + shipped["factors"] + shipped["responses"]):
                    name = table["name"]
                    for what in ("label", "unit"):
                        if what in table:
                            type_in(f"{what}_{name}", table[what])
                    for limit in ("low", "high"):
                        if limit in table:
                            type_in(f"{limit}_{name}", table[limit])
                    if "goal" in table:
                        words = {"maximize": "higher is better",
                                 "minimize": "lower is better",
                                 "target": "aim at a target"}[table["goal"]]
                        choose(f"goal_{name}", words)
                        for limit in ("lower", "target", "upper"):
                            if limit in table:
                                type_in(f"{limit}_{name}", table[limit])
                    if step in (2, 6):  # a reload part way loses nothing
                        before = _code(page)
                        _reload(page)
                        assert _code(page) == before
                _check(page, "new study")
                page.get_by_text("The study file reads without a problem").wait_for()
                _shoot(page, "new_study_flour")
                page.get_by_role("button", name="Open this study in the workbench").click()
                page.get_by_text("This study is open").wait_for(timeout=120_000)
                _settle(page)
                page.get_by_role("link", name="Adjust goals and weights").click()
                page.get_by_text("Best settings now").wait_for(timeout=120_000)
                _settle(page)
                assert _best_now(page) == reference
                sidebar = page.locator('[data-testid="stSidebar"]').inner_text()
                assert "gluten_free_flour_blend_invented_demo.toml" in sidebar
                page.reload(timeout=120_000)
                page.wait_for_selector(CONNECTED, timeout=120_000)
                page.get_by_text("Best settings now").wait_for(timeout=120_000)
                _settle(page)
                assert _best_now(page) == reference  # the reload kept study and goals
                _check(page, "targets after reload")
            finally:
                browser.close()
    finally:
        stop_server(proc)
