"""The flour blend from its bare table to a confirmation, by clicking, in a real browser.

Upload the runs, accept the components the view offers (the flours add up to
100 in every row), type the total, the ranges, the model of the process
factors, the labels and the goals, download the study file, open the study:
the best settings must be those of the shipped study file. Then pin the best
balance, make its batch sheet, type the results of a confirmation batch and read
the comparison. Each file the page gives and each figure it shows must be the
library's own for the downloaded study file (tradeoff.optimize, batch_sheet,
``tradeoff confirm``). A reload at each step must lose nothing. Needs Debian's
chromium (skipped without it, except under CI).
"""
from __future__ import annotations

import hashlib
import os
import shutil
import tomllib
from pathlib import Path

import pandas as pd

from conftest import DEMO
from tradeoff import check_confirmations, fit_study, load_study, optimize
from tradeoff.confirm.batch_sheet import batch_sheet
from tradeoff.study.safe_cells import csv_bytes
from test_browser import _best_now, _require_browser
from test_browser_views import _check
from tradeoff_ui.drive import (CONNECTED, launch_chromium, settle, start_workbench,
                               stop_workbench)

DATA = DEMO.parent
FLOUR_CSV = DATA / "flour_blend_runs.csv"
FLOUR = DATA / "flour_blend.toml"


def _shoot(page, name: str) -> None:
    shots = os.environ.get("TRADEOFF_SCREENSHOTS")
    if shots:  # keep copies at both widths to look at (developers)
        for width in (1400, 1280):
            page.set_viewport_size({"width": width, "height": 1100})
            settle(page)
            page.screenshot(path=str(Path(shots) / f"{name}_{width}.png"), full_page=True)
        page.set_viewport_size({"width": 1400, "height": 1100})


def _reload(page) -> None:
    page.reload(timeout=120_000)
    page.wait_for_selector(CONNECTED, timeout=120_000)
    page.get_by_text("New study").first.wait_for(timeout=120_000)
    settle(page)


def _code(page) -> str:
    return page.locator('[data-testid="stCode"]').first.inner_text()


def _download(page, button: str, folder: Path) -> Path:
    """Click a download button; the file as the browser saved it, under its own name."""
    with page.expect_download(timeout=120_000) as info:
        page.locator('[data-testid="stDownloadButton"] button').filter(
            has_text=button).first.click()
    target = folder / info.value.suggested_filename
    info.value.save_as(target)
    return target


def _go(page, link: str, landmark: str) -> None:
    """Another view, through the sidebar (the same browser session)."""
    page.locator('[data-testid="stSidebar"]').get_by_role("link", name=link).click()
    page.get_by_text(landmark).first.wait_for(timeout=120_000)
    settle(page)


def _reload_at(page, landmark: str) -> None:
    page.reload(timeout=120_000)
    page.wait_for_selector(CONNECTED, timeout=120_000)
    page.get_by_text(landmark).first.wait_for(timeout=120_000)
    settle(page)


def _grid_cells(page) -> dict[tuple[int, int], str]:
    """The first table editor's cells as its accessible copy holds them:
    (row, column) -> text, columns counted from 0 after the row marker."""
    cells = page.evaluate("""() => Array.from(document.querySelector(
        '[data-testid=stDataFrame]').querySelectorAll('table td[id^=glide-cell-]')).map(
        e => [e.id, e.innerText])""")
    out = {}
    for cell_id, value in cells:
        col, row = (int(x) for x in cell_id.split("-")[2:4])
        out[(row, col - 1)] = value
    return out


def _grid_headers(page) -> list[str]:
    """The first table editor's column headers, in the order shown."""
    return page.evaluate("""() => Array.from(document.querySelector(
        '[data-testid=stDataFrame]').querySelectorAll('table th')).map(
        e => e.innerText.trim()).filter(t => t)""")


def _type_cell(page, row: int, column: int, value) -> None:
    """Type into a table editor cell as a user does: click the row, walk to the
    column with the arrow keys, Enter to edit, type, Enter to keep."""
    box = page.locator('[data-testid="stDataFrame"]').first.bounding_box()
    page.mouse.click(box["x"] + 50, box["y"] + 35 + 35 * row + 17)  # the row's first cell
    page.wait_for_timeout(200)
    for _ in range(column):
        page.keyboard.press("ArrowRight")
    page.keyboard.press("Enter")
    page.wait_for_timeout(200)
    page.keyboard.type(str(value), delay=20)
    page.keyboard.press("Enter")
    page.wait_for_timeout(300)
    settle(page)
    assert _grid_cells(page)[(row, column)] == str(value)


