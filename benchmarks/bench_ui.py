"""Benchmark: how fast the workbench re-renders after a widget change (demo study).

Drives the app headless with Streamlit's AppTest and times ``run()`` after
each change, the whole script rerun: read state, widgets, cached library
calls, charts. Printed side by side with a baseline (a rerun with nothing
changed, where every library call is served from the cache) and with the
300 ms median budget of the issue.

- targets, new weight: each change is a weight not seen before, so the
  search runs again (cache miss): the worst case a user meets;
- targets, weight seen before: the search is served from the cache;
- results, new map axes / new what-if setting: the map grid and the
  what-if chances are computed again.

Run: .venv/bin/python benchmarks/bench_ui.py
"""
from __future__ import annotations

import logging
import statistics
import time
from importlib.resources import files

from streamlit.testing.v1 import AppTest

logging.getLogger("streamlit").setLevel(logging.ERROR)
APP = str(files("tradeoff_ui") / "app.py")
BUDGET = 0.300
REPEAT = 15


def timed(at: AppTest) -> float:
    start = time.perf_counter()
    at.run()
    elapsed = time.perf_counter() - start
    if at.exception:
        raise RuntimeError(at.exception[0].message)
    return elapsed


def app_on(page: str) -> AppTest:
    at = AppTest.from_file(APP, default_timeout=60)
    at.run()
    at.switch_page(f"views/{page}.py")
    at.run()
    return at


def main() -> None:
    rows = []
    at = app_on("targets")
    rows.append(("targets, no change (baseline)", [timed(at) for _ in range(REPEAT)]))
    weights = [1.0 + 0.25 * i for i in range(1, REPEAT + 1)]
    times = []
    for w in weights:
        at.number_input(key="g1.liking.weight").set_value(w)
        times.append(timed(at))
    rows.append(("targets, new weight (search runs)", times))
    times = []
    for w in weights:
        at.number_input(key="g1.liking.weight").set_value(w)
        times.append(timed(at))
    rows.append(("targets, weight seen before (cached)", times))

    at = app_on("results")
    rows.append(("results, no change (baseline)", [timed(at) for _ in range(REPEAT)]))
    times = []
    for i in range(REPEAT):
        value = 20.5 + 0.5 * i
        key = next(n.key for n in at.number_input if n.key.endswith(".protein"))
        at.number_input(key=key).set_value(value)
        times.append(timed(at))
    rows.append(("results, new what-if setting", times))
    times = []
    for i in range(REPEAT):
        at.selectbox(key="r_map_value").set_value(["D", "liking", "cost"][i % 3])
        at.selectbox(key="r_map_x").set_value(["protein", "glycerol", "mix_temp"][i % 3])
        times.append(timed(at))
    rows.append(("results, map switched (3 maps in turn)", times))

    print(f"Workbench rerun after a widget change, demo study, {REPEAT} changes each "
          f"(budget: median {BUDGET * 1000:.0f} ms)")
    print(f"{'case':<40} {'median ms':>10} {'max ms':>8}  within budget")
    for name, t in rows:
        med = statistics.median(t)
        print(f"{name:<40} {med * 1000:>10.0f} {max(t) * 1000:>8.0f}  "
              f"{'yes' if med <= BUDGET else 'NO'}")


if __name__ == "__main__":
    main()
