"""Benchmark: the workbench as a user sees it, in a real browser (demo study).

Starts ``tradeoff app`` on the demo and drives it with playwright and Debian's
chromium (/usr/bin/chromium; never a downloaded browser), as the browser test
does. Every time runs from the user's action to the page settled: no script
running, no placeholder showing, every chart drawn, nothing changing for
``QUIET`` seconds (the quiet time itself is not counted).

- first load of each view, in a fresh browser tab (the server has already
  opened the study once, as after any first visit);
- each view reached from the sidebar in an open tab (how a user moves on);
- targets: a weight changed to a value not seen before, so the search runs
  again (the worst case a user meets);
- targets: a weight changed back to a value seen before (served from cache);
- targets: a limit changed (new values, so the search runs again);
- recommended settings: another solution chosen to look closer at (the maps,
  slices and what-if follow it);
- recommended settings: another map asked for (what the map shows);
- recommended settings: the slices along another factor.

Printed side by side with the targets (first load 1.5 s, a change 0.5 s
median) and with baselines measured in the same browser in the same run: the
first load of a one-line Streamlit page, and a change on it (a button that
reruns it): the floor any workbench view stands on (the framework's own page,
scripts, connection and rerun).
Run: .venv/bin/python benchmarks/bench_browser.py [STUDY.toml]   (default: the demo)
"""
from __future__ import annotations

import statistics
import sys
import tempfile
import time
from contextlib import contextmanager
from pathlib import Path

from tradeoff_ui.drive import launch_chromium, settle, start_workbench, stop_workbench

QUIET = 0.5
REPEAT = 7
VIEWPORT = {"width": 1400, "height": 1100}
VIEWS = {"study and runs": ("", "The same runs in coded units"),
         "what drives each response": ("models", "Coefficients, analysis of variance"),
         "targets and weights": ("targets", "Best settings now"),
         "recommended settings": ("results", "What if I make it like this?"),
         "take it with you": ("downloads", "The report")}
LOAD_TARGET, CHANGE_TARGET = 1.5, 0.5

FLOOR_PAGE = '''import streamlit as st
st.write("floor page")
st.button("again")
if st.query_params.get("parts"):  # the same page with one chart and one table
    import altair as alt
    import pandas as pd
    d = pd.DataFrame({"x": range(50), "y": range(50)})
    st.altair_chart(alt.Chart(d).mark_line().encode(x=alt.X("x:Q"), y=alt.Y("y:Q")))
    st.dataframe(d)
'''


@contextmanager
def floor_server():
    """FLOOR_PAGE served by bare Streamlit: its port, while the block runs."""
    with tempfile.TemporaryDirectory() as tmp:
        page = Path(tmp) / "floor.py"
        page.write_text(FLOOR_PAGE)
        proc, port = start_workbench([], command=[
            sys.executable, "-m", "streamlit", "run", str(page),
            "--server.headless", "true", "--browser.gatherUsageStats", "false"])
        try:
            yield port
        finally:
            stop_workbench(proc)


def floor_first_loads(browser, port: int, visits: int, query: str = "") -> list[float]:
    """Times of the floor page loaded in ``visits`` fresh tabs, one after another.

    The server runs the page's script for the first time on the first visit:
    callers that measure a warm server leave that one out.
    """
    times = []
    for _ in range(visits):
        page = browser.new_page(viewport=VIEWPORT)
        start = time.perf_counter()
        page.goto(f"http://127.0.0.1:{port}/{query}")
        page.get_by_text("floor page").first.wait_for(timeout=120_000)
        times.append(settle(page, start, quiet=QUIET))
        page.close()
    return times


def timed_choice(page, box, option: str) -> float:
    """Seconds to the page settled after ``option`` is picked in the select ``box``."""
    box.click()
    if not page.get_by_role("option").count():
        box.press("ArrowDown")
    option_box = page.get_by_role("option", name=option, exact=True)
    start = time.perf_counter()
    option_box.click()
    return settle(page, start, quiet=QUIET)


def timed_typing(page, box, value) -> float:
    """Seconds to the page settled after ``value`` is typed in ``box`` and Enter pressed."""
    box.fill(str(value))
    start = time.perf_counter()
    box.press("Enter")
    page.wait_for_timeout(30)
    return settle(page, start, quiet=QUIET)


def floor_reruns(browser, port: int, repeat: int) -> list[float]:
    """Times of ``repeat`` reruns of the floor page (its 'again' button clicked)."""
    page = browser.new_page(viewport=VIEWPORT)
    page.goto(f"http://127.0.0.1:{port}/")
    page.get_by_text("floor page").first.wait_for(timeout=120_000)
    settle(page, quiet=QUIET)
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        page.get_by_role("button", name="again").click()
        page.wait_for_timeout(30)
        times.append(settle(page, start, quiet=QUIET))
    page.close()
    return times


def change_limit(page) -> list[float]:
    """Times of a goal's first limit box typed to new values (the search runs again)."""
    from tradeoff.study.spec import LIMIT_WORDS

    labels = {w for words in LIMIT_WORDS.values() for w in words.values()}
    box = None
    for label in sorted(labels):
        found = page.locator(f'input[aria-label="{label}"]')
        if found.count():
            box = found.first
            break
    if box is None:
        return []
    start_value = float(box.input_value())
    times = []
    for i in range(REPEAT):
        box.fill(f"{start_value * (1 + 0.003 * (i + 1)):.6g}")
        start = time.perf_counter()
        box.press("Enter")
        page.wait_for_timeout(30)
        times.append(settle(page, start, quiet=QUIET))
    return times