def _confirm_code(page) -> str:
    """The comparison as ``tradeoff confirm`` prints it (in its expander)."""
    box = page.locator('[data-testid="stExpander"]').filter(has_text="prints it").first
    if not box.locator('[data-testid="stCode"]').is_visible():
        box.locator("summary").click()
        settle(page)
    return box.locator('[data-testid="stCode"]').inner_text()


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

    proc, port = start_workbench([str(folder / FLOUR.name)], log=tmp_path / "server.log",
                                 env={"TRADEOFF_SESSIONS": str(tmp_path / "sessions")})
    try:
        with sync_playwright() as pw:
            browser = launch_chromium(pw)
            try:
                page = browser.new_page(viewport={"width": 1400, "height": 1100})
                page.goto(f"http://127.0.0.1:{port}/targets", timeout=120_000)
                page.wait_for_selector(CONNECTED, timeout=120_000)
                page.get_by_text("Best settings now").wait_for(timeout=120_000)
                settle(page)
                reference = _best_now(page)

                def choose(key: str, option: str) -> None:
                    box = page.locator(f".st-key-ns_{nonce}_{key} input")
                    box.click()
                    if not page.get_by_role("option").count():
                        box.press("ArrowDown")  # focused but closed: open the list
                    page.get_by_role("option", name=option, exact=True).click()
                    settle(page)

                def type_in(key: str, value) -> None:
                    box = page.locator(f".st-key-ns_{nonce}_{key} input")
                    box.fill(str(value))
                    box.press("Enter")
                    settle(page)

                page.goto(f"http://127.0.0.1:{port}/new_study", timeout=120_000)
                page.wait_for_selector(CONNECTED, timeout=120_000)
                settle(page)
                page.locator(".st-key-ns_upload input[type=file]").set_input_files(
                    str(upload))
                page.get_by_text("1. What each column is").wait_for(timeout=120_000)
                settle(page)
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
                saved = tmp_path / "saved"
                saved.mkdir()
                study_file = _download(page, "Download ", saved)
                shutil.copy(FLOUR_CSV, saved / FLOUR_CSV.name)
                page.get_by_role("button", name="Open this study in the workbench").click()
                page.get_by_text("This study is open").wait_for(timeout=120_000)
                settle(page)
                page.get_by_role("link", name="Adjust goals and weights").click()
                page.get_by_text("Best settings now").wait_for(timeout=120_000)
                settle(page)
                assert _best_now(page) == reference
                sidebar = page.locator('[data-testid="stSidebar"]').inner_text()
                assert "gluten_free_flour_blend_invented_demo.toml" in sidebar
                page.reload(timeout=120_000)
                page.wait_for_selector(CONNECTED, timeout=120_000)
                page.get_by_text("Best settings now").wait_for(timeout=120_000)
                settle(page)
                assert _best_now(page) == reference  # the reload kept study and goals
                _check(page, "targets after reload")
                _close_the_loop(page, study_file, tmp_path)
            finally:
                browser.close()
    finally:
        stop_workbench(proc)


def _close_the_loop(page, study_file: Path, tmp_path: Path) -> None:
    """Pin the best balance, make its batch sheet, type a confirmation batch."""
    # the downloaded study file, read by the library, is the shipped study
    study = load_study(study_file)
    shipped = load_study(FLOUR)
    assert [c.name for c in study.factors] == [c.name for c in shipped.factors]
    assert [(r.name, r.goal) for r in study.responses] == [
        (r.name, r.goal) for r in shipped.responses]
    fitted = fit_study(study)
    best = optimize(study, fit=fitted).best

    _go(page, "Recommended settings", "Pin ")
    page.locator(".st-key-r_pin button").click()
    settle(page)
    _check(page, "recommended settings")

    _go(page, "Batch sheet", "Make in this order")
    size = page.get_by_label("Batch size (g)")
    size.fill("750")
    size.press("Enter")
    settle(page)
    _check(page, "batch sheet")
    _shoot(page, "batch_sheet_flour")
    _reload_at(page, "Make in this order")
    assert page.get_by_label("Batch size (g)").input_value() == "750"
    sheets = tmp_path / "sheets"
    sheets.mkdir()
    sheet = batch_sheet(study, {best.label: dict(best.settings)}, batch_g=750.0,
                        step_g=1.0, batches=2, seed=study.seed)
    assert _download(page, "Batch sheet (.csv)", sheets).read_bytes() == csv_bytes(
        sheet.table())

    # the confirmation table starts from the batch sheet's batches, in its order
    _go(page, "Confirmation runs", "Keep them")
    names = ["run", *study.factor_names, *study.response_names]
    cells = _grid_cells(page)
    assert [cells[(i, 0)] for i in range(len(sheet.order))] == sheet.order["run"].tolist()
    # the settings come from the sheet: the results alone are in view
    heads = _grid_headers(page)
    assert heads == ["run id", *study.response_names]
    measured = {r.name: round(best.predictions[r.name], 2) for r in study.responses}
    for name, value in measured.items():
        _type_cell(page, 0, heads.index(name), value)
    _check(page, "confirmation runs")
    shown = _confirm_code(page)
    _shoot(page, "confirm_flour")
    _reload_at(page, "Keep them")  # the typed batch is kept, not saved yet
    assert _grid_cells(page)[(0, heads.index("crumb_hardness"))] == str(
        measured["crumb_hardness"])
    assert _confirm_code(page) == shown

    # the same batch written as a confirmation table beside the downloaded study
    # file, then compared by the library: the page shows exactly that
    row = {"run": sheet.order["run"].iloc[0], **best.settings, **measured}
    table = study_file.with_name(study_file.stem + "_confirmations.csv")
    pd.DataFrame([row], columns=names).to_csv(table, index=False)
    with study_file.open("a", encoding="utf-8") as out:
        out.write(f'\n[[confirmations]]\ndata = "{table.name}"\n')
    check = check_confirmations(load_study(study_file), fit=fitted)
    assert shown == check.text()
    assert check.table["inside"].all()
