"""Shared test helpers: small study files written into a temporary folder."""
from __future__ import annotations

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
