"""Benchmark: ``tradeoff report --out x.html`` on the demo study, as a whole process.

Printed side by side with two baselines measured in the same run, A B C A B C:
- the libraries' floor: a process that only imports what any report needs
  (numpy, pandas, scipy.stats, altair, vl_convert) and does nothing;
- ``tradeoff optimize`` on the same study (the same fit and search, no charts),
so the table shows how much of the report's time is the charts and the page.
Then where the report's own time goes, section by section, in one process.
The issue's target for the whole report is 1.5 s.

Run: .venv/bin/python benchmarks/bench_report.py [--runs N]
"""
from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
DEMOS = [REPO / "demo_data" / "snack_bar.toml", REPO / "demo_data" / "flour_blend.toml"]
TRADEOFF = str(Path(sys.executable).parent / "tradeoff")
FLOOR = [sys.executable, "-c", "import numpy, pandas, scipy.stats, altair, vl_convert"]
TARGET = 1.5


def wall(cmd: list[str]) -> float:
    start = time.perf_counter()
    done = subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True,
                          env={**os.environ, "OPENBLAS_NUM_THREADS": "1"})
    if done.returncode:
        raise SystemExit(f"{' '.join(cmd)} failed: {done.stderr.strip()[-300:]}")
    return time.perf_counter() - start


def sections(demo: Path) -> list[tuple[str, float]]:
    """Seconds per step of one report, in this process (libraries already loaded)."""
    from tradeoff import load_study
    from tradeoff.report.data import report_data
    from tradeoff.report.html import build_report_html

    steps = []
    start = time.perf_counter()
    study = load_study(demo)
    steps.append(("open the study", time.perf_counter() - start))
    start = time.perf_counter()
    data = report_data(study)
    steps.append(("fit, search, chances (report data)", time.perf_counter() - start))
    start = time.perf_counter()
    build_report_html(study, data=data)
    steps.append(("the page: every section and chart", time.perf_counter() - start))
    return steps


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=5)
    runs = parser.parse_args().runs
    with tempfile.TemporaryDirectory() as tmp:
        for demo in DEMOS:
            out = str(Path(tmp) / "x.html")
            cases = {"libraries' floor (imports only)": FLOOR,
                     "tradeoff optimize (no charts)": [TRADEOFF, "optimize", str(demo)],
                     "tradeoff report --out x.html": [TRADEOFF, "report", str(demo),
                                                      "--out", out]}
            for cmd in cases.values():
                wall(cmd)  # warm the file cache
            times = {name: [] for name in cases}
            for _ in range(runs):
                for name, cmd in cases.items():
                    times[name].append(wall(cmd))
            print(f"\n{demo.name}: whole processes, {runs} runs each, interleaved "
                  f"(report target {TARGET} s)")
            print(f"{'process':<36} {'median s':>9} {'fastest s':>10}")
            for name, t in times.items():
                print(f"{name:<36} {statistics.median(t):>9.2f} {min(t):>10.2f}")
            print(f"report page size: {Path(out).stat().st_size / 1e6:.2f} MB")
    print("\nIn one process (libraries loaded, renderer started by a first report):")
    sections(DEMOS[0])
    for name, seconds in sections(DEMOS[0]):
        print(f"  {name:<40} {seconds:6.2f} s")


if __name__ == "__main__":
    main()
