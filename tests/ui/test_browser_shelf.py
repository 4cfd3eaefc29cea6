"""The shelf-life demo in a real browser: the recommendation carries its storage flag.

Starts ``tradeoff app`` on demo_data/snack_bar_shelf.toml (storage to 26 weeks at
20 degC) and checks, against the library's own figures and the storage table
read independently:

- every solution whose predicted shelf life lies beyond 1.5 times the last
  storage time (39 weeks; ICH Q1E (2003) 2.4.1.2 would allow up to twice, at most
  12 months beyond: the tool is stricter) shows no chance, and the chosen one
  says which storage time would support it (the predicted weeks / 1.5, rounded up);
- the goal of 52 weeks is warned at the goal, on the targets view;
- the runs table marks the runs whose shelf life lies past the storage;
- the warnings come one box per kind, and the cautions once.

Needs /usr/bin/chromium and the playwright package (see test_browser.py).
"""
from __future__ import annotations

import math
from pathlib import Path

import pandas as pd
import pytest

from test_browser import _require_browser
from tradeoff_ui.drive import (CONNECTED, launch_chromium, settle, start_workbench,
                               stop_workbench)

SHELF = Path(__file__).resolve().parents[2] / "demo_data" / "snack_bar_shelf.toml"


@pytest.fixture(scope="module")
def app(tmp_path_factory):
    _require_browser()
    from playwright.sync_api import sync_playwright

    proc, port = start_workbench([str(SHELF)],
                                 log=tmp_path_factory.mktemp("shelf") / "server.log")
    try:
        with sync_playwright() as pw:
            browser = launch_chromium(pw)
            try:
                yield browser, f"http://127.0.0.1:{port}"
            finally:
                browser.close()
    finally:
        stop_workbench(proc)


def _open(app, path: str, ready: str, width: int = 1400):
    browser, url = app
    page = browser.new_page(viewport={"width": width, "height": 2400})
    page.goto(f"{url}/{path}", timeout=120_000)
    page.wait_for_selector(CONNECTED, timeout=120_000)
    page.get_by_text(ready).first.wait_for(timeout=120_000)
    settle(page)
    assert page.locator('[data-testid="stException"]').count() == 0
    return page


def _table(page, index: int) -> list[list[str]]:
    """The cells of the index-th table of the view, row by row (its accessible copy)."""
    table = page.locator('[data-testid="stDataFrame"]').nth(index).locator("table")
    table.wait_for(state="attached", timeout=60_000)
    return table.evaluate("""t => [...t.querySelectorAll('tr')].map(
        r => [...r.querySelectorAll('th, td')].map(c => c.innerText.trim()))""")


def _last_storage_week() -> float:
    # read from the storage table itself, not from the tool
    raw = pd.read_csv(SHELF.parent / "snack_bar_storage_temps.csv")
    return float(raw.loc[raw["storage_temp"] == 20, "week"].max())


def test_recommendation_carries_the_storage_flag(app):
    import tradeoff

    last = _last_storage_week()
    assert last == 26
    reach = 1.5 * last
    study = tradeoff.load_study(SHELF)
    result = tradeoff.optimize(study, top=5, seed=study.seed)
    page = _open(app, "results", "What if I make it like this?")
    try:
        solutions = _table(page, 0)
        col = solutions[0].index("all limits met")
        rows = {r[0]: r for r in solutions[1:] if r}
        assert set(rows) == {s.label for s in result.solutions}
        for s in result.solutions:
            far = s.responses["shelf_life_20C"].predicted > reach
            assert (rows[s.label][col] == "not stated") == far, (s.label, rows[s.label])
        best = result.best.responses["shelf_life_20C"]
        assert best.predicted > reach, "the demo's recommendation lies past the storage"
        main = page.locator('[data-testid="stMain"]').inner_text()
        need = math.ceil(best.predicted / 1.5)
        assert (f"of {best.predicted:.3g} weeks lies beyond {reach:g} weeks, the longest "
                f"this storage study (to {last:g} weeks) can support") in main
        assert f"store to at least {need:g} weeks" in main
        assert "chance that every response lands within its limits: not stated" in main
        predictions = _table(page, 1)
        col = predictions[0].index("chance in limits")
        shelf_row = next(r for r in predictions if r and r[0].startswith(
            "Shelf life at 20 degC until 35 N (95 % bound"))
        assert shelf_row[col] == "not stated"
        # the figures of the row are the recommendation's own (one recipe)
        assert shelf_row[1] == f"{best.predicted:.4g}"
        # the cautions once: the food caution's first sentence appears one time
        assert main.count("A recommendation is a suggestion for what to make") == 1
    finally:
        page.close()


def test_goal_beyond_the_storage_is_warned_at_the_goal(app):
    page = _open(app, "targets", "Best settings now")
    try:
        main = page.locator('[data-testid="stMain"]').inner_text()
        assert ("This goal names 52 weeks, beyond 39 weeks, the longest this storage "
                "study (to 26 weeks) can support") in main
        assert main.count("This goal names") == 1  # only the goal past the storage
        # in the shelf life's own box, before the next goal's title
        shelf = main.index("Shelf life at 20 degC until 35 N (95 % bound")
        assert shelf < main.index("This goal names") < main.index(
            "Shelf life at 20 degC until 35 N (fitted mean")
    finally:
        page.close()


def test_runs_table_marks_extrapolated_shelf_lives_and_warnings_are_grouped(app):
    import tradeoff
    from tradeoff.derive.derived import derivation_table

    study = tradeoff.load_study(SHELF)
    values = derivation_table(study, "shelf_life_20C").set_index("run")["value"]
    last = _last_storage_week()
    page = _open(app, "", "The same runs in coded units")
    try:
        main = page.locator('[data-testid="stMain"]').inner_text()
        for run, v in values.items():
            # the mark names the response by its label, as the tables do
            label = study.response("shelf_life_20C").label
            marked = f"extrapolated {label} (" in next(
                (line for line in main.splitlines() if line.startswith(f"{run}:")), "")
            assert marked == (v > last), (run, v)
        # one box per kind: the far-extrapolated runs of both shelf lives in one box
        # that counts them, not one box per response
        boxes = page.locator('[data-testid="stAlertContentWarning"]').all_inner_texts()
        far = [b for b in boxes if "Extrapolated far beyond the data" in b]
        n_far = int((values > 1.5 * last).sum())
        assert len(far) == 1 and f"{n_far} runs" in far[0] and "2 responses" in far[0]
        assert len(boxes) <= 4, boxes
    finally:
        page.close()
