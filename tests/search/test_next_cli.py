"""``tradeoff next``: the JSON shape, the run sheet, and bad requests."""
from __future__ import annotations

import hashlib
import json

import pandas as pd

from conftest import DEMO, PEAKED_STUDY, peaked_runs
from tradeoff.cli import main


def _digest(path):
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_next_json_and_run_sheet_on_the_demo(tmp_path, capsys):
    data = DEMO.parent / "snack_bar_runs.csv"
    before = _digest(data)
    sheet = tmp_path / "next.csv"
    assert main(["next", str(DEMO), "--runs", "4", "--seed", "3", "--json",
                 "--out", str(sheet)]) == 0
    out = json.loads(capsys.readouterr().out)
    assert len(out["runs"]) == 4
    for run in out["runs"]:
        assert set(run) >= {"settings", "coded", "expected_improvement", "predicted", "why"}
        assert run["expected_improvement"] >= 0
        assert set(run["predicted"]) == {"hardness_fresh", "hardness_12w", "water_activity",
                                         "liking", "cost"}
    assert {"desirability", "run", "settings"} <= set(out["best_so_far"])
    assert out["sheet"] == str(sheet) and out["provenance"]["seed"] == 3
    table = pd.read_csv(sheet)
    original = pd.read_csv(data)
    assert list(table.columns) == list(original.columns) + (
        [] if "point" in original.columns else ["point"])
    assert (table["point"] == "suggested").all()
    assert table[["liking", "cost"]].isna().all().all()
    assert list(table["run"]) == ["R21", "R22", "R23", "R24"]
    assert _digest(data) == before
    # same seed, same batch
    assert main(["next", str(DEMO), "--runs", "4", "--seed", "3", "--json"]) == 0
    again = json.loads(capsys.readouterr().out)
    assert again["runs"] == out["runs"]


def test_next_refuses_bad_requests_in_one_line(write_study, tmp_path, capsys):
    path = write_study(PEAKED_STUDY.format(model="interactions"), peaked_runs())
    for runs in ("0", "-2"):
        assert main(["next", str(path), "--runs", runs]) == 2
        err = capsys.readouterr().err
        assert err.startswith("error: argument --runs: expected a whole number, 1 or more")
    no_goal = PEAKED_STUDY.format(model="interactions").replace(
        'goal = "maximize"\nlower = 4\nupper = 8\n', "")
    path = write_study(no_goal, peaked_runs())
    assert main(["next", str(path), "--runs", "2"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "no response or factor has a goal" in err
    path = write_study(PEAKED_STUDY.format(model="interactions"), peaked_runs())
    data = path.parent / "runs.csv"
    before = _digest(data)
    assert main(["next", str(path), "--runs", "2", "--out", str(data)]) == 2
    assert "is the study's data file" in capsys.readouterr().err
    assert _digest(data) == before
