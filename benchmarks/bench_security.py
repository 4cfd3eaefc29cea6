"""Benchmark: how quickly hostile workbooks are refused, beside an honest workbook.

The security tests (tests/test_security.py) check that these files are refused
(or read as they are) with memory held low; how long that takes is measured
here, never in a test. Each case runs A B A B ... with its yardstick, and the
ratio is taken pair by pair so a drifting machine moves both alike:

- a compressed bomb (about 1 MB packed, 201 MB unpacked), against reading an
  honest 20-run workbook;
- a sheet of more than a million cells (22 MB counted as it is unpacked),
  against the same honest workbook;
- a sheet that claims a million rows (<dimension ref="A1:XFD1048576">) but holds
  two, against the same workbook with its true dimension;
- ``tradeoff check`` on a study whose runs file is the bomb, as a whole process,
  against ``tradeoff check`` on the same study with the honest workbook.

The "target" column is the bound a lab user would notice (the one the tests once
asserted): the refusal must stay well inside it on any machine.

Run: .venv/bin/python benchmarks/bench_security.py [--runs N]
"""
from __future__ import annotations

import argparse
import io
import os
import re
import statistics
import subprocess
import sys
import tempfile
import time
import zipfile
from pathlib import Path

import pandas as pd

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))

from security_payloads import PAYLOAD_STUDY, zip_archive  # noqa: E402
from tradeoff.errors import DataError  # noqa: E402
from tradeoff.study.intake import read_table  # noqa: E402
from tradeoff.study.limits import MAX_CELLS, MAX_UNPACKED_BYTES  # noqa: E402
from tradeoff.study.safe_cells import workbook_bytes  # noqa: E402

TRADEOFF = str(Path(sys.executable).parent / "tradeoff")




def _members(book: bytes) -> dict[str, bytes]:
    with zipfile.ZipFile(io.BytesIO(book)) as archive:
        return {n: archive.read(n) for n in archive.namelist()}


def _read(name: str, data: bytes) -> None:
    try:
        read_table(name, data=data)
    except DataError:
        pass


def _paired(case, yardstick, runs: int) -> tuple[float, float, float]:
    """Median seconds of case, of the yardstick, and the median of the pair ratios."""
    case(), yardstick()  # warm imports and caches
    a, b = [], []
    for _ in range(runs):
        start = time.perf_counter()
        case()
        a.append(time.perf_counter() - start)
        start = time.perf_counter()
        yardstick()
        b.append(time.perf_counter() - start)
    return (statistics.median(a), statistics.median(b),
            statistics.median(x / y for x, y in zip(a, b)))


def _command(args: list[str]):
    def run():
        subprocess.run([TRADEOFF, *args], stdout=subprocess.DEVNULL,
                       stderr=subprocess.DEVNULL, check=False,
                       env={**os.environ, "OPENBLAS_NUM_THREADS": "1"})
    return run


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=5)
    runs = parser.parse_args().runs

    honest = workbook_bytes({"runs": pd.DataFrame({"run": [f"R{i}" for i in range(20)],
                                                   "x": [float(i) for i in range(20)]})},
                            widths=False)
    bomb = zip_archive({"[Content_Types].xml": b"<Types/>",
                 "xl/worksheets/sheet1.xml": MAX_UNPACKED_BYTES + 2**20})
    cells = b'<c r="A1"><v>1</v></c>' * (MAX_CELLS + 1)
    many = zip_archive({"xl/worksheets/sheet1.xml": b"<worksheet><sheetData><row r=\"1\">" + cells
                 + b"</row></sheetData></worksheet>"})
    small = workbook_bytes({"runs": pd.DataFrame({"run": ["a", "b"], "x": [1.0, 2.0]})},
                           widths=False)
    members = _members(small)
    members["xl/worksheets/sheet1.xml"] = re.sub(
        rb'<dimension ref="[^"]*"', b'<dimension ref="A1:XFD1048576"',
        members["xl/worksheets/sheet1.xml"])
    claims = zip_archive(members)

    print(f"hostile workbooks against an honest one, median of {runs} pairs")
    print(f"{'case':<44} {'seconds':>8} {'honest':>8} {'ratio':>7} {'target s':>9}")
    rows = [
        ("bomb (1 MB packed, 201 MB unpacked)", lambda: _read("runs.xlsx", bomb),
         lambda: _read("runs.xlsx", honest), 1.0),
        ("sheet of more than 1,000,000 cells", lambda: _read("big.xlsx", many),
         lambda: _read("runs.xlsx", honest), 3.0),
        ("sheet that claims a million rows", lambda: _read("claims.xlsx", claims),
         lambda: _read("small.xlsx", small), 5.0),
    ]
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        text = PAYLOAD_STUDY.replace('data = "runs.csv"', 'data = "runs.xlsx"')
        (folder / "bomb").mkdir()
        (folder / "bomb" / "study.toml").write_text(text, encoding="utf-8")
        (folder / "bomb" / "runs.xlsx").write_bytes(bomb)
        (folder / "honest").mkdir()
        (folder / "honest" / "study.toml").write_text(text, encoding="utf-8")
        (folder / "honest" / "runs.xlsx").write_bytes(honest)
        rows.append(("tradeoff check, runs file a bomb (process)",
                     _command(["check", str(folder / "bomb" / "study.toml")]),
                     _command(["check", str(folder / "honest" / "study.toml")]), 5.0))
        for name, case, yardstick, target in rows:
            a, b, r = _paired(case, yardstick, runs)
            print(f"{name:<44} {a:8.3f} {b:8.3f} {r:7.2f} {target:9.1f}")


if __name__ == "__main__":
    main()
