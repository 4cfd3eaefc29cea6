"""The plan view in a real browser: how long each change takes to settle.

Starts the workbench on a study, opens 'Plan the runs', then times (from the
action to the page settled, as bench_browser.py does) the changes a user makes
while choosing runs: another design, another model to judge for, the number of
runs of an optimal plan typed, the second plan switched on and off. Each is
repeated; printed beside the targets (a change 0.5 s, a first load 1.5 s), with the rerun of a
one-button Streamlit page (the floor) measured in the same browser.
Run: .venv/bin/python benchmarks/bench_plan_view.py [STUDY.toml]  (default: the demo)
"""
from __future__ import annotations

import statistics
import sys
import tempfile
import time
from pathlib import Path

from tradeoff_ui.drive import launch_chromium, settle, start_workbench, stop_workbench

sys.path.insert(0, str(Path(__file__).parent))
from bench_browser import (CHANGE_TARGET, LOAD_TARGET, QUIET, VIEWPORT,  # noqa: E402
                           floor_first_loads, floor_reruns, floor_server, timed_choice,
                           timed_typing)

REPEAT = 4


def main() -> None:
    from playwright.sync_api import sync_playwright

    tmp = tempfile.TemporaryDirectory()
    study = [str(Path(a).resolve()) for a in sys.argv[1:2]]
    sessions = str(Path(tmp.name) / "sessions")  # not beside the user's studies
    proc, port = start_workbench(study, env={"TRADEOFF_SESSIONS": sessions})
    rows = []
    try:
        with floor_server() as floor_port, sync_playwright() as pw:
            browser = launch_chromium(pw)
            # the first visit warms the server; not counted
            rows.append(("baseline: first load of a one-button page",
                         floor_first_loads(browser, floor_port, 3)[1:]))
            rows.append(("baseline: a rerun of a one-button page",
                         floor_reruns(browser, floor_port, REPEAT)))

            times = []
            for visit in range(3):  # the first visit opens the study on the server
                page = browser.new_page(viewport=VIEWPORT)
                start = time.perf_counter()
                page.goto(f"http://127.0.0.1:{port}/plan")
                page.get_by_text("Run sheet").first.wait_for(timeout=120_000)
                times.append(settle(page, start, quiet=QUIET))
                if visit < 2:
                    page.close()
            rows.append(("first load of the plan view (a fresh tab)", times[1:]))

            def box_of(key: str):
                """The input of the widget whose key matches ``key`` (* for the epoch)."""
                parts = "".join(f"[class*='{'st-key-' * (i == 0)}{part}']"
                                for i, part in enumerate(key.split("*")))
                return page.locator(f"{parts} input").first

            def choose(key_part: str, option: str) -> float:
                return timed_choice(page, box_of(key_part), option)

            def options_of(key_part: str) -> list[str]:
                box = box_of(key_part)
                box.click()
                if not page.get_by_role("option").count():
                    box.press("ArrowDown")
                names = [o.inner_text() for o in page.get_by_role("option").all()]
                box.press("Escape")
                page.wait_for_timeout(100)
                return names

            def type_in(key_part: str, value) -> float:
                return timed_typing(page, box_of(key_part), value)

            def flip(label: str) -> float:
                start = time.perf_counter()
                page.get_by_text(label, exact=True).click()
                page.wait_for_timeout(30)
                return settle(page, start, quiet=QUIET)

            designs = options_of("pa_*_design")
            blend = any(d.startswith("simplex") for d in designs)
            cases: dict[str, list[float]] = {"another design": []}
            if not blend:
                cases["another model to judge for"] = []
            optimal = next((d for d in designs if d.startswith("optimal")), None)
            if optimal:
                cases["optimal: runs typed"] = []
            cases["second plan on / off"] = []
            others = [d for d in designs if not d.startswith(("optimal", "definitive"))]
            models = [] if blend else options_of("p_model_")
            for i in range(REPEAT):
                cases["another design"].append(choose("pa_*_design", others[i % len(others)]))
                if not blend:
                    cases["another model to judge for"].append(
                        choose("p_model_", models[1 + i % (len(models) - 1)]))
            if optimal:
                choose("pa_*_design", optimal)
                for i in range(REPEAT):
                    cases["optimal: runs typed"].append(type_in("pa_*_n", 14 + i))
            for _ in range(REPEAT):
                cases["second plan on / off"].append(flip("Compare with a second plan"))
            rows += [(f"plan: {k}", v) for k, v in cases.items()]
            browser.close()
    finally:
        stop_workbench(proc)
        tmp.cleanup()
    name = Path(study[0]).name if study else "the demo study"
    print(f"Plan view in chromium at 1400 px, {name}, to the page settled")
    print(f"{'case':<44} {'median s':>9} {'max s':>7} {'target s':>9}  met")
    for label, t in rows:
        med = statistics.median(t)
        target = LOAD_TARGET if "first load" in label else CHANGE_TARGET
        met = "yes" if med <= target else "no"
        print(f"{label:<44} {med:>9.2f} {max(t):>7.2f} {target:>9.1f}  {met}")


if __name__ == "__main__":
    main()
