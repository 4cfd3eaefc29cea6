"""Production spread on the command line: the numbers in text and JSON, bad input.

The numbers themselves are checked against closed forms in test_spread.py and
test_production.py; here the contract (keys, exit status, one-line errors,
files unchanged) is checked on the published tire study (Derringer & Suich
1980, Journal of Quality Technology 12(4); the table recalled from memory, then
checked: a quadratic fit reproduces the published optimum).
"""
from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from tradeoff.cli import main

from conftest import BASIC_STUDY

DATA = Path(__file__).resolve().parents[1] / "data"


def _tire(tmp_path, sds=(0.1, 0.2, 0.05)) -> Path:
    text = (DATA / "tire_tread_1980.toml").read_text(encoding="utf-8")
    for name, sd in zip(("x1", "x2", "x3"), sds):
        if sd is not None:
            text = text.replace(f'name = "{name}"\n',
                                f'name = "{name}"\nproduction_sd = {sd}\n')
    (tmp_path / "tire_tread_1980.csv").write_bytes((DATA / "tire_tread_1980.csv").read_bytes())
    path = tmp_path / "tire.toml"
    path.write_text(text, encoding="utf-8")
    return path


def run(*args):
    return subprocess.run([sys.executable, "-m", "tradeoff.cli", *map(str, args)],
                          capture_output=True, text=True)


def test_json_carries_transmitted_sd_mean_shift_and_production_chance(tmp_path, capsys):
    assert main(["optimize", str(_tire(tmp_path)), "--top", "2", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    best = out["best"]
    assert out["production_sd"] == {"x1": 0.1, "x2": 0.2, "x3": 0.05}
    for name in ("y1", "y2", "y3", "y4"):
        r = best["responses"][name]
        assert r["transmitted_sd"] > 0 and r["mean_shift"] is not None
    assert 0 <= best["chance_all_production"] <= 1
    # the spread can only add failures to the same draws of noise, never remove many
    assert best["chance_all_production"] <= best["chance_all"] + 0.02


def test_text_shows_spread_columns_and_production_chance(tmp_path, capsys):
    assert main(["optimize", str(_tire(tmp_path)), "--top", "1"]) == 0
    text = capsys.readouterr().out
    assert "spread SD" in text and "in production" in text


def test_without_production_sd_nothing_changes(tmp_path, capsys):
    assert main(["optimize", str(_tire(tmp_path, (None, None, None))), "--top", "1",
                 "--json"]) == 0
    best = json.loads(capsys.readouterr().out)["best"]
    assert best["chance_all_production"] is None
    assert best["responses"]["y1"]["transmitted_sd"] is None


def test_rank_by_production_orders_by_the_production_chance(tmp_path, capsys):
    assert main(["optimize", str(_tire(tmp_path, (0.3, 0.3, 0.3))), "--top", "4",
                 "--rank-by", "production", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    chances = [s["chance_all_production"] for s in out["solutions"]]
    assert chances == sorted(chances, reverse=True)
    assert out["rank_by"] == "production"


@pytest.mark.parametrize("value, words", [
    ("-0.5", "must be 0 or more"),
    ('"a lot"', "must be a number"),
    ("6", "the region is too narrow for that spread"),
])
def test_bad_production_sd_is_one_line_exit_2_file_unchanged(write_study, value, words):
    text = BASIC_STUDY.replace('high = 30\n', f'high = 30\nproduction_sd = {value}\n')
    path = write_study(text)
    before = path.read_bytes()
    out = run("optimize", path)
    assert out.returncode == 2 and "Traceback" not in out.stderr
    assert len(out.stderr.strip().splitlines()) == 1
    assert words in out.stderr and "'protein'" in out.stderr
    assert path.read_bytes() == before


def test_production_sd_on_a_categorical_factor_says_why(write_study):
    text = BASIC_STUDY.replace('levels = ["rice syrup", "date paste"]\n',
                               'levels = ["rice syrup", "date paste"]\nproduction_sd = 1\n')
    out = run("check", write_study(text))
    assert out.returncode == 2 and len(out.stderr.strip().splitlines()) == 1
    assert "production_sd is for numeric factors" in out.stderr
    assert "no spread" in out.stderr


def test_smooth_model_spread_by_monte_carlo_and_held_settings(write_study):
    # a model that is not a polynomial (Gaussian process): the spread comes from draws,
    # against an independent seeded Monte Carlo of the same model's predictions
    from conftest import PEAKED_STUDY, peaked_runs

    from tradeoff.derive.load import load_study
    from tradeoff.search.search import optimize

    text = PEAKED_STUDY.format(model="smooth").replace(
        'high = 6\n', 'high = 6\nproduction_sd = 0.2\n')
    study = load_study(write_study(text, peaked_runs()))
    result = optimize(study, top=1, aim="production", draws=4000)
    best = result.solutions[0]
    coded = np.array([[best.coded["sugar"], best.coded["acid"]]])
    from tradeoff.model.study_fit import fit_study

    model = fit_study(study).models["liking"]
    e = np.random.default_rng(5).standard_normal((40000, 2)) * [0.2 / 2, 0.0]
    y = model.predict(coded + e)
    assert best.responses["liking"].transmitted_sd == pytest.approx(y.std(), rel=0.05)
    balance = next(s for s in result.solutions if s.d_given_up == 0)
    assert best.chance_all_production >= balance.chance_all_production