def pick_each(page, key: str) -> list[float]:
    """Times of each other option of a select box picked in turn (up to REPEAT)."""
    box = page.locator(f".st-key-{key}")
    if not box.count():
        return []
    times = []
    for i in range(REPEAT):
        try:
            box.first.click(timeout=10_000)
            page.get_by_role("option").first.wait_for(timeout=10_000)
        except Exception:  # the list did not open: report what was measured
            page.keyboard.press("Escape")
            return times
        options = page.locator('[role="option"]:not([aria-selected="true"])')
        n = options.count()
        if n < 1:
            page.keyboard.press("Escape")
            return times
        start = time.perf_counter()
        options.nth(i % n).click()
        page.wait_for_timeout(30)
        times.append(settle(page, start, quiet=QUIET))
    return times


def main() -> None:
    from playwright.sync_api import sync_playwright

    study = [str(Path(a).resolve()) for a in sys.argv[1:2]]
    proc, port = start_workbench(study)
    rows = []
    try:
        base = f"http://127.0.0.1:{port}"
        with floor_server() as floor_port, sync_playwright() as pw:
            browser = launch_chromium(pw)
            # the first visit warms the server; not counted
            rows.append(("baseline: one-line Streamlit page",
                         floor_first_loads(browser, floor_port, 4)[1:], LOAD_TARGET))
            rows.append(("baseline: that page + 1 chart + 1 table",
                         floor_first_loads(browser, floor_port, 3, "?parts=1"), LOAD_TARGET))
            rows.append(("baseline: a rerun of that page",
                         floor_reruns(browser, floor_port, REPEAT), CHANGE_TARGET))
            page = browser.new_page(viewport=VIEWPORT)
            for path, ready in VIEWS.values():  # warm up: the server opens the study once
                page.goto(f"{base}/{path}")
                page.get_by_text(ready).first.wait_for(timeout=120_000)
                settle(page, quiet=QUIET)
            page.close()
            for name, (path, ready) in VIEWS.items():
                times = []
                for _ in range(3):
                    page = browser.new_page(viewport=VIEWPORT)
                    start = time.perf_counter()
                    page.goto(f"{base}/{path}")
                    page.get_by_text(ready).first.wait_for(timeout=120_000)
                    times.append(settle(page, start, quiet=QUIET))
                    charts = page.evaluate("document.querySelectorAll('.vega-embed').length")
                    tables = page.evaluate(
                        "document.querySelectorAll('[data-testid=\"stDataFrame\"]').length")
                    page.close()
                rows.append((f"first load: {name} ({charts}c {tables}t)", times, LOAD_TARGET))
            # each view reached from the sidebar, in one tab (how a user moves on)
            page = browser.new_page(viewport=VIEWPORT)
            page.goto(f"{base}/")
            page.get_by_text(VIEWS["study and runs"][1]).first.wait_for(timeout=120_000)
            settle(page, quiet=QUIET)
            links = {"what drives each response": "What drives each response",
                     "targets and weights": "Targets and weights",
                     "recommended settings": "Recommended settings",
                     "take it with you": "Take it with you",
                     "study and runs": "Study and runs"}
            hops = {name: [] for name in links}
            for _ in range(3):
                for name, link in links.items():
                    start = time.perf_counter()
                    page.get_by_role("link", name=link).first.click()
                    page.get_by_text(VIEWS[name][1]).first.wait_for(timeout=120_000)
                    hops[name].append(settle(page, start, quiet=QUIET))
            page.close()
            for name, times in hops.items():
                rows.append((f"from the sidebar: {name}", times, LOAD_TARGET))
            page = browser.new_page(viewport=VIEWPORT)
            page.goto(f"{base}/targets")
            page.get_by_text("Best settings now").first.wait_for(timeout=120_000)
            settle(page, quiet=QUIET)
            box = page.locator('input[aria-label="Weight"]').first
            new, seen = [], []
            for i in range(REPEAT):
                for value, times in ((f"{1.25 + 0.25 * i:g}", new), ("1", seen)):
                    box.fill(value)
                    start = time.perf_counter()
                    box.press("Enter")
                    page.wait_for_timeout(30)
                    times.append(settle(page, start, quiet=QUIET))
            rows.append(("targets: new weight (search runs)", new, CHANGE_TARGET))
            rows.append(("targets: weight seen before (cached)", seen, CHANGE_TARGET))
            rows.append(("targets: new limit (search runs)", change_limit(page),
                         CHANGE_TARGET))
            page.close()
            page = browser.new_page(viewport=VIEWPORT)
            page.goto(f"{base}/results")
            page.get_by_text("What if I make it like this?").first.wait_for(timeout=120_000)
            settle(page, quiet=QUIET)
            for name, key in (("results: another solution chosen", "r_chosen"),
                              ("results: another map", "r_map_value"),
                              ("results: slices along another factor", "r_slice_factor")):
                times = pick_each(page, key)
                if times:
                    rows.append((name, times, CHANGE_TARGET))
            browser.close()
    finally:
        stop_workbench(proc)
    print(f"Workbench in chromium at 1400 px, demo study, to the page settled "
          f"(nothing running or changing for {QUIET:.1f} s, not counted)")
    print("(Nc Mt: the view draws N charts and M tables)")
    print(f"{'case':<52} {'median s':>9} {'max s':>7} {'target s':>9}  met")
    for name, t, target in rows:
        med = statistics.median(t)
        print(f"{name:<52} {med:>9.2f} {max(t):>7.2f} {target:>9.1f}  "
              f"{'yes' if med <= target else 'NO'}")


if __name__ == "__main__":
    main()
