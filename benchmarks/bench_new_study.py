"""The new-study view in a real browser: how long each change takes to settle.

Starts the workbench, opens 'New study', uploads the invented flour blend's bare
table, then times (from the action to the page settled, as bench_browser.py
does) changes a user makes while declaring a study: a column's role, a goal
chosen, a limit typed, a label typed. Each is repeated; printed beside the
0.5 s target for a change, with the rerun of a one-button Streamlit page (the
floor) measured in the same browser.
Run: .venv/bin/python benchmarks/bench_new_study.py
"""
from __future__ import annotations

import hashlib
import statistics
import sys
import tempfile
import time
from pathlib import Path

from tradeoff_ui.drive import launch_chromium, settle, start_workbench, stop_workbench

sys.path.insert(0, str(Path(__file__).parent))
from bench_browser import (CHANGE_TARGET, QUIET, VIEWPORT, floor_reruns,  # noqa: E402
                           floor_server, timed_choice, timed_typing)

REPEAT = 5
CSV = Path(__file__).resolve().parents[1] / "demo_data" / "flour_blend_runs.csv"


def main() -> None:
    from playwright.sync_api import sync_playwright

    tmp = tempfile.TemporaryDirectory()
    sessions = str(Path(tmp.name) / "sessions")  # not beside the user's studies
    proc, port = start_workbench([], env={"TRADEOFF_SESSIONS": sessions})
    nonce = hashlib.sha256(CSV.name.encode() + b"\0" + CSV.read_bytes()).hexdigest()[:8]
    rows = []
    try:
        with floor_server() as floor_port, sync_playwright() as pw:
            browser = launch_chromium(pw)
            rows.append(("baseline: a rerun of a one-button page",
                         floor_reruns(browser, floor_port, REPEAT)))

            page = browser.new_page(viewport=VIEWPORT)
            page.goto(f"http://127.0.0.1:{port}/new_study")
            page.get_by_text("Start from scratch").first.wait_for(timeout=120_000)
            settle(page, quiet=QUIET)
            start = time.perf_counter()
            page.locator(".st-key-ns_upload input[type=file]").set_input_files(str(CSV))
            page.get_by_text("1. What each column is").wait_for(timeout=120_000)
            rows.append(("upload the table (roles guessed)",
                         [settle(page, start, quiet=QUIET)]))

            def choose(key: str, option: str) -> float:
                return timed_choice(page, page.locator(f".st-key-ns_{nonce}_{key} input"),
                                    option)

            def type_in(key: str, value) -> float:
                return timed_typing(page, page.locator(f".st-key-ns_{nonce}_{key} input"),
                                    value)

            cases = {"a column's role": [], "a goal chosen": [], "a limit typed": [],
                     "a label typed": []}
            for i in range(REPEAT):
                cases["a column's role"].append(
                    choose("role_point", "notes" if i % 2 else "block (day, lot)"))
                cases["a goal chosen"].append(
                    choose("goal_crumb_hardness", "lower is better" if i % 2 == 0
                           else "no goal"))
                cases["a limit typed"].append(type_in("high_bake_temp", 205 + (i % 2)))
                cases["a label typed"].append(type_in("label_rice_flour", f"Rice {i}"))
            rows += [(f"new study: {k}", v) for k, v in cases.items()]
            browser.close()
    finally:
        stop_workbench(proc)
        tmp.cleanup()
    print("New study view in chromium at 1400 px, the flour blend's table, to the page "
          "settled")
    print(f"{'case':<44} {'median s':>9} {'max s':>7} {'target s':>9}  met")
    for name, t in rows:
        med = statistics.median(t)
        target = CHANGE_TARGET if not name.startswith("upload") else float("nan")
        met = "" if target != target else ("yes" if med <= target else "no")
        print(f"{name:<44} {med:>9.2f} {max(t):>7.2f} {target:>9.1f}  {met}")


if __name__ == "__main__":
    main()
