"""Shared test helpers: small study files written into a temporary folder, and the
report page's embedded numbers."""
from __future__ import annotations

import json
import re

from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "demo_data" / "snack_bar.toml"

BASIC_STUDY = """\
[study]
name = "bars"
data = "runs.csv"

[[factors]]
name = "protein"
unit = "%"
low = 20
high = 30

[[factors]]
name = "binder"
levels = ["rice syrup", "date paste"]

[[responses]]
name = "hardness"
unit = "N"
goal = "minimize"
lower = 15
upper = 35
"""

BASIC_RUNS = """\
run,protein,binder,hardness
1,20,rice syrup,18.5
2,30,rice syrup,27.0
3,20,date paste,16.0
4,30,date paste,24.5
5,25,date paste,21.0
"""


@pytest.fixture(autouse=True)
def _sessions_in_tmp(tmp_path_factory, monkeypatch):
    """The workbench keeps sessions in a folder of the test's own, never the home folder."""
    monkeypatch.setenv("TRADEOFF_SESSIONS", str(tmp_path_factory.mktemp("sessions")))


@pytest.fixture
def write_study(tmp_path):
    """Write a study file and its data file; returns the study path."""

    def write(study: str = BASIC_STUDY, runs: str | bytes | None = BASIC_RUNS,
              data_name: str = "runs.csv") -> Path:
        path = tmp_path / "study.toml"
        path.write_text(study, encoding="utf-8")
        if runs is not None:
            data = runs.encode("utf-8") if isinstance(runs, str) else runs
            (tmp_path / data_name).write_bytes(data)
        return path

    return write


# An invented peaked response (liking with one sharp peak and flat shoulders)
# on a 5 x 5 grid: a quadratic cannot follow it, a smooth model can. The peak
# sits at coded (0.3, -0.2), that is sugar 4.6 g, acid 0.26 g.
PEAKED_STUDY = """\
[study]
name = "peaked (invented)"
data = "runs.csv"
model = "{model}"

[[factors]]
name = "sugar"
unit = "g"
low = 2
high = 6

[[factors]]
name = "acid"
unit = "g"
low = 0.1
high = 0.5

[[responses]]
name = "liking"
goal = "maximize"
lower = 4
upper = 8
"""


def peaked_runs(seed: int = 11) -> str:
    """The invented peaked data: 25 grid runs, seeded noise (SD 0.05)."""
    import numpy as np

    rng = np.random.default_rng(seed)
    levels = np.linspace(-1, 1, 5)
    rows = ["run,sugar,acid,liking"]
    run = 0
    for a in levels:
        for b in levels:
            run += 1
            liking = 4 + 4 * np.exp(-((a - 0.3) ** 2 + (b + 0.2) ** 2) / (2 * 0.35 ** 2))
            liking += rng.normal(0, 0.05)
            rows.append(f"{run},{4 + 2 * a:g},{0.3 + 0.2 * b:g},{liking:.4f}")
    return "\n".join(rows) + "\n"


def page_json(page: str) -> dict:
    """The numbers a report page carries in its inert JSON block (result, provenance)."""
    match = re.search(r'<script type="application/json" id="tradeoff-data">(.*?)</script>',
                      page, re.S)
    assert match, "the page carries its numbers as JSON"
    return json.loads(match.group(1))


def reopened(at, page: str | None = None, timeout: int = 120):
    """The workbench opened again at the address of ``at`` (a reload, a new tab): a new
    AppTest session with the same ``?session=``, on ``page`` (a view's file stem)."""
    from importlib.resources import files

    from streamlit.testing.v1 import AppTest

    sid = at.query_params["session"]
    again = AppTest.from_file(str(files("tradeoff_ui") / "app.py"), default_timeout=timeout)
    again.query_params["session"] = sid[0] if isinstance(sid, list) else sid
    again.run()
    if page is not None:
        again.switch_page(f"views/{page}.py").run()
    assert not again.exception, again.exception
    return again
