"""Benchmark: how long the command line takes to start, as whole processes.

Each command runs in turn with ``python -c "import numpy"`` (the yardstick: no
command that does real work can start faster than numpy loads), A B A B ..., and
the ratio is taken pair by pair so that a drifting machine moves both alike.
Then ``tradeoff check``, ``fit``, ``optimize`` and ``report`` run on the demo
study as whole processes, each followed by where its time goes (the import of
the library's parts against the work itself, from ``-X importtime`` and a
one-shot profile).

Run: .venv/bin/python benchmarks/bench_startup.py [--runs N]
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
DEMO = REPO / "demo_data" / "snack_bar.toml"
BIN = Path(sys.executable).parent
TRADEOFF = str(BIN / "tradeoff")
YARDSTICK = [sys.executable, "-c", "import numpy"]
HELP_COMMANDS = ["check", "fit", "plan", "optimize", "report", "confirm", "app"]


def wall(cmd: list[str]) -> float:
    start = time.perf_counter()
    subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=False,
                   env={**os.environ, "OPENBLAS_NUM_THREADS": "1"})
    return time.perf_counter() - start


def paired(cmd: list[str], runs: int) -> tuple[float, float, float]:
    """Median seconds of cmd, of the yardstick, and the median of the pair ratios."""
    wall(cmd), wall(YARDSTICK)  # warm the file cache
    a, b = [], []
    for _ in range(runs):
        a.append(wall(cmd))
        b.append(wall(YARDSTICK))
    ratios = [x / y for x, y in zip(a, b)]
    return statistics.median(a), statistics.median(b), statistics.median(ratios)


def import_share(args: list[str]) -> tuple[float, float]:
    """Seconds spent importing (self-reported by -X importtime) and in total."""
    code = ("import sys; from tradeoff.cli import main; "
            f"sys.exit(main({args!r}))")
    start = time.perf_counter()
    out = subprocess.run([sys.executable, "-X", "importtime", "-c", code],
                         capture_output=True, text=True,
                         env={**os.environ, "OPENBLAS_NUM_THREADS": "1"})
    total = time.perf_counter() - start
    top = [line for line in out.stderr.splitlines()
           if line.startswith("import time:") and line.count("|") == 2
           and not line.split("|")[2].startswith("  ")]
    imported = sum(int(line.split("|")[1]) for line in top[1:]) / 1e6  # header first
    return imported, total


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=7)
    runs = parser.parse_args().runs

    print(f"start-up against python -c 'import numpy', median of {runs} pairs "
          "(target: ratio at most 2.0)")
    print(f"{'command':<34} {'seconds':>8} {'numpy':>8} {'ratio':>6}")
    rows = [["--help"], *([c, "--help"] for c in HELP_COMMANDS)]
    for args in rows:
        a, b, r = paired([TRADEOFF, *args], runs)
        print(f"{'tradeoff ' + ' '.join(args):<34} {a:8.3f} {b:8.3f} {r:6.2f}")

    print()
    print(f"whole commands on the demo study, median of {max(3, runs // 2)} runs")
    print(f"{'command':<34} {'seconds':>8} {'imports':>8} {'work':>8}")
    with tempfile.TemporaryDirectory() as tmp:
        jobs = [["check", str(DEMO)], ["fit", str(DEMO)], ["optimize", str(DEMO)],
                ["report", str(DEMO), "--out", str(Path(tmp) / "r.html")]]
        for args in jobs:
            times = [wall([TRADEOFF, *args]) for _ in range(max(3, runs // 2))]
            imported, total = import_share(args)
            work = max(total - imported, 0.0)
            print(f"{'tradeoff ' + args[0]:<34} {statistics.median(times):8.3f} "
                  f"{imported:8.3f} {work:8.3f}")


if __name__ == "__main__":
    main()
