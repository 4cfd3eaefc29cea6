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

sys.path.insert(0, str(Path(__file__).parent))
from bench_browser import (ARGS, CHANGE_TARGET, CHROMIUM, FLOOR_PAGE, free_port,  # noqa: E402
                           launch, settle, stop, wait_healthy)

REPEAT = 5
CSV = Path(__file__).resolve().parents[1] / "demo_data" / "flour_blend_runs.csv"


def main() -> None:
    from playwright.sync_api import sync_playwright

    port, floor_port = free_port(), free_port()
    tmp = tempfile.TemporaryDirectory()
    import os
    os.environ["TRADEOFF_SESSIONS"] = str(Path(tmp.name) / "sessions")
    tradeoff = Path(sys.executable).with_name("tradeoff")
    proc = launch([str(tradeoff), "app", "--port", str(port)])
    floor_app = Path(tmp.name) / "floor.py"
    floor_app.write_text(FLOOR_PAGE)
    floor = launch([sys.executable, "-m", "streamlit", "run", str(floor_app),
                   "--server.port", str(floor_port), "--server.headless", "true",
                   "--browser.gatherUsageStats", "false"])
    nonce = hashlib.sha256(CSV.name.encode() + b"\0" + CSV.read_bytes()).hexdigest()[:8]
    rows = []
    try:
        wait_healthy(port)
        wait_healthy(floor_port)
        with sync_playwright() as pw:
            browser = pw.chromium.launch(executable_path=CHROMIUM, headless=True, args=ARGS)
            page = browser.new_page(viewport={"width": 1400, "height": 1100})
            page.goto(f"http://127.0.0.1:{floor_port}/")
            page.get_by_text("floor page").first.wait_for(timeout=120_000)
            settle(page, time.perf_counter())
            times = []
            for _ in range(REPEAT):
                start = time.perf_counter()
                page.get_by_role("button", name="again").click()
                page.wait_for_timeout(30)
                times.append(settle(page, start))
            rows.append(("baseline: a rerun of a one-button page", times))
            page.close()

            page = browser.new_page(viewport={"width": 1400, "height": 1100})
            page.goto(f"http://127.0.0.1:{port}/new_study")
            page.get_by_text("Start from scratch").first.wait_for(timeout=120_000)
            settle(page, time.perf_counter())
            start = time.perf_counter()
            page.locator(".st-key-ns_upload input[type=file]").set_input_files(str(CSV))
            page.get_by_text("1. What each column is").wait_for(timeout=120_000)
            rows.append(("upload the table (roles guessed)", [settle(page, start)]))

            def choose(key: str, option: str) -> float:
                box = page.locator(f".st-key-ns_{nonce}_{key} input")
                box.click()
                if not page.get_by_role("option").count():
                    box.press("ArrowDown")
                option_box = page.get_by_role("option", name=option, exact=True)
                start = time.perf_counter()
                option_box.click()
                return settle(page, start)

            def type_in(key: str, value) -> float:
                box = page.locator(f".st-key-ns_{nonce}_{key} input")
                box.fill(str(value))
                start = time.perf_counter()
                box.press("Enter")
                page.wait_for_timeout(30)
                return settle(page, start)

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
        stop(proc)
        stop(floor)
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
